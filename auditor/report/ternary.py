"""A ternary composition map of a sweep: which phases are present at each feed composition.

The triangle's corners are the three elements; a point's position is its atom fractions
(barycentric coordinates).  Each grid point owns the hexagon of the triangular lattice
around it (its Voronoi cell), filled with the colour of the set of phases present there;
where neighbouring points hold different phase sets, the shared hexagon side is drawn
heavy, so the boundary (for C-H-O with graphite: where carbon deposits) reads as a line.
Colours come from :mod:`auditor.report.style` only.
"""
from __future__ import annotations

import math
from html import escape
from typing import Sequence

from ..verdicts import Verdict

from . import style

WIDTH, HEIGHT = 720, 640
SIDE = 460.0                      # triangle side, px
LEFT, BASE = 70.0, 500.0          # bottom-left corner


def _corners():
    h = SIDE * math.sqrt(3) / 2
    return (LEFT, BASE), (LEFT + SIDE, BASE), (LEFT + SIDE / 2, BASE - h)


def _at(fr: Sequence[float]) -> tuple[float, float]:
    (x0, y0), (x1, y1), (x2, y2) = _corners()
    a, b, c = fr
    return a * x0 + b * x1 + c * x2, a * y0 + b * y1 + c * y2


def _label(r) -> str:
    if r.verdict == Verdict.FAILED or (not r.phases_present and not r.certified):
        return "not solved"
    return " + ".join(r.phases_present) + ("" if r.certified else " (not certified)")


def _points(results, elements: Sequence[str], divisions: int) -> list[tuple[tuple[int, ...], str, object]]:
    """(lattice coordinates i:j:k, phase-set label, result) of each point, in point order."""
    pts = []
    for r in sorted(results, key=lambda r: r.index):
        c = dict(r.coordinates)
        pts.append((tuple(round(c.get(f"atoms[{e}]", 0.0) * divisions) for e in elements), _label(r), r))
    return pts


def _colours(pts) -> tuple[list[str], dict[str, str]]:
    """The phase-set labels, ordered by how often they occur (most common first), failures
    last, and the colour of each."""
    labels = list(dict.fromkeys(lab for _, lab, _ in pts))
    labels.sort(key=lambda lab: (lab == "not solved", "(not certified)" in lab, -sum(1 for p in pts if p[1] == lab)))
    colour = {lab: style.series(i) for i, lab in enumerate(labels)}
    if "not solved" in colour:
        colour["not solved"] = style.VERDICT[Verdict.NOT_CONFIRMED][1]
    return labels, colour


def _header(elements: Sequence[str], divisions: int, n_points: int, condition: str, title: str, tri: str) -> list[str]:
    e0, e1, e2 = elements
    return [f'<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{HEIGHT}" role="img" '
            f'aria-label="ternary map of phases present" font-family="sans-serif" font-size="12" fill="{style.INK}">',
            f'<defs><clipPath id="tri"><polygon points="{tri}"/></clipPath></defs>',
            f'<text x="{WIDTH / 2:.0f}" y="20" text-anchor="middle" font-size="14" font-weight="bold">'
            f'{escape(title or "Composition map")}</text>',
            f'<text x="{WIDTH / 2:.0f}" y="38" text-anchor="middle">'
            f'Phases present over the {escape(e0)}-{escape(e1)}-{escape(e2)} feed composition at {escape(condition)}</text>',
            f'<text x="{WIDTH / 2:.0f}" y="54" text-anchor="middle">position = atom fractions of the feed; '
            f'{n_points} compositions, {divisions} divisions per side</text>']


def _cells(pts, elements: Sequence[str], divisions: int, colour: dict[str, str]) -> list[str]:
    """One hexagon per point, filled with the colour of its phase set."""
    e0, e1, e2 = elements
    radius = SIDE / divisions / math.sqrt(3)        # hexagon of the triangular lattice: circumradius
    out = []
    for ijk, lab, _ in pts:
        x, y = _at([v / divisions for v in ijk])
        hexagon = " ".join(f"{x + radius * math.cos(math.radians(30 + 60 * q)):.2f},"
                           f"{y + radius * math.sin(math.radians(30 + 60 * q)):.2f}" for q in range(6))
        out.append(f'<polygon points="{hexagon}" fill="{colour[lab]}" stroke="{colour[lab]}" stroke-width="0.5">'
                   f'<title>{escape(e0)}:{escape(e1)}:{escape(e2)} = {ijk[0]}:{ijk[1]}:{ijk[2]} - {escape(lab)}</title>'
                   '</polygon>')
    return out


