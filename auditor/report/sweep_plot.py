"""Pictures of a sweep: compositions against the swept variable, or a phase-presence map."""
from __future__ import annotations

from typing import Sequence

from . import svg

UNITS = {"temperature": ("temperature_K", 1.0, "temperature, K"), "pressure": ("pressure_Pa", 1e-5, "pressure, bar")}


def _units(name: str) -> tuple[str, float, str]:
    """(where a point keeps the value, scale, axis label); feed axes keep theirs in coordinates."""
    if name in UNITS:
        return UNITS[name]
    if name.startswith("feed."):
        return name, 1.0, f"{name[5:]} in the feed, mol"
    return name, 1.0, f"{name[6:]} in the feed, atoms per atom"


def _value(r, field: str):
    return getattr(r, field) if field in ("temperature_K", "pressure_Pa") else dict(r.coordinates).get(field)


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


def sweep_svg(results, axes: Sequence, assumed: Sequence[str]) -> str:
    if len(axes) == 2:
        a0, a1 = axes
        f0, s0, l0 = _units(a0.name)
        f1, s1, l1 = _units(a1.name)
        xs = [v * s0 for v in a0.values]
        ys = [v * s1 for v in a1.values]
        cells = {}
        for r in results:
            i, j = r.index % len(xs), r.index // len(xs)
            cells[(i, j)] = " + ".join(r.phases_present) if r.phases_present else r.verdict
        return _stack([svg.presence_map(f"phases present (assumed: {' + '.join(assumed)})", xs, ys, cells, l0, l1)])
    axis = axes[0]
    field, scale, label = _units(axis.name)
    xs = [_value(r, field) * scale if _value(r, field) is not None else float("nan") for r in results]
    bad = [x for x, r in zip(xs, results) if r.verdict != "well-posed" or set(r.phases_present) != set(assumed)]
    step = (xs[1] - xs[0]) if len(xs) > 1 else 1.0
    shade = [(x - step / 2, x + step / 2) for x in bad]
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
            parts.append(svg.line_chart(f"{phase}: mole fractions (shaded: assumptions do not hold)", label, xs, top,
                                        shade=shade))
    moles = {}
    for r in results:
        for p, _ in r.phase_moles:
            moles.setdefault(p, [])
    for p in moles:
        moles[p] = [dict(r.phase_moles).get(p, float("nan")) for r in results]
    if moles:
        parts.append(svg.line_chart("phase amounts, mol (shaded: assumptions do not hold)", label, xs, moles, shade=shade))
    return _stack(parts or [svg.line_chart("no solved points", label, xs, {})])
