"""Traced phase boundaries on a map: their CSV file and their lines on the pictures.

The boundaries come from :mod:`auditor.boundaries` (crossings located along grid edges,
joined into polylines).  The CSV lists every crossing, line by line in order along each line,
with the map's coordinates in SI (K, Pa, mol, a plain ratio, or atom fractions on a ternary
map).  On a picture each line is drawn heavy in the report ink with its phase named at its
middle, and the case's own design point is marked; colours come from :mod:`.style` only.
"""
from __future__ import annotations

import csv
import io
from html import escape
from typing import Sequence

from . import style

DESIGN_RADIUS = 5.5


def _num(v: float) -> str:
    return repr(float(v))


def towards(crossing, names: Sequence[str]) -> str:
    """Which way the edge runs, in words: "higher temperature_K", or on a ternary map "more C, less O"."""
    if all(n.startswith("atoms[") for n in names):
        return _towards_ternary(crossing, names)
    moving = [n for n, d in zip(names, crossing.direction) if d]
    return ", ".join(f"higher {n}" for n in moving)


def _towards_ternary(crossing, names: Sequence[str]) -> str:
    more = [n[6:-1] for n, d in zip(names, crossing.direction) if d > 0]
    less = [n[6:-1] for n, d in zip(names, crossing.direction) if d < 0]
    return ", ".join([f"more {e}" for e in more] + [f"less {e}" for e in less])


def boundaries_csv(bmap) -> str:
    """One row per traced crossing: the line it belongs to (numbered from 1), the phase, whether it
    appears or vanishes going from the edge's first grid point to its second (their ``index`` in
    the sweep's CSV), which way that is, the map coordinates, and whether the crossing was located
    by the bracketed solve (else it sits at the middle of its edge)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["line", "phase", "change", "towards", *bmap.names, "from_index", "to_index", "located"])
    for number, line in enumerate(bmap.lines, start=1):
        for i in line.points:
            c = bmap.crossings[i]
            w.writerow([number, c.phase, c.change, towards(c, bmap.names), *(_num(v) for _, v in c.coordinates),
                        c.first, c.second, "yes" if c.traced else "no"])
    return buf.getvalue()


def _polyline(points: list[tuple[float, float]], closed: bool) -> str:
    text = " ".join(f"{x:.2f},{y:.2f}" for x, y in points)
    tag = "polygon" if closed else "polyline"
    return (f'<{tag} points="{text}" fill="none" stroke="{style.LABEL_HALO}" stroke-width="5" stroke-linejoin="round" '
            f'stroke-linecap="round" stroke-opacity="0.8"/>'
            f'<{tag} points="{text}" fill="none" stroke="{style.BOUNDARY}" stroke-width="2.4" stroke-linejoin="round" '
            f'stroke-linecap="round"><title>traced boundary</title></{tag}>')


def lines_svg(bmap, px: Sequence[tuple[float, float]]) -> list[str]:
    """Every traced line, ``px`` giving each crossing's place in the picture, its phase named at
    the line's middle."""
    out = []
    for line in bmap.lines:
        pts = [px[i] for i in line.points]
        if len(pts) == 1:
            x, y = pts[0]
            out.append(f'<circle cx="{x:.2f}" cy="{y:.2f}" r="2.5" fill="{style.BOUNDARY}"/>')
        else:
            out.append(_polyline(pts, line.closed))
    for line in bmap.lines:
        if len(line.points) < 4:
            continue
        x, y = px[line.points[len(line.points) // 2]]
        out.append(f'<text x="{x + 6:.1f}" y="{y - 6:.1f}" font-size="10" font-style="italic" '
                   f'stroke="{style.LABEL_HALO}" stroke-width="3" paint-order="stroke">{escape(line.phase)}</text>')
    return out


def design_svg(x: float, y: float) -> list[str]:
    """The case's own design point: a ring with a dot, readable over any fill."""
    r = DESIGN_RADIUS
    return [f'<circle cx="{x:.2f}" cy="{y:.2f}" r="{r + 1.5}" fill="{style.LABEL_HALO}"/>'
            f'<circle cx="{x:.2f}" cy="{y:.2f}" r="{r}" fill="none" stroke="{style.DESIGN_POINT}" stroke-width="2"/>'
            f'<circle cx="{x:.2f}" cy="{y:.2f}" r="1.8" fill="{style.DESIGN_POINT}"><title>the case\'s design point'
            '</title></circle>']


def legend_svg(x: float, y: float, has_lines: bool, has_design: bool) -> list[str]:
    out = []
    if has_lines:
        out.append(f'<line x1="{x:.0f}" y1="{y + 5:.0f}" x2="{x + 12:.0f}" y2="{y + 5:.0f}" stroke="{style.BOUNDARY}" '
                   f'stroke-width="2.4"/><text x="{x + 15:.0f}" y="{y + 9:.0f}">boundary (traced)</text>')
        y += 16
    if has_design:
        out += design_svg(x + 6, y + 5)
        out.append(f'<text x="{x + 15:.0f}" y="{y + 9:.0f}">design point</text>')
    return out


def _inside(v: float, vs: Sequence[float]) -> bool:
    half = (vs[1] - vs[0]) / 2 if len(vs) > 1 else 0.5
    return min(vs) - abs(half) <= v <= max(vs) + abs(half)


def map_overlay(bmap, axes, units: Sequence[str], xs: Sequence[float], ys: Sequence[float], convert):
    """The overlay of a two-variable map (for ``svg.presence_map``) and the subtitle line that
    says what is drawn; ``convert`` turns SI values into the units of the picture's axes."""
    a0, a1 = axes
    cx = convert([c.coordinates[0][1] for c in bmap.crossings], a0.name, units[0]) if bmap.crossings else []
    cy = convert([c.coordinates[1][1] for c in bmap.crossings], a1.name, units[1]) if bmap.crossings else []
    design = None
    if bmap.design is not None:
        dx = convert([bmap.design[0][1]], a0.name, units[0])[0]
        dy = convert([bmap.design[1][1]], a1.name, units[1])[0]
        design = (dx, dy, _inside(dx, xs) and _inside(dy, ys))
    lines = len(bmap.lines)
    note = (f"heavy lines: {lines} phase boundar{'y' if lines == 1 else 'ies'} traced between grid points "
            f"({len(bmap.crossings)} crossings)" if lines else "no phase boundary crosses the map")
    if design is None:
        note += "; the case does not fix every mapped variable, so its design point is not marked"
    elif not design[2]:
        note += f"; the design point ({design[0]:.6g}, {design[1]:.6g}) lies outside the map"
    else:
        note += "; ring: the case's design point"

    def overlay(X, Y, lx, ly):
        out = lines_svg(bmap, [(X(x), Y(y)) for x, y in zip(cx, cy)])
        shown = design is not None and design[2]
        if shown:
            out += design_svg(X(design[0]), Y(design[1]))
        return out + legend_svg(lx, ly, bool(lines), shown)
    return overlay, note


def traced(case_path: str, axes, results, case, path) -> tuple[object, str]:
    """Trace a map's phase boundaries, write their CSV to ``path``; returns the boundaries and the
    line the terminal prints about them."""
    from ..boundaries import trace
    from .files import write_atomic
    bmap = trace(case_path, axes, results, case)
    write_atomic(path, boundaries_csv(bmap))
    return bmap, (f"traced {len(bmap.lines)} phase boundary line(s) through {len(bmap.crossings)} crossings; "
                  f"wrote {path}" + "".join(f"\n  {p}" for p in bmap.problems))
