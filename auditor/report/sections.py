"""The content of a filed audit report, as sections of simple blocks.

Built from the JSON document (which defines the content) plus pictures; the Markdown and
HTML renderers only lay these blocks out.
"""
from __future__ import annotations

from dataclasses import dataclass

from ..audit import AuditResult, show_value
from . import svg
from .document import check_document

SECTION_TITLES = ("Verdict", "Inputs", "System", "Reactions", "Phase rule", "Specification audit",
                  "Equilibrium and certificate", "Claims", "Assumptions", "Findings", "Cautions")


@dataclass(frozen=True)
class Block:
    kind: str                  # paragraph, table, list, svg
    text: str = ""
    headers: tuple = ()
    rows: tuple = ()
    items: tuple = ()


def _table(headers, rows) -> Block:
    return Block("table", headers=tuple(headers), rows=tuple(tuple(str(c) for c in r) for r in rows))


def _list(items) -> Block:
    return Block("list", items=tuple(str(i) for i in items))


def _para(text) -> Block:
    return Block("paragraph", text=str(text))


def build(r: AuditResult, doc: dict | None = None) -> tuple[dict, list[tuple[str, list[Block]]]]:
    doc = doc or check_document(r, with_context=True)
    sec: list[tuple[str, list[Block]]] = []
    verdict_blocks = [_para(f"Verdict: {doc['verdict']}")]
    errors = [f"{f['topic']}: {f['message']}" for f in doc["findings"] if f["severity"] == "error"]
    if errors:
        verdict_blocks += [_para("Why:"), _list(errors[:6] + ([f"... and {len(errors) - 6} more (see Findings)"]
                                                             if len(errors) > 6 else []))]
    if doc["specification"]["suggestion"]:
        verdict_blocks.append(_para(f"Suggested fix: {doc['specification']['suggestion']}"))
    elif doc["verdict"] == "well-posed":
        verdict_blocks.append(_para("No change to the specifications is needed."))
    sec.append(("Verdict", verdict_blocks))
    inputs = [_table(("file", "SHA-256"), [(i["path"], i["sha256"]) for i in doc.get("inputs", [])]),
              _table(("component", "version"), sorted(doc.get("versions", {}).items())),
              _para(f"Generated {doc.get('generated', '')} by auditor {doc['tool']['version']}.")]
    sec.append(("Inputs", inputs))
    sysd = doc["system"]
    labels = [s["label"] for s in sysd["species"]]
    sys_blocks = [_table(("phase", "model", "phase-species"),
                         [(p["name"], p["model"], ", ".join(p["species"])) for p in sysd["phases"]]),
                  _para("Formula matrix (rows: elements and charge; columns: phase-species):"),
                  _table(["", *labels], [[e, *row] for e, row in zip(sysd["elements"], sysd["formula_matrix"])])]
    sec.append(("System", sys_blocks))
    rd = doc["reactions"]
    rblocks = [_para(f"Rank {rd['rank']} (formula-matrix rank {rd['formula_rank']}, at most {rd['max_independent']} "
                     f"independent); the list is {'complete' if rd['complete'] else 'not complete'}."),
               _para("Independent reactions:"), _list(rd["independent"] or ["(none)"])]
    if rd["dependent"]:
        rblocks += [_para("Dependent reactions, each an exact combination of independent ones:"),
                    _table(("reaction", "combination"),
                           [(d["equation"], " + ".join(f"({c['coefficient']}) x [{c['equation']}]" for c in d["combination"]))
                            for d in rd["dependent"]])]
    if rd["unbalanced"]:
        rblocks += [_para("Unbalanced reactions (products minus reactants):"),
                    _table(("reaction", "imbalance"), [(u["equation"], ", ".join(f"{e} {v}" for e, v in u["imbalance"].items()))
                                                       for u in rd["unbalanced"]])]
    if rd["duplicates"]:
        rblocks += [_para("Duplicates (same net change):"),
                    _table(("reaction", "repeated by"), [(g["equation"], "; ".join(f"{m['equation']} (x {m['factor']})" for m in g["members"]))
                                                         for g in rd["duplicates"]])]
    if rd["frozen_directions"]:
        rblocks += [_para("Frozen directions (reactions the list cannot produce):"), _list(rd["frozen_directions"])]
    rblocks += [_para("A complete independent set derived from the species alone:"), _list(rd["derived_complete_set"] or ["(none)"]),
                _para("Conserved quantities:"), _list(rd["conserved_quantities"] or ["(none)"])]
    rows = [{k: v for k, v in x.stoich} for x in r.reactions.reactions]
    if rows and r.system.n_species <= 400:
        rblocks.append(Block("svg", text=svg.sparsity(rows, r.system.n_species, set(r.reactions.independent),
                                                      list(r.system.labels), [f"#{i}" for i in range(len(rows))])))
    sec.append(("Reactions", rblocks))
    pr = doc["phase_rule"]
    sec.append(("Phase rule", [_table(("term", "value"), [("N phase-species", pr["species"]), ("pi phases", pr["phases"]),
                                                          ("m independent reactions", pr["independent_reactions"]),
                                                          ("r restrictions", pr["restrictions"]), ("C components", pr["components"]),
                                                          ("F degrees of freedom", pr["degrees_of_freedom"])]),
                               _list(pr["explanation"])]))
    sp = doc["specification"]
    sec.append(("Specification audit", [
        _table(("kind", "count", "specifications"), [("intensive", sp["intensive"], "; ".join(sp["intensive_names"]) or "-"),
                                                     ("extensive", sp["extensive"], "; ".join(sp["extensive_names"]) or "-")]),
        _para("Verdict rules as applied:"), _list(sp["rules_applied"]),
        _para(f"Free variables: {', '.join(sp['free']) or 'none'}"),
        _para(f"Conflicting specifications: {'; '.join(sp['conflicting']) or 'none'}"),
        _para(f"Suggested fix: {sp['suggestion'] or 'none needed'}")]))
    eq = doc["equilibrium"]
    if eq is None and r.case.feed is not None:
        eblocks = [_para("The Gibbs minimisation was not run (counting only, --no-confirm).")]
    elif eq is None:
        eblocks = [_para("No Gibbs minimisation: the case gives no feed (an intensive problem).")]
    elif not eq["solved"]:
        eblocks = [_para("The Gibbs minimisation was not run or did not solve; see the findings.")]
    else:
        eblocks = [_para(f"Solver: {eq['solver']}; T = {eq['temperature_K']:.3f} K; P = {eq['pressure_Pa']:.6g} Pa; "
                         f"{'confirmed' if eq['confirmed'] else 'NOT confirmed'}.")]
        eblocks.append(_table(("phase", "moles", "composition (mole fractions)"),
                              [(p["name"], f"{p['moles']:.6g}", ", ".join(f"{k} {v:.5g}" for k, v in p["mole_fractions"].items()))
                               for p in eq["phases"]]))
        eblocks.append(_table(("certificate item", "value"), [
            ("converged", eq["converged"]), ("conserved-quantity balance error", f"{eq['element_balance_error']:.3e}"),
            ("largest affinity among present species (RT)", f"{eq['max_affinity_RT']:.3e}"),
            ("element-potential fit residual (RT)", f"{eq['potential_residual_RT']:.3e}"),
            ("unique", f"{eq['unique']} ({eq['unique_basis']})"),
            ("present phases' conserved-quantity vectors, smallest/largest singular value",
             "n/a" if eq["phase_amount_rcond"] is None else f"{eq['phase_amount_rcond']:.3e}"),
            ("ln K additivity error", "n/a" if eq["lnK_additivity_error"] is None else f"{eq['lnK_additivity_error']:.3e}"),
            ("Jacobian smallest/largest singular value", "n/a" if eq["jacobian_rcond"] is None else f"{eq['jacobian_rcond']:.3e}")]
            + [(f"driving force to form absent {k} (RT)", "cannot form (needs an element the feed lacks)" if v is None
                else f"{v:+.4g}") for k, v in eq["absent_phase_driving_force_RT"].items()]))
        for p in eq["phases"]:
            if p["moles"] > 0 and len(p["mole_fractions"]) > 1:
                eblocks.append(Block("svg", text=svg.composition_bars(p["name"], list(p["mole_fractions"].items()))))
    sec.append(("Equilibrium and certificate", eblocks))
    sec.append(("Claims", [_table(("claim", "claimed", "found", "result"),
                                  [(c["claim"], show_value(c["claimed"]), show_value(c["found"]),
                                    {True: "held", False: "refuted", None: "not checked"}[c["held"]]) for c in doc["claims"]])
                           if doc["claims"] else _para("The case makes no claims.")]))
    assumed = []
    if eq and eq.get("assumed_densities"):
        assumed.append(_table(("species", "density kg/m3", "source"),
                              [(d["species"], d["density_kg_m3"], d["source"]) for d in eq["assumed_densities"]]))
    assumed.append(_table(("tolerance", "value"), sorted(doc["tolerances"].items())))
    assumed.append(_table(("species", "thermo data range, K"),
                          [(s["label"], f"{s['thermo_range_K'][0]:g} - {s['thermo_range_K'][1]:g}") for s in sysd["species"]]))
    sec.append(("Assumptions", assumed))
    sec.append(("Findings", [_table(("severity", "topic", "message"),
                                    [(f["severity"], f["topic"], f["message"]) for f in doc["findings"]])
                             if doc["findings"] else _para("No findings.")]))
    sec.append(("Cautions", [_list(doc["cautions"])]))
    return doc, sec
