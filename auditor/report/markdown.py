"""Markdown report: the same content as the HTML one, as plain text tables."""
from __future__ import annotations

from ..audit import AuditResult
from .sections import build


def _cell(text: str) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def render(r: AuditResult) -> str:
    doc, sections = build(r)
    out = [f"# Equilibrium-problem audit: {doc['title']}", ""]
    for title, blocks in sections:
        out += [f"## {title}", ""]
        for b in blocks:
            if b.kind == "paragraph":
                out += [b.text, ""]
            elif b.kind == "list":
                out += [f"- {_cell(i)}" for i in b.items] + [""]
            elif b.kind == "table":
                out.append("| " + " | ".join(_cell(h) for h in b.headers) + " |")
                out.append("|" + "|".join("---" for _ in b.headers) + "|")
                out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in b.rows]
                out.append("")
            # pictures appear in the HTML report only
    return "\n".join(out)
