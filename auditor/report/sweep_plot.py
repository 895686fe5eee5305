"""Pictures of a sweep: compositions against the swept variable, or a phase-presence map.

Each picture carries the case title, the conditions held fixed, gridlines at round values,
and the swept variable in the unit the user gave on the command line (``degC`` stays degC).
"""
from __future__ import annotations

from pathlib import Path
from typing import Sequence

from ..verdicts import Verdict

from . import svg

DEFAULT_UNIT = {"temperature": "K", "pressure": "bar", "feed-temperature": "K", "fill-pressure": "bar"}
STATE_AXIS_KIND = {"feed-temperature": "temperature", "fill-pressure": "pressure"}   # values inside a specification
SI_UNIT = {"temperature": "K", "pressure": "Pa"}
FIELD = {"temperature": "temperature_K", "pressure": "pressure_Pa"}


def unit_of(vary_text: str) -> str:
    """The unit written after STEP in ``NAME=START:STOP:STEP [UNIT]`` (the default when none)."""
    name, _, rng = vary_text.partition("=")
    last = rng.split(":")[-1].strip().split(None, 1)
    name = name.strip()
    return last[1].strip() if len(last) > 1 else DEFAULT_UNIT.get(name, "mol" if name.startswith("feed.") else "")


def _kind(name: str) -> str | None:
    """The unit kind of a swept variable: temperature, pressure, amount (a feed axis) or None (a ratio)."""
    return name if name in SI_UNIT else STATE_AXIS_KIND.get(name) or ("amount" if name.startswith("feed.") else None)


def convert(values, name: str, unit: str) -> list[float]:
    """SI values of a swept variable in ``unit`` (K to degC, Pa to bar, mol to kmol, ...)."""
    kind = _kind(name)
    if kind is None or unit == SI_UNIT.get(kind, "mol"):
        return [float(v) for v in values]
    from ..units import from_si
    return from_si(values, unit, kind)


def _label(name: str, unit: str) -> str:
    if name.startswith("feed."):
        return f"{name[5:]} in the feed, {unit}"
    if name.startswith("ratio."):
        return f"{name[6:]} in the feed, atoms per atom"
    return f"{name}, {unit}"


def _fixed(case, axes) -> list[str]:
    """The conditions the sweep holds fixed, as the case file writes them."""
    if case is None:
        return []
    from .entered import read
    e = read(case)
    swept = {a.name for a in axes}
    held = [f"{k} = {v}" for k, v in e.specified if k.split(".")[0] not in swept and not _swept_inside(case, k, swept)]
    feed = ", ".join(f"{s} {t}" for s, t in e.feed)
    lines = []
    if held:
        lines.append("held fixed: " + "; ".join(held))
    if feed:
        lines.append(f"feed: {feed}" + ("" if any(c.isalpha() for _, t in e.feed for c in t) else " (mol)"))
    return lines


def _swept_inside(case, key: str, swept: set) -> bool:
    """Whether a case-file value (``adiabatic.feed-temperature``, ``volume.feed-at.pressure``) is
    replaced by a feed-temperature or fill-pressure axis, and so is not held fixed."""
    if "fill-pressure" in swept and key == "volume.feed-at.pressure":
        return True
    if "feed-temperature" not in swept:
        return False
    from ..sweep_energy import fills_at_feed_temperature
    return key.endswith(".feed-temperature") or (key == "volume.feed-at.temperature"
                                                  and fills_at_feed_temperature(case.specified))


def picture_stamp(case) -> str:
    """The tool's version and the case file's SHA-256, printed on every picture so that a
    picture found alone can be traced to what made it."""
    from .. import __version__
    if case is None:
        return f"auditor {__version__}"
    from .entered import read
    e = read(case)
    return f"auditor {__version__}; case file {Path(str(case.path)).name}, SHA-256 {e.sha256 or '(could not be read)'}"


def _value(r, name: str) -> float:
    """The swept variable at one point, in SI (K, Pa, mol) or as a plain ratio; NaN when unknown."""
    if name in FIELD:
        v = getattr(r, FIELD[name])
        return float(v) if v else float("nan")       # a point that did not solve carries no state
    v = dict(r.coordinates).get(name)
    return float("nan") if v is None else float(v)


def _solved_state_charts(results, case, swept, title, label, xs, shade, fixed) -> list[str]:
    """The temperature (and for a rigid vessel the pressure) each point solves, when the case does
    not fix it (an energy balance, a vessel, an entropy): one chart per solved variable."""
    if case is None or not any(r.phases_present for r in results):
        return []
    spec, parts = case.specified, []
    for field, fixed_value, y_label, scale in (("temperature_K", spec.temperature_K, "solved temperature, K", 1.0),
                                               ("pressure_Pa", spec.pressure_Pa, "solved pressure, bar", 1e-5)):
        if fixed_value is not None or field.startswith(swept + "_"):
            continue
        ys = [getattr(r, field) * scale if r.phases_present and getattr(r, field) else float("nan") for r in results]
        name = y_label.split(",")[0]
        parts.append(svg.line_chart(title, label, xs, {name: ys}, shade=shade, y_label=y_label, y_from_zero=False,
                                    subtitle=[f"{name} at equilibrium; the case solves it from "
                                              f"{' and '.join(s.label for s in spec.specifications if s.kind not in FIELD)}"] + fixed))
    return parts


