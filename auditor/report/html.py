"""Self-contained HTML report: inline CSS and SVG, no scripts, prints cleanly to PDF."""
from __future__ import annotations

from html import escape

from ..audit import AuditResult
from .sections import build

from . import style

_VERDICT_CSS = "".join(f".{v}{{background:{fill};border-color:{edge}}}" for v, (fill, edge) in style.VERDICT.items())
CSS = f"""
body{{font-family:Georgia,serif;max-width:60em;margin:2em auto;padding:0 1em;color:{style.INK};line-height:1.4}}
h1{{font-size:1.5em;border-bottom:2px solid {style.INK}}}h2{{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid {style.RULE}}}
table{{border-collapse:collapse;margin:.5em 0;font-size:.9em}}td,th{{border:1px solid {style.RULE};padding:.2em .5em;
vertical-align:top;text-align:left}}th{{background:{style.HEADER_FILL}}}.verdict{{font-size:1.3em;font-weight:bold;padding:.3em .6em;
display:inline-block;border:2px solid {style.INK}}}{_VERDICT_CSS}figure{{margin:.5em 0}}
@media print{{body{{margin:0;max-width:none}}h2{{page-break-after:avoid}}table,figure{{page-break-inside:avoid}}}}
"""

def render(r: AuditResult) -> str:
    doc, sections = build(r)
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           f"<title>Audit: {escape(doc['title'])}</title>", f"<style>{CSS}</style>", "</head>", "<body>",
           f"<h1>Equilibrium-problem audit: {escape(doc['title'])}</h1>"]
    for title, blocks in sections:
        sid = title.lower().replace(" ", "-")
        out.append(f'<section id="{escape(sid)}">')
        out.append(f"<h2>{escape(title)}</h2>")
        for b in blocks:
            if b.kind == "paragraph":
                if b.text.startswith("Verdict: "):
                    v = doc["verdict"]
                    out.append(f'<p><span class="verdict {escape(v)}">{escape(b.text)}</span></p>')
                else:
                    out.append(f"<p>{escape(b.text)}</p>")
            elif b.kind == "list":
                out.append("<ul>" + "".join(f"<li>{escape(i)}</li>" for i in b.items) + "</ul>")
            elif b.kind == "table":
                out.append("<table><thead><tr>" + "".join(f"<th>{escape(h)}</th>" for h in b.headers) + "</tr></thead><tbody>")
                out += ["<tr>" + "".join(f"<td>{escape(c)}</td>" for c in row) + "</tr>" for row in b.rows]
                out.append("</tbody></table>")
            elif b.kind == "svg":
                out.append(f"<figure>{b.text}</figure>")
        out.append("</section>")
    out += ["</body>", "</html>"]
    return "\n".join(out) + "\n"
