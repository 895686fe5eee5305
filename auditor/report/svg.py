"""Small self-contained SVG pictures (no plotting library; deterministic text output)."""
from __future__ import annotations

import math
from html import escape
from typing import Sequence

from . import style


def nice_ticks(lo: float, hi: float, target: int = 5) -> list[float]:
    """Round tick values covering [lo, hi]: steps of 1, 2 or 5 times a power of ten
    (the "nice numbers" labelling of P. S. Heckbert, Graphics Gems, 1990)."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return [0.0, 1.0]
    if hi <= lo:
        pad = abs(lo) * 0.05 or 1.0
        lo, hi = lo - pad, hi + pad
    raw = (hi - lo) / max(target - 1, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw * 0.999)
    first, last = math.floor(lo / step + 1e-9), math.ceil(hi / step - 1e-9)
    # twelve significant digits (a fixed number of decimals would round tiny steps to zero)
    ticks = [float(f"{i * step:.12g}") for i in range(first, last + 1)]
    return ticks if len(ticks) > 1 and ticks[-1] > ticks[0] else [lo, hi]


def tick_text(v: float) -> str:
    return f"{v:.6g}"


def sparsity(rows: list[dict[int, object]], n_cols: int, independent: set[int], col_labels: list[str],
             row_labels: list[str]) -> str:
    """Reaction-species incidence as a picture: one row per reaction, one column per phase-species;
    independent reactions in one colour, dependent in another; reactants hollow, products filled.
    Cells stay at least 11 px and labels 9 px with every column labelled; callers keep a picture to
    about 50 columns and 60 rows so that it fits a printed page without shrinking."""
    n_rows = len(rows)
    cell = max(11, min(16, int(640 / max(n_cols, 1))))
    font = max(9, min(11, cell - 2))
    longest = max((len(x) for x in col_labels), default=4)
    left, top = 46, int(font * 0.62 * longest * 0.87) + 16
    every = 1 if n_rows <= 60 else 5
    width, height = max(left + cell * n_cols + 10, 440), top + cell * n_rows + 30
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" viewBox="0 0 {width} {height}" '
           f'role="img" aria-label="reaction-species incidence" font-family="sans-serif" font-size="{font}">']
    for j, lab in enumerate(col_labels):
        x = left + j * cell + cell * 0.7
        out.append(f'<text transform="translate({x:.1f},{top - 4}) rotate(-60)" fill="{style.INK}">{escape(lab)}</text>')
    for i, lab in enumerate(row_labels):
        if i % every == 0 or i == n_rows - 1:
            out.append(f'<text x="{left - 4}" y="{top + i * cell + cell - 2}" text-anchor="end" fill="{style.INK}">'
                       f'{escape(lab)}</text>')
    for j in range(0, n_cols + 1, 5):   # light guide lines every fifth column
        out.append(f'<line x1="{left + j * cell}" y1="{top}" x2="{left + j * cell}" y2="{top + cell * n_rows}" '
                   f'stroke="{style.GRID}" stroke-width="0.5"/>')
    for i, row in enumerate(rows):
        colour = style.INDEPENDENT if i in independent else style.DEPENDENT
        for j, c in row.items():
            x, y = left + j * cell, top + i * cell
            fill = colour if c > 0 else "none"
            out.append(f'<rect x="{x + 0.5}" y="{y + 0.5}" width="{cell - 2}" height="{cell - 2}" fill="{fill}" '
                       f'stroke="{colour}" stroke-width="1.2"/>')
    ly = top + cell * n_rows + 20
    legend = [(style.INDEPENDENT, style.INDEPENDENT, "independent reaction"),
              (style.DEPENDENT, style.DEPENDENT, "dependent reaction"),
              ("none", style.AXIS, "reactant"), (style.AXIS, style.AXIS, "product")]
    x = 10
    for fill, stroke, text in legend:
        out.append(f'<rect x="{x}" y="{ly - 9}" width="9" height="9" fill="{fill}" stroke="{stroke}"/>'
                   f'<text x="{x + 13}" y="{ly}" font-size="10" fill="{style.INK}">{text}</text>')
        x += 20 + 6 * len(text)
    out.append("</svg>")
    return "\n".join(out)


def _frame(width, height, title, subtitle):
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" viewBox="0 0 {width} {height}" '
           f'role="img" aria-label="{escape(title)}" font-family="sans-serif" font-size="11" fill="{style.INK}">',
           f'<text x="10" y="16" font-weight="bold" font-size="13">{escape(title)}</text>']
    for i, line in enumerate(subtitle):
        out.append(f'<text x="10" y="{32 + 14 * i}">{escape(line)}</text>')
    return out


def line_chart(title: str, x_label: str, xs: list[float], series: dict[str, list[float]],
               width: int = 720, height: int = 360, shade: list[tuple[float, float]] = (),
               y_label: str = "", subtitle: Sequence[str] = (), y_from_zero: bool = True) -> str:
    """Line chart with gridlines at round tick values; ``shade`` marks x-intervals (where an
    assumption fails). The axes span the data (rounded out to ticks), so no half stays empty."""
    top = 30 + 14 * len(subtitle) + 8
    left, right, bottom = 64, 130, 46
    pw, ph = width - left - right, height - top - bottom
    if not xs:
        return ""
    finite_x = [x for x in xs if x == x]
    xt = nice_ticks(min(finite_x), max(finite_x), 7)
    x0, x1 = min(finite_x), max(finite_x)
    if x1 <= x0:
        x0, x1 = xt[0], xt[-1]
    if not x1 > x0:                      # a span the arithmetic cannot divide: one unit around the value
        x0, x1 = x0 - 0.5, x0 + 0.5
    xt = [t for t in xt if x0 - 1e-9 * abs(x1 - x0) <= t <= x1 + 1e-9 * abs(x1 - x0)]
    vals = [v for vs in series.values() for v in vs if v == v]
    lo = min(vals) if vals else 0.0
    hi = max(vals) if vals else 1.0
    if y_from_zero or lo < 0.3 * hi:
        lo = min(0.0, lo)
    yt = nice_ticks(lo, hi, 6)
    y0, y1 = yt[0], yt[-1]
    if not y1 > y0:
        y0, y1 = y0 - 0.5, y0 + 0.5

    def X(x):
        return left + (x - x0) / (x1 - x0) * pw

    def Y(y):
        return top + ph - (y - y0) / (y1 - y0) * ph

    out = _frame(width, height, title, subtitle)
    for a, b in shade:
        a, b = max(a, x0), min(b, x1)   # keep the shading inside the plot
        if b > a:
            out.append(f'<rect x="{X(a):.1f}" y="{top}" width="{max(X(b) - X(a), 1):.1f}" height="{ph}" '
                       f'fill="{style.SHADE_OUT_OF_RANGE}"/>')
    for t in xt:
        out.append(f'<line x1="{X(t):.1f}" y1="{top}" x2="{X(t):.1f}" y2="{top + ph}" stroke="{style.GRID}"/>')
        out.append(f'<text x="{X(t):.1f}" y="{top + ph + 15}" text-anchor="middle">{tick_text(t)}</text>')
    for t in yt:
        out.append(f'<line x1="{left}" y1="{Y(t):.1f}" x2="{left + pw}" y2="{Y(t):.1f}" stroke="{style.GRID}"/>')
        out.append(f'<text x="{left - 5}" y="{Y(t) + 4:.1f}" text-anchor="end">{tick_text(t)}</text>')
    out.append(f'<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="{style.AXIS}"/>')
    out.append(f'<text x="{left + pw / 2}" y="{height - 8}" text-anchor="middle">{escape(x_label)}</text>')
    if y_label:
        out.append(f'<text transform="translate(14,{top + ph / 2}) rotate(-90)" text-anchor="middle">'
                   f'{escape(y_label)}</text>')
    for i, (name, ys) in enumerate(series.items()):
        pts = " ".join(f"{X(x):.1f},{Y(y):.1f}" for x, y in zip(xs, ys) if y == y and x == x)
        colour = style.series(i)
        out.append(f'<polyline points="{pts}" fill="none" stroke="{colour}" stroke-width="1.8"/>')
        out.append(f'<line x1="{left + pw + 8}" y1="{top + 8 + 15 * i}" x2="{left + pw + 24}" y2="{top + 8 + 15 * i}" '
                   f'stroke="{colour}" stroke-width="2.5"/>'
                   f'<text x="{left + pw + 28}" y="{top + 12 + 15 * i}">{escape(name)}</text>')
    out.append("</svg>")
    return "\n".join(out)


def presence_map(title: str, xs: list[float], ys: list[float], cells: dict[tuple[int, int], str],
                 x_label: str, y_label: str, width: int = 720, height: int = 420,
                 subtitle: Sequence[str] = (), overlay=None) -> str:
    """Two-dimensional map of which phases are present at each grid point: each cell centred on its
    grid point, round ticks, gridlines, and every region labelled in place as well as in the legend.
    ``overlay(X, Y, legend_x, legend_y)`` adds elements drawn over the cells (X and Y map the axes'
    values to the picture; the legend continues at legend_x, legend_y)."""
    top = 30 + 14 * len(subtitle) + 8
    left, right, bottom = 64, 170, 46
    pw, ph = width - left - right, height - top - bottom
    nx, ny = max(len(xs), 1), max(len(ys), 1)
    kinds = sorted(set(cells.values()))
    colours = {k: style.series(i) for i, k in enumerate(kinds)}

    def edges(vs):
        if len(vs) < 2:
            v = vs[0] if vs else 0.0
            return v - 0.5, v + 0.5
        return vs[0] - (vs[1] - vs[0]) / 2, vs[-1] + (vs[-1] - vs[-2]) / 2

    x0, x1 = edges(xs)
    y0, y1 = edges(ys)

    def X(x):
        return left + (x - x0) / (x1 - x0) * pw

    def Y(y):
        return top + ph - (y - y0) / (y1 - y0) * ph

    out = _frame(width, height, title, subtitle)
    cw, ch = pw / nx, ph / ny
    for (i, j), kind in sorted(cells.items()):
        out.append(f'<rect x="{left + i * cw:.1f}" y="{top + ph - (j + 1) * ch:.1f}" width="{cw + 0.5:.1f}" '
                   f'height="{ch + 0.5:.1f}" fill="{colours[kind]}"/>')
    for t in nice_ticks(x0, x1, 7):
        if x0 <= t <= x1:
            out.append(f'<line x1="{X(t):.1f}" y1="{top}" x2="{X(t):.1f}" y2="{top + ph}" stroke="{style.GRID}" '
                       'stroke-opacity="0.7"/>')
            out.append(f'<text x="{X(t):.1f}" y="{top + ph + 15}" text-anchor="middle">{tick_text(t)}</text>')
    for t in nice_ticks(y0, y1, 6):
        if y0 <= t <= y1:
            out.append(f'<line x1="{left}" y1="{Y(t):.1f}" x2="{left + pw}" y2="{Y(t):.1f}" stroke="{style.GRID}" '
                       'stroke-opacity="0.7"/>')
            out.append(f'<text x="{left - 5}" y="{Y(t) + 4:.1f}" text-anchor="end">{tick_text(t)}</text>')
    out.append(f'<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="{style.AXIS}"/>')
    out.append(f'<text x="{left + pw / 2}" y="{height - 8}" text-anchor="middle">{escape(x_label)}</text>')
    out.append(f'<text transform="translate(14,{top + ph / 2}) rotate(-90)" text-anchor="middle">{escape(y_label)}</text>')
    if overlay is not None:
        out += overlay(X, Y, left + pw + 12, top + 16 * len(kinds) + 6)
    for k in kinds:   # a label inside each region, at the cell nearest the region's centre
        own = [(i, j) for (i, j), kind in cells.items() if kind == k]
        ci = sum(i for i, _ in own) / len(own)
        cj = sum(j for _, j in own) / len(own)
        i, j = min(own, key=lambda c: (c[0] - ci) ** 2 + (c[1] - cj) ** 2)
        out.append(f'<text x="{left + (i + 0.5) * cw:.1f}" y="{top + ph - (j + 0.5) * ch + 4:.1f}" text-anchor="middle" '
                   f'font-weight="bold" stroke="{style.LABEL_HALO}" stroke-width="3" paint-order="stroke">'
                   f'{escape(k)}</text>')
    for i, k in enumerate(kinds):
        out.append(f'<rect x="{left + pw + 12}" y="{top + 16 * i}" width="11" height="11" fill="{colours[k]}"/>'
                   f'<text x="{left + pw + 27}" y="{top + 10 + 16 * i}">{escape(k)}</text>')
    out.append("</svg>")
    return "\n".join(out)
