"""Several operating cases in one report (issue 24): ``auditor check a.yaml b.yaml c.yaml --report
cases.html`` (or .md, .json).  A comparison table comes first (verdict, F, phases, key
compositions, the flow basis), with the rows whose values differ between the cases marked;
then each case's full sections, each with its own inputs, hashes and provenance.

A value differs when its text as shown differs (compositions to four significant digits).
"""
from __future__ import annotations

import json
from html import escape

from .blocks import Block, table

KEY_SPECIES = 6          # the species with the largest mole fraction in any case, per phase, shown in the table


def _phase_x(doc: dict) -> dict[tuple[str, str], float]:
    eq = doc.get("equilibrium") or {}
    if not eq.get("solved"):
        return {}
    return {(p["name"], k): v for p in eq["phases"] if p["moles"] > 0 for k, v in p["mole_fractions"].items()}


def _key_species(docs: list[dict]) -> list[tuple[str, str]]:
    """(phase, species) of the largest mole fractions over the cases, phase by phase."""
    best: dict[tuple[str, str], float] = {}
    for d in docs:
        for key, v in _phase_x(d).items():
            best[key] = max(best.get(key, 0.0), v)
    phases = list(dict.fromkeys(ph for ph, _ in best))
    out = []
    for ph in phases:
        ranked = sorted((k for k in best if k[0] == ph), key=lambda k: -best[k])
        out += [k for k in ranked[:KEY_SPECIES] if best[k] > 0]
    return out


def _amounts(doc: dict) -> str:
    eq = doc.get("equilibrium") or {}
    if not eq.get("solved"):
        return "not computed"
    return ", ".join(f"{p['name']} {p['moles']:.4g}" for p in eq["phases"] if p["moles"] > 0)


def comparison_rows(docs: list[dict]) -> list[tuple[str, list[str], bool]]:
    """(item, value in each case, whether the values differ)."""
    rows = [("title", [d["title"] for d in docs]),
            ("verdict", [str(d["verdict"]) for d in docs]),
            ("degrees of freedom F", [str(d["phase_rule"]["degrees_of_freedom"]) for d in docs]),
            ("components C", [str(d["phase_rule"]["components"]) for d in docs]),
            ("phases assumed", [", ".join(d["phase_rule"]["coexisting"]) for d in docs]),
            ("phases present at equilibrium", [", ".join((d.get("equilibrium") or {}).get("phases_present", []))
                                               or "not computed" for d in docs]),
            ("temperature, K", [_fmt((d.get("equilibrium") or {}).get("temperature_K")) for d in docs]),
            ("pressure, bar", [_fmt((d.get("equilibrium") or {}).get("pressure_Pa"), 1e-5) for d in docs]),
            ("flow basis", [("per " + d["flow_basis"]["time_unit_words"]) if d.get("flow_basis") else "amounts (closed system)"
                            for d in docs]),
            ("phase amounts, mol (per time unit for a flow basis)", [_amounts(d) for d in docs]),
            ("heat added from the feed, kJ", [_fmt((d.get("equilibrium") or {}).get("heat_J"), 1e-3) for d in docs]),
            ("heat of reaction at the state, kJ", [_fmt((d.get("equilibrium") or {}).get("heat_of_reaction_J"), 1e-3)
                                                   for d in docs])]
    for ph, sp in _key_species(docs):
        rows.append((f"x({sp}) in {ph}", [_fmt(_phase_x(d).get((ph, sp)), none="absent" if _phase_x(d) else "not computed")
                                          for d in docs]))
    rows.append(("nearest phase boundary (margins)", [_nearest(d) for d in docs]))
    rows.append(("errors / warnings", [f"{sum(f['severity'] == 'error' for f in d['findings'])} / "
                                       f"{sum(f['severity'] == 'warning' for f in d['findings'])}" for d in docs]))
    return [(item, values, len(set(values)) > 1) for item, values in rows]


def _nearest(d: dict) -> str:
    """The nearest boundary found by the margins, in words; 'not computed' without margins."""
    found = [m for m in d.get("margins") or () if m.get("value") is not None]
    if d.get("margins") is None:
        return "not computed"
    if not found:
        return "none inside the bounds searched"
    m = found[0]
    return f"{m['phase']} {m['change']} {m['side'] or ''} {m['variable']} = {m['value']:.4g} {m['unit']}".replace("  ", " ")


