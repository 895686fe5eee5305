"""Self-contained HTML report: inline CSS and SVG, no scripts, prints cleanly to PDF.

Printing (checked in headless Chromium): every page carries the case title and verdict in
its top margin and "page N of M" in its bottom margin through CSS ``@page`` margin boxes
(supported by Chromium since version 131); a table keeps its caption (``<caption>``) and
its header row repeats on each page it spans; the embedded case file prints expanded.
"""
from __future__ import annotations

from html import escape

from ..audit import AuditResult
from . import style
from .sections import build


def css_string(text: str) -> str:
    """``text`` as a CSS string literal that cannot end the string or the <style> element."""
    out = []
    for ch in text:
        out.append(ch if ch.isalnum() or ch in " ,.:;()-_+=/'" else f"\\{ord(ch):x} ")
    return '"' + "".join(out) + '"'


def _css(title: str, verdict: str, version: str) -> str:
    tints = "".join(f".{v}{{background:{fill};border-color:{edge}}}" for v, (fill, edge) in style.VERDICT.items())
    head = css_string(title if len(title) <= 90 else title[:87] + "...")
    return f"""
body{{font-family:Georgia,serif;max-width:62em;margin:2em auto;padding:0 1em;color:{style.INK};line-height:1.4}}
h1{{font-size:1.5em;border-bottom:2px solid {style.INK}}}
h2{{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid {style.RULE}}}
table{{border-collapse:collapse;margin:.6em 0;font-size:.9em}}
caption{{text-align:left;font-weight:bold;padding:.2em 0;caption-side:top}}
td,th{{border:1px solid {style.RULE};padding:.2em .5em;vertical-align:top;text-align:left}}
th{{background:{style.HEADER_FILL}}}
td.num{{text-align:right;font-variant-numeric:tabular-nums}}
.verdict-box{{border:2px solid {style.INK};padding:.5em .8em;margin:.5em 0}}
.verdict{{font-size:1.3em;font-weight:bold}}
.reason{{font-size:1.05em;margin:.3em 0 0 0}}
{tints}
figure{{margin:.6em 0}}figcaption{{font-weight:bold}}
figure svg{{max-width:100%;height:auto}}
details{{border:1px solid {style.RULE};padding:.3em .6em;margin:.6em 0}}
summary{{cursor:pointer;font-weight:bold}}
pre{{white-space:pre-wrap;font-size:.85em;background:{style.PAPER_TINT};padding:.5em}}
.signoff td{{height:2.2em;min-width:9em}}
@page{{size:A4;margin:18mm 14mm 16mm 14mm;
  @top-left{{content:{head};font:9pt Georgia,serif;color:{style.INK}}}
  @top-right{{content:{css_string("Verdict: " + verdict)};font:bold 9pt Georgia,serif;color:{style.INK}}}
  @bottom-left{{content:{css_string("Equilibrium-problem audit, auditor " + version)};font:8pt Georgia,serif;color:{style.RULE}}}
  @bottom-right{{content:"page " counter(page) " of " counter(pages);font:9pt Georgia,serif;color:{style.INK}}}}}
@media print{{
  body{{margin:0;max-width:none;font-size:10pt}}
  h1,h2{{break-after:avoid}}
  caption,figcaption,summary{{break-after:avoid}}
  tr,figure,.verdict-box,.signoff{{break-inside:avoid}}
  table{{break-inside:auto}}
  thead{{break-after:avoid}}
  tbody tr:first-child,tbody tr:nth-child(2){{break-before:avoid}}
  pre{{orphans:4;widows:3}}
  details::details-content{{content-visibility:visible;display:block}}
  summary{{list-style:none}}
}}
"""


def _numeric(c: str) -> bool:
    return bool(c) and c.lstrip("+-").replace(".", "", 1).replace("e-", "", 1).replace("e+", "", 1).isdigit()


def _rows(rows) -> list[str]:
    """Body rows; a column whose filled cells are all numbers is right-aligned."""
    n = max((len(r) for r in rows), default=0)
    num = [all(_numeric(r[j]) for r in rows if j < len(r) and r[j]) and any(j < len(r) and r[j] for r in rows)
           for j in range(n)]
    return ["<tr>" + "".join(f'<td class="num">{escape(c)}</td>' if num[j] else f"<td>{_linked(c)}</td>"
                             for j, c in enumerate(row)) + "</tr>" for row in rows]