def _boundaries(pts, divisions: int) -> list[str]:
    """The shared side of two neighbouring hexagons with different phase sets, drawn heavy."""
    step = SIDE / divisions
    radius = step / math.sqrt(3)
    where = {ijk: lab for ijk, lab, _ in pts}
    out = []
    for (i, j, k), lab in where.items():
        for d in ((1, -1, 0), (1, 0, -1), (0, 1, -1)):
            other = (i + d[0], j + d[1], k + d[2])
            if other in where and where[other] != lab:
                (xa, ya), (xb, yb) = _at([v / divisions for v in (i, j, k)]), _at([v / divisions for v in other])
                mx, my = (xa + xb) / 2, (ya + yb) / 2
                ux, uy = -(yb - ya) / step, (xb - xa) / step          # unit normal to the link
                h = radius / 2
                out.append(f'<line x1="{mx - ux * h:.2f}" y1="{my - uy * h:.2f}" x2="{mx + ux * h:.2f}" '
                           f'y2="{my + uy * h:.2f}" stroke="{style.INK}" stroke-width="2.2" stroke-linecap="round"/>')
    return out


def _grid_and_frame(tri: str) -> list[str]:
    """Gridlines every 10 %, the frame, and tick labels: the fraction of each element along
    the side where it grows."""
    out = []
    for t in range(1, 10):
        f = t / 10
        for a, b in ((0, 1), (1, 2), (2, 0)):
            p = [0.0, 0.0, 0.0]
            q = [0.0, 0.0, 0.0]
            p[a], p[b] = f, 1 - f
            c = 3 - a - b
            q[a], q[c] = f, 1 - f
            (x1, y1), (x2, y2) = _at(p), _at(q)
            out.append(f'<line x1="{x1:.2f}" y1="{y1:.2f}" x2="{x2:.2f}" y2="{y2:.2f}" stroke="{style.GRID}" '
                       'stroke-width="0.6" stroke-dasharray="3,3"/>')
    out.append(f'<polygon points="{tri}" fill="none" stroke="{style.INK}" stroke-width="1.5"/>')
    for t in range(2, 10, 2):
        f = t / 10
        for a, b, dx, dy, anchor in ((0, 1, 0, 18, "middle"), (1, 2, 10, 4, "start"), (2, 0, -10, 4, "end")):
            p = [0.0, 0.0, 0.0]
            p[b], p[a] = f, 1 - f
            x, y = _at(p)
            out.append(f'<text x="{x + dx:.1f}" y="{y + dy:.1f}" text-anchor="{anchor}" font-size="10" '
                       f'fill="{style.RULE}">{t * 10}</text>')
    return out


def _axis_names(elements: Sequence[str]) -> list[str]:
    """The element at each corner and the name of each side's axis."""
    e0, e1, e2 = elements
    (x0, y0), (x1, y1), (x2, y2) = _corners()
    out = [f'<text x="{x0 - 8:.1f}" y="{y0 + 30:.1f}" text-anchor="end" font-size="15" font-weight="bold">'
           f'{escape(e0)}</text>',
           f'<text x="{x1 + 8:.1f}" y="{y1 + 30:.1f}" font-size="15" font-weight="bold">{escape(e1)}</text>',
           f'<text x="{x2:.1f}" y="{y2 - 12:.1f}" text-anchor="middle" font-size="15" font-weight="bold">'
           f'{escape(e2)}</text>',
           f'<text x="{(x0 + x1) / 2:.1f}" y="{y0 + 38:.1f}" text-anchor="middle" font-size="11">'
           f'atom % {escape(e1)}</text>']
    for (xa, ya), (xb, yb), e, angle, dx in (((x1, y1), (x2, y2), e2, 60, 34), ((x2, y2), (x0, y0), e0, -60, -34)):
        mx, my = (xa + xb) / 2 + dx, (ya + yb) / 2
        out.append(f'<text transform="translate({mx:.1f},{my:.1f}) rotate({angle})" text-anchor="middle" '
                   f'font-size="11">atom % {escape(e)}</text>')
    return out