def _fmt(v, scale: float = 1.0, none: str = "not computed") -> str:
    return none if v is None else f"{v * scale:.4g}"


def _headers(docs: list[dict]) -> list[str]:
    return ["item"] + [f"case {i + 1}: {d['case']}" for i, d in enumerate(docs)] + ["differs"]


def comparison_block(docs: list[dict]) -> Block:
    return table(_headers(docs), [(item, *values, "yes" if differs else "") for item, values, differs
                                  in comparison_rows(docs)],
                 f"Comparison of {len(docs)} operating cases (rows marked 'differs' change between cases)")


def render_json(results) -> str:
    from .document import check_document
    docs = [check_document(r, with_context=True) for r in results]
    return json.dumps({"schema": 1, "kind": "comparison",
                       "comparison": [{"item": item, "values": values, "differs": differs}
                                      for item, values, differs in comparison_rows(docs)],
                       "cases": docs}, indent=1) + "\n"


def render_html(results) -> str:
    from .html import _rows, body, head
    from .sections import build
    built = [build(r) for r in results]
    docs = [doc for doc, _ in built]
    verdicts = ", ".join(str(d["verdict"]) for d in docs)
    title = f"Comparison of {len(docs)} operating cases"
    out = head(title, title, verdicts, docs[0]["tool"]["version"])
    from . import style
    out.insert(out.index("</head>"), f"<style>tr.differs td{{background:{style.DIFFERS_FILL}}}tr.differs td:first-child"
                                     "{font-weight:bold}tr.differs td:first-child::before{content:'\\25B6  '}</style>")
    out.append(f"<h1>Equilibrium-problem audit: {escape(title)}</h1>")
    out.append('<section id="comparison"><h2>Comparison</h2>')
    out.append("<p>One column per case; a highlighted row marked &#9654; differs between the cases. Each case's "
               "full audit follows, with its own inputs, hashes and provenance.</p>")
    block = comparison_block(docs)
    out.append(f"<table><caption>{escape(block.caption)}</caption><thead><tr>"
               + "".join(f"<th>{escape(h)}</th>" for h in block.headers) + "</tr></thead><tbody>")
    for row, line in zip(block.rows, _rows(block.rows)):
        out.append(line.replace("<tr>", '<tr class="differs">', 1) if row[-1] == "yes" else line)
    out.append("</tbody></table>")
    out.append("<ul>" + "".join(f'<li><a href="#case-{i + 1}">Case {i + 1}: {escape(d["title"])}</a> '
                                f'({escape(str(d["verdict"]))})</li>' for i, d in enumerate(docs)) + "</ul></section>")
    for i, (doc, sections) in enumerate(built):
        out.append(f'<article id="case-{i + 1}"><h2>Case {i + 1}: {escape(doc["title"])}</h2>')
        out += body(sections, doc["verdict"], prefix=f"case-{i + 1}-", level=3)
        out.append("</article>")
    out += ["</body>", "</html>"]
    return "\n".join(out) + "\n"


def render_markdown(results) -> str:
    from .markdown import _cell, render
    from .sections import build
    docs = [build(r)[0] for r in results]
    block = comparison_block(docs)
    out = [f"# Equilibrium-problem audit: comparison of {len(docs)} operating cases", "", "## Comparison", "",
           _cell("One column per case; a row marked 'differs' (and in bold) changes between the cases. Each case's "
                 "full audit follows, with its own inputs, hashes and provenance."), "",
           f"**{_cell(block.caption)}**", "", "| " + " | ".join(_cell(h) for h in block.headers) + " |",
           "|" + "|".join("---" for _ in block.headers) + "|"]
    for row in block.rows:
        cells = [_cell(c) for c in row]
        if row[-1] == "yes":
            cells[0] = f"**{cells[0]}**"
        out.append("| " + " | ".join(cells) + " |")
    out.append("")
    for i, r in enumerate(results):
        text = render(r)
        # each case's report, its headings one level down under the case's own heading
        lines = text.splitlines()
        out += [f"## Case {i + 1}: {_cell(docs[i]['title'])}", ""]
        out += [("#" + ln) if ln.startswith("## ") else ln for ln in lines[1:]]
        out.append("")
    return "\n".join(out)


def render_cases(results, suffix: str) -> str:
    """The report of several cases in the format the suffix picks."""
    if suffix in (".html", ".htm"):
        return render_html(results)
    if suffix == ".md":
        return render_markdown(results)
    return render_json(results)
