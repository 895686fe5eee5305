"""Small self-contained SVG pictures (no plotting library; deterministic text output)."""
from __future__ import annotations

from html import escape

from . import style


def composition_bars(phase: str, fractions: list[tuple[str, float]], width: int = 560) -> str:
    """Horizontal bar chart of one phase's mole fractions (largest first, log-free)."""
    items = sorted(fractions, key=lambda kv: -kv[1])[:15]
    row, left = 18, 150
    height = 30 + row * len(items)
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" '
           f'aria-label="mole fractions in {escape(phase)}" font-family="sans-serif" font-size="11">',
           f'<text x="4" y="14" font-weight="bold">{escape(phase)}: mole fractions</text>']
    span = width - left - 70
    for i, (name, x) in enumerate(items):
        y = 24 + i * row
        w = max(0.0, min(1.0, x)) * span
        out.append(f'<text x="{left - 6}" y="{y + 11}" text-anchor="end">{escape(name)}</text>')
        out.append(f'<rect x="{left}" y="{y}" width="{w:.1f}" height="{row - 5}" fill="{style.series(i)}"/>')
        out.append(f'<text x="{left + w + 4:.1f}" y="{y + 11}">{x:.4g}</text>')
    out.append("</svg>")
    return "\n".join(out)


def sparsity(rows: list[dict[int, object]], n_cols: int, independent: set[int], col_labels: list[str],
             row_labels: list[str], max_cell: int = 14) -> str:
    """Stoichiometric matrix as a sparsity picture: independent rows blue, dependent orange,
    reactants hollow, products filled."""
    n_rows = len(rows)
    cell = max(2, min(max_cell, int(700 / max(n_cols, 1)), int(700 / max(n_rows, 1))))
    left, top = (110 if cell >= 10 else 10), (70 if cell >= 10 else 10)
    width, height = max(left + cell * n_cols + 10, 330), top + cell * n_rows + 40
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" '
           'aria-label="stoichiometric matrix" font-family="sans-serif" font-size="10">']
    if cell >= 10:
        for j, lab in enumerate(col_labels):
            x = left + j * cell + cell / 2
            out.append(f'<text transform="translate({x:.1f},{top - 4}) rotate(-60)">{escape(lab)}</text>')
        for i, lab in enumerate(row_labels):
            out.append(f'<text x="{left - 4}" y="{top + i * cell + cell - 2}" text-anchor="end">{escape(lab)}</text>')
    for i, row in enumerate(rows):
        colour = style.INDEPENDENT if i in independent else style.DEPENDENT
        for j, c in row.items():
            x, y = left + j * cell, top + i * cell
            fill = colour if c > 0 else "none"
            out.append(f'<rect x="{x}" y="{y}" width="{cell - 1}" height="{cell - 1}" fill="{fill}" stroke="{colour}"/>')
    ly = top + cell * n_rows + 16
    out.append(f'<rect x="10" y="{ly - 9}" width="9" height="9" fill="{style.INDEPENDENT}"/><text x="23" y="{ly}">independent</text>')
    out.append(f'<rect x="100" y="{ly - 9}" width="9" height="9" fill="{style.DEPENDENT}"/><text x="113" y="{ly}">dependent</text>')
    out.append(f'<rect x="185" y="{ly - 9}" width="9" height="9" fill="none" stroke="#333"/><text x="198" y="{ly}">reactant</text>')
    out.append(f'<rect x="255" y="{ly - 9}" width="9" height="9" fill="#333"/><text x="268" y="{ly}">product</text>')
    out.append("</svg>")
    return "\n".join(out)