def _stack(parts: list[str]) -> str:
    """One SVG holding several pictures one below the other."""
    import re
    y, body, width = 0, [], 0
    for p in parts:
        m = re.search(r'width="(\d+)" height="(\d+)"', p)
        w, h = (int(m.group(1)), int(m.group(2))) if m else (640, 320)
        body.append(p.replace("<svg ", f'<svg y="{y}" ', 1))
        y += h + 10
        width = max(width, w)
    return (f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{y}">\n' + "\n".join(body) + "\n</svg>\n")


def sweep_svg(results, axes: Sequence, assumed: Sequence[str], case=None, units: Sequence[str] | None = None,
              boundaries=None) -> str:
    """The sweep's picture; ``units`` are the units the user gave per axis (default K and bar);
    ``boundaries`` (a two-variable map's traced phase boundaries) are drawn over the map."""
    units = list(units or [DEFAULT_UNIT[a.name] for a in axes])
    title = case.title if case is not None else "sweep"
    fixed = _fixed(case, axes) + [picture_stamp(case)]
    if len(axes) == 2:
        a0, a1 = axes
        xs, ys = convert(a0.values, a0.name, units[0]), convert(a1.values, a1.name, units[1])
        cells = {}
        for r in results:
            i, j = r.index % len(xs), r.index // len(xs)
            cells[(i, j)] = " + ".join(r.phases_present) if r.phases_present else r.verdict
        sub = [f"phases present (assumed: {' + '.join(assumed)}) at equilibrium"] + fixed
        overlay = None
        if boundaries is not None:
            from .boundary_lines import map_overlay
            overlay, note = map_overlay(boundaries, axes, units, xs, ys, convert)
            sub.insert(1, note)
        return _stack([svg.presence_map(title, xs, ys, cells, _label(a0.name, units[0]), _label(a1.name, units[1]),
                                        subtitle=sub, overlay=overlay)])
    axis, unit = axes[0], units[0]
    label = _label(axis.name, unit)
    xs = convert([_value(r, axis.name) for r in results], axis.name, unit)
    bad = [x for x, r in zip(xs, results) if r.verdict != Verdict.WELL_POSED or set(r.phases_present) != set(assumed)]
    step = (xs[1] - xs[0]) if len(xs) > 1 else 1.0
    shade = [(x - step / 2, x + step / 2) for x in bad]
    note = "shaded: the assumed phases are not found" if bad else f"assumed phases ({', '.join(assumed)}) found throughout"
    by_phase: dict[str, dict[str, list[float]]] = {}
    for r in results:
        for key, _ in r.mole_fractions:
            phase, sp = key.split(":", 1)
            by_phase.setdefault(phase, {}).setdefault(sp, [])
    for phase, series in by_phase.items():
        for sp in series:
            series[sp] = [dict(r.mole_fractions).get(f"{phase}:{sp}", float("nan")) for r in results]
    parts = []
    for phase, series in by_phase.items():
        if len(series) > 1:
            top = dict(sorted(series.items(), key=lambda kv: -max([v for v in kv[1] if v == v] or [0]))[:10])
            parts.append(svg.line_chart(title, label, xs, top, shade=shade, y_label=f"mole fraction in {phase}",
                                        subtitle=[f"{phase}: mole fractions; {note}"] + fixed))
    moles, never = {}, []
    for r in results:
        for p, _ in r.phase_moles:
            moles.setdefault(p, [])
    for p in list(moles):
        moles[p] = [dict(r.phase_moles).get(p, float("nan")) for r in results]
        if not any(v > 0 for v in moles[p] if v == v):
            never.append(p)
            del moles[p]
    if moles:
        absent = f"; never present: {', '.join(never)}" if never else ""
        parts.append(svg.line_chart(title, label, xs, moles, shade=shade, y_label="phase amount, mol",
                                    subtitle=[f"phase amounts{absent}; {note}"] + fixed, y_from_zero=False))
    parts += _solved_state_charts(results, case, axis.name, title, label, xs, shade, fixed)
    return _stack(parts or [svg.line_chart(title, label, xs, {}, subtitle=["no solved points"] + fixed)])


def sweep_picture(case, axes, results, ternary_divisions: int | None, vary, boundaries=None) -> str:
    """The ternary map (``ternary_divisions`` given), or the plot of the swept axes (a map with
    its traced ``boundaries``)."""
    if ternary_divisions:
        from .ternary import ternary_svg
        s, written = case.specified, case.as_written       # T and P as the case file writes them
        return ternary_svg(results, axes[0].elements, ternary_divisions,
                           f"T = {written.get('specified.temperature', f'{s.temperature_K:g} K')}, "
                           f"P = {written.get('specified.pressure', f'{s.pressure_Pa / 1e5:g} bar')}", case.title,
                           picture_stamp(case), boundaries=boundaries)
    assumed = case.coexisting or tuple(p for p, _ in case.system.phases)
    return sweep_svg(results, axes, assumed, case=case, units=[unit_of(v) for v in vary], boundaries=boundaries)
