"""Markdown report: the same content as the HTML one, as plain text tables.

The embedded case file goes to an appendix before the sign-off block; pictures appear in the
HTML report only (the incidence is a table here whenever it is small enough to read).
"""
from __future__ import annotations

import html
import re

from ..audit import AuditResult
from .sections import build


def _cell(text: str) -> str:
    # escape HTML so that markup in a title or a name stays text when the Markdown is rendered
    return html.escape(str(text), quote=False).replace("|", "\\|").replace("\n", " ")


def _fence(text: str) -> str:
    longest = max((len(m) for m in re.findall(r"`+", text)), default=0)
    return "`" * max(3, longest + 1)


def render(r: AuditResult) -> str:
    doc, sections = build(r)
    out = [f"# Equilibrium-problem audit: {_cell(doc['title'])}", ""]
    files = []
    for title, blocks in sections:
        if title == "Sign-off":
            for caption, text in files:
                fence = _fence(text)
                out += ["## Appendix: case file", "", _cell(caption), "", fence + "yaml", text.rstrip("\n"), fence, ""]
        out += [f"## {title}", ""]
        for b in blocks:
            if b.kind == "paragraph":
                out += [_cell(b.text), ""]
            elif b.kind == "list":
                out += [f"- {_cell(i)}" for i in b.items] + [""]
            elif b.kind in ("table", "signoff"):
                if b.caption:
                    out += [f"**{_cell(b.caption)}**", ""]
                out.append("| " + " | ".join(_cell(h) for h in b.headers) + " |")
                out.append("|" + "|".join("---" for _ in b.headers) + "|")
                out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in b.rows]
                out.append("")
                if b.kind == "signoff":
                    out += ["Revision: ________  Revision date: ____________  Reason for revision: "
                            "________________________________", ""]
            elif b.kind == "file":
                files.append((b.caption, b.text))
                out += [_cell(f"{b.caption}: reproduced in the appendix."), ""]
            elif b.kind == "svg" and b.caption:
                out += [_cell(f"{b.caption}: a picture in the HTML report."), ""]
    return "\n".join(out)
