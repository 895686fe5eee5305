"""Markdown report: the same content as the HTML one, as plain text tables."""
from __future__ import annotations

import html

from ..audit import AuditResult
from .sections import build


def _cell(text: str) -> str:
    # escape HTML so that markup in a title or a name stays text when the Markdown is rendered
    return html.escape(str(text), quote=False).replace("|", "\\|").replace("\n", " ")


def render(r: AuditResult) -> str:
    doc, sections = build(r)
    out = [f"# Equilibrium-problem audit: {_cell(doc['title'])}", ""]
    for title, blocks in sections:
        out += [f"## {title}", ""]
        for b in blocks:
            if b.kind == "paragraph":
                out += [_cell(b.text), ""]
            elif b.kind == "list":
                out += [f"- {_cell(i)}" for i in b.items] + [""]
            elif b.kind == "table":
                out.append("| " + " | ".join(_cell(h) for h in b.headers) + " |")
                out.append("|" + "|".join("---" for _ in b.headers) + "|")
                out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in b.rows]
                out.append("")
            # pictures appear in the HTML report only
    return "\n".join(out)