def _legend(pts, labels: list[str], colour: dict[str, str], traced=None) -> list[str]:
    lx, ly = LEFT + SIDE + 30, 90.0
    out = [f'<text x="{lx:.0f}" y="{ly:.0f}" font-weight="bold">phases present</text>']
    for n, lab in enumerate(labels):
        y = ly + 22 * (n + 1)
        count = sum(1 for p in pts if p[1] == lab)
        out.append(f'<rect x="{lx:.0f}" y="{y - 11:.0f}" width="14" height="14" fill="{colour[lab]}"/>'
                   f'<text x="{lx + 20:.0f}" y="{y:.0f}">{escape(lab)} ({count})</text>')
    y = ly + 22 * (len(labels) + 1)
    if traced is not None:
        from .boundary_lines import legend_svg
        return out + legend_svg(lx, y - 10, True, traced)
    out.append(f'<line x1="{lx:.0f}" y1="{y - 4:.0f}" x2="{lx + 14:.0f}" y2="{y - 4:.0f}" stroke="{style.INK}" '
               f'stroke-width="2.2"/><text x="{lx + 20:.0f}" y="{y:.0f}">boundary</text>')
    return out


def _traced(bmap) -> tuple[list[str], bool]:
    """The traced boundary lines and the case's design point (when it lies inside the triangle)."""
    from .boundary_lines import design_svg, lines_svg
    out = lines_svg(bmap, [_at([v for _, v in c.coordinates]) for c in bmap.crossings])
    shown = bmap.design is not None and all(v >= 0 for _, v in bmap.design)
    if shown:
        out += design_svg(*_at([v for _, v in bmap.design]))
    return out, shown


def ternary_svg(results, elements: Sequence[str], divisions: int, condition: str, title: str = "",
                stamp: str = "", boundaries=None) -> str:
    """The map as SVG text.  ``results`` carry coordinates ``atoms[E]`` (atom fractions of the
    three elements); ``condition`` says at what T and P, ``title`` names the case (shown on top),
    ``stamp`` the tool's version and the case file's hash (shown at the foot); ``boundaries``, the
    traced phase boundaries (drawn instead of the hexagon sides) and the case's design point."""
    pts = _points(results, elements, divisions)
    labels, colour = _colours(pts)
    tri = " ".join(f"{x:.2f},{y:.2f}" for x, y in _corners())
    out = _header(elements, divisions, len(pts), condition, title, tri)
    traced, shown = _traced(boundaries) if boundaries is not None else (_boundaries(pts, divisions), None)
    out += ['<g clip-path="url(#tri)">', *_cells(pts, elements, divisions, colour)]
    out += (['</g>'] + _grid_and_frame(tri) + traced) if boundaries is not None else (traced + ['</g>'] + _grid_and_frame(tri))
    out += _axis_names(elements)
    edge_note = "the sides (an element absent) are included" if any(0 in ijk for ijk, _, _ in pts) else \
        "the sides (an element absent) were not computed"
    line_note = ("Heavy line: traced boundary" + ("; ring: the case's feed" if shown else "") if boundaries is not None
                 else "Heavy line: the phase set changes")
    out.append(f'<text x="{WIDTH / 2:.0f}" y="{HEIGHT - 30:.0f}" text-anchor="middle" font-size="11">'
               f'Each hexagon is one computed composition; {edge_note}. {line_note}.</text>')
    if stamp:
        out.append(f'<text x="{WIDTH / 2:.0f}" y="{HEIGHT - 12:.0f}" text-anchor="middle" font-size="9" '
                   f'fill="{style.RULE}">{escape(stamp)}</text>')
    out += _legend(pts, labels, colour, shown)
    out.append("</svg>")
    return "\n".join(out) + "\n"