def line_chart(title: str, x_label: str, xs: list[float], series: dict[str, list[float]],
               width: int = 640, height: int = 320, shade: list[tuple[float, float]] = ()) -> str:
    """Simple line chart; ``shade`` marks x-intervals (e.g. where an assumption fails)."""
    left, right, top, bottom = 60, 150, 28, 40
    pw, ph = width - left - right, height - top - bottom
    if not xs:
        return ""
    x0, x1 = min(xs), max(xs)
    x1 = x1 if x1 > x0 else x0 + 1
    vals = [v for vs in series.values() for v in vs if v == v]
    y0, y1 = 0.0, max(vals + [1e-12])

    def X(x):
        return left + (x - x0) / (x1 - x0) * pw

    def Y(y):
        return top + ph - (y - y0) / (y1 - y0) * ph

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" '
           f'aria-label="{escape(title)}" font-family="sans-serif" font-size="11">',
           f'<text x="{left}" y="16" font-weight="bold">{escape(title)}</text>']
    for a, b in shade:
        a, b = max(a, x0), min(b, x1)   # keep the shading inside the plot
        if b > a:
            out.append(f'<rect x="{X(a):.1f}" y="{top}" width="{max(X(b) - X(a), 1):.1f}" height="{ph}" fill="{style.SHADE_OUT_OF_RANGE}"/>')
    out.append(f'<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="#333"/>')
    for k in range(5):
        xv = x0 + (x1 - x0) * k / 4
        yv = y0 + (y1 - y0) * k / 4
        out.append(f'<text x="{X(xv):.1f}" y="{top + ph + 14}" text-anchor="middle">{xv:.4g}</text>')
        out.append(f'<text x="{left - 4}" y="{Y(yv) + 4:.1f}" text-anchor="end">{yv:.3g}</text>')
    out.append(f'<text x="{left + pw / 2}" y="{height - 6}" text-anchor="middle">{escape(x_label)}</text>')
    for i, (name, ys) in enumerate(series.items()):
        pts = " ".join(f"{X(x):.1f},{Y(y):.1f}" for x, y in zip(xs, ys) if y == y)
        colour = style.series(i)
        out.append(f'<polyline points="{pts}" fill="none" stroke="{colour}" stroke-width="1.5"/>')
        out.append(f'<text x="{left + pw + 8}" y="{top + 12 + 14 * i}" fill="{colour}">{escape(name)}</text>')
    out.append("</svg>")
    return "\n".join(out)


def presence_map(title: str, xs: list[float], ys: list[float], cells: dict[tuple[int, int], str],
                 x_label: str, y_label: str, width: int = 640, height: int = 360) -> str:
    """Two-dimensional map of which phases are present at each grid point."""
    left, right, top, bottom = 60, 200, 28, 40
    pw, ph = width - left - right, height - top - bottom
    nx, ny = max(len(xs), 1), max(len(ys), 1)
    kinds = sorted(set(cells.values()))
    colours = {k: style.series(i) for i, k in enumerate(kinds)}
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" '
           f'aria-label="{escape(title)}" font-family="sans-serif" font-size="11">',
           f'<text x="{left}" y="16" font-weight="bold">{escape(title)}</text>']
    cw, ch = pw / nx, ph / ny
    for (i, j), kind in sorted(cells.items()):
        out.append(f'<rect x="{left + i * cw:.1f}" y="{top + ph - (j + 1) * ch:.1f}" width="{cw + 0.5:.1f}" '
                   f'height="{ch + 0.5:.1f}" fill="{colours[kind]}"/>')
    out.append(f'<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="#333"/>')
    if xs:
        out.append(f'<text x="{left}" y="{top + ph + 14}">{xs[0]:.4g}</text>')
        out.append(f'<text x="{left + pw}" y="{top + ph + 14}" text-anchor="end">{xs[-1]:.4g}</text>')
    if ys:
        out.append(f'<text x="{left - 4}" y="{top + ph}" text-anchor="end">{ys[0]:.4g}</text>')
        out.append(f'<text x="{left - 4}" y="{top + 10}" text-anchor="end">{ys[-1]:.4g}</text>')
    out.append(f'<text x="{left + pw / 2}" y="{height - 6}" text-anchor="middle">{escape(x_label)}</text>')
    out.append(f'<text transform="translate(14,{top + ph / 2}) rotate(-90)" text-anchor="middle">{escape(y_label)}</text>')
    for i, k in enumerate(kinds):
        out.append(f'<rect x="{left + pw + 10}" y="{top + 14 * i}" width="10" height="10" fill="{colours[k]}"/>'
                   f'<text x="{left + pw + 24}" y="{top + 9 + 14 * i}">{escape(k)}</text>')
    out.append("</svg>")
    return "\n".join(out)