def _linked(c: str) -> str:
    """A finding stated in another section links to it."""
    if c.startswith("stated under "):
        where = c[len("stated under "):]
        return f'stated under <a href="#{escape(where.lower().replace(" ", "-"))}">{escape(where)}</a>'
    return escape(c)


def render(r: AuditResult) -> str:
    doc, sections = build(r)
    v = doc["verdict"]
    out = head(f"Audit: {doc['title']} ({v})", doc["title"], v, doc["tool"]["version"])
    out.append(f"<h1>Equilibrium-problem audit: {escape(doc['title'])}</h1>")
    out += body(sections, v)
    out += ["</body>", "</html>"]
    return "\n".join(out) + "\n"


def head(page_title: str, title: str, verdict: str, version: str) -> list[str]:
    """The document's opening up to <body>, with the inline style."""
    return ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
            f"<title>{escape(page_title)}</title>",
            f"<style>{_css(title, verdict, version)}</style>", "</head>", "<body>"]


def fragment(r: AuditResult) -> str:
    """The report's body for a notebook cell: the sections, in a box, without page furniture."""
    doc, sections = build(r)
    tints = "".join(f".auditor-report .{v}{{background:{fill};border:2px solid {edge};padding:.4em .7em}}"
                    for v, (fill, edge) in style.VERDICT.items())
    return (f'<div class="auditor-report"><style>.auditor-report table{{border-collapse:collapse}}'
            f".auditor-report td,.auditor-report th{{border:1px solid {style.RULE};padding:.15em .4em}}{tints}</style>"
            f"<h3>Equilibrium-problem audit: {escape(doc['title'])}</h3>"
            + "\n".join(body(sections, doc["verdict"], level=4, skip=("Sign-off",))) + "</div>")


def body(sections, v: str, prefix: str = "", level: int = 2, skip=()) -> list[str]:
    """The sections as HTML; ``prefix`` keeps section ids apart when several cases share a page."""
    out = []
    for title, blocks in sections:
        if title in skip:
            continue
        sid = prefix + title.lower().replace(" ", "-")
        out.append(f'<section id="{escape(sid)}">')
        out.append(f"<h{level}>{escape(title)}</h{level}>")
        if title == "Verdict":
            out.append(f'<div class="verdict-box {escape(v)}">')
        for b in blocks:
            out += _block(b)
        out.append("</section>")
    return out


def _block(b) -> list[str]:
    out = []
    if b.kind == "paragraph":
        if b.text.startswith("Verdict: "):
            out.append(f'<p><span class="verdict">{escape(b.text)}</span></p>')
        elif b.text.startswith("Why: "):
            out.append(f'<p class="reason">{escape(b.text)}</p></div>')
        else:
            out.append(f"<p>{escape(b.text)}</p>")
    elif b.kind == "list":
        out.append("<ul>" + "".join(f"<li>{escape(i)}</li>" for i in b.items) + "</ul>")
    elif b.kind == "table":
        cap = f"<caption>{escape(b.caption)}</caption>" if b.caption else ""
        out.append(f"<table>{cap}<thead><tr>" + "".join(f"<th>{escape(h)}</th>" for h in b.headers)
                   + "</tr></thead><tbody>")
        out += _rows(b.rows)
        out.append("</tbody></table>")
    elif b.kind == "svg":
        cap = f"<figcaption>{escape(b.caption)}</figcaption>" if b.caption else ""
        out.append(f"<figure>{cap}{b.text}</figure>")
    elif b.kind == "file":
        out.append(f"<details><summary>{escape(b.caption)}</summary><pre>{escape(b.text)}</pre></details>")
    elif b.kind == "signoff":
        out.append('<table class="signoff"><caption>Sign-off</caption><thead><tr>'
                   + "".join(f"<th>{escape(h)}</th>" for h in b.headers) + "</tr></thead><tbody>"
                   + "".join("<tr>" + "".join(f"<td>{escape(c)}</td>" for c in row) + "</tr>" for row in b.rows)
                   + "</tbody></table>")
        out.append("<p>Revision: ________ &nbsp; Revision date: ____________ &nbsp; "
                   "Reason for revision: ________________________________</p>")
    return out
