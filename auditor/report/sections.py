"""The content of a filed audit report, as sections of simple blocks.

Built from the JSON document (which defines the content), the case as entered and the
pictures; the Markdown and HTML renderers only lay these blocks out. Numbers shown to
people count from 1 (reaction 1 is the first in the case); the JSON keeps 0-based indices.
Each error finding is stated once, in the section it belongs to; the findings list refers
to it there.
"""
from __future__ import annotations

from ..audit import AuditResult, show_value
from ..exact import format_fraction
from ..verdicts import Verdict
from . import entered as entered_mod
from .blocks import Block, certificate, composition, incidence, yes_no
from .blocks import items_list as _list
from .blocks import paragraph as _para
from .blocks import table as _table
from .document import check_document
from .wording import remedy, tolerance_rows

# where a finding of each topic is stated in full (titles of SECTIONS, at the end)
TOPIC_SECTION = {"reactions": "Reactions", "phase-rule": "Phase rule", "specification": "Specification audit",
                 "equilibrium": "Equilibrium and certificate", "claims": "Claims", "data": "Assumptions",
                 "safety": "Cautions", "real-gas": "Equilibrium and certificate", "margins": "Margins"}


def _si(value: float, unit: str) -> str:
    text = f"{value:.10g}" if 1e-3 <= abs(value) < 1e9 else f"{value:.6e}"
    return f"{text} {unit}"


def _spec_si(key: str, case) -> str:
    """A specification's SI value, read from its record (``key`` is its path under ``specified``)."""
    for s in case.specified.specifications:
        if s.key_path == f"specified.{key}" and s.value_si is not None:
            return _si(s.value_si, s.unit)
    return "dimensionless, as written"


def _file_rows(doc: dict) -> list[tuple[str, str, str]]:
    """(role, path as given, SHA-256) of the case and every thermo or mechanism file read."""
    return [(i.get("role", ""), i["path"], i["sha256"] or "(could not be read)") for i in doc.get("inputs", [])]


def _errors_of(doc: dict, section: str) -> list[Block]:
    errs = [f["message"] for f in doc["findings"]
            if f["severity"] == "error" and TOPIC_SECTION.get(f["topic"], "Findings") == section]
    return [_para("Errors found here:"), _list(errs)] if errs else []


# Each section below is one function of (audit result, JSON document, case as entered) that
# returns its blocks; SECTIONS, after them, lists the sections in report order.

def _verdict(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    """One plain sentence, the fix, and where the errors are stated."""
    blocks = [_para(f"Verdict: {doc['verdict']}"), _para(f"Why: {doc['reason']}")]
    if doc["specification"]["suggestion"]:
        blocks.append(_para(f"Suggested fix: {doc['specification']['suggestion']}"))
    elif remedy(doc):
        blocks.append(_para(f"Suggested fix: {remedy(doc)}."))
    elif doc["verdict"] == Verdict.WELL_POSED:
        blocks.append(_para("No change to the specifications is needed."))
    if getattr(r, "margins", None) is not None:
        from .margins import nearest_words
        if nearest_words(r.margins):
            blocks.append(_para(nearest_words(r.margins)))
    where = sorted({TOPIC_SECTION.get(f["topic"], "Findings") for f in doc["findings"] if f["severity"] == "error"},
                   key=SECTION_TITLES.index)
    n_err = sum(f["severity"] == "error" for f in doc["findings"])
    if n_err:
        blocks.append(_para(f"{n_err} error{'s' if n_err > 1 else ''}, stated under: {', '.join(where)}."))
    n_warn = sum(f["severity"] == "warning" for f in doc["findings"])
    if n_warn:
        blocks.append(_para(f"{n_warn} warning{'s' if n_warn > 1 else ''} for the reviewer, listed under "
                            "Findings."))
    return blocks


def _case_as_entered(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    case = r.case
    blocks = [_table(("item", "as entered"),
                     [("title", case.title), ("thermo source", e.source),
                      ("reactions", case.reactions if isinstance(case.reactions, str)
                       else f"a list of {len(case.reactions)} (numbered from 1 below)"),
                      ("phases assumed to coexist", ", ".join(case.coexisting) if case.coexisting
                       else "all listed (no 'coexisting' given)")], "The case"),
              _table(("phase", "species as listed"),
                     [(p, ", ".join(s) if s is not None else "all of the source's species") for p, s in case.system.phases],
                     "Phases and species")]
    if isinstance(case.reactions, tuple):
        blocks.append(_table(("reaction", "equation as written"),
                             [(i + 1, eq) for i, (eq, _) in enumerate(case.reactions)], "Reactions as listed"))
    if case.feed is not None:
        blocks.append(_feed_table(r, e))
    else:
        blocks.append(_para("No feed: an intensive problem (no Gibbs minimisation)."))
    blocks.append(_table(("specification", "as written", "SI value"),
                         [(k, text, _spec_si(k, case)) for k, text in e.specified] or [("(none)", "", "")],
                         "Specifications"))
    blocks.append(_para("Restrictions declared: " + ("; ".join(e.restrictions) if e.restrictions else "none")))
    blocks.append(_para("Claims made: " + ("; ".join(f"{k} = {v}" for k, v in e.claims) if e.claims else "none")))
    if e.text:
        blocks.append(Block("file", text=e.text, caption=f"Case file {e.path} (SHA-256 {e.sha256})"))
    return blocks


def _feed_table(r: AuditResult, e: entered_mod.Entered) -> Block:
    """The feed as written beside its amount in mol; a mass is converted with the species'
    molar mass, shown in its own column."""
    from ..system import feed_moles
    mol = {}
    for name, a in feed_moles(r.case, r.system) or ():
        mol[name] = mol.get(name, 0.0) + float(a)
    mass = r.case.feed_mass
    units = " and ".join(e.feed_units) or "mol"
    headers = ["species", "amount as entered", "amount, mol (SI)"]
    if mass:
        headers.insert(2, "molar mass, g/mol")
    rows = []
    for name, text in e.feed:
        row = [name, text, f"{mol.get(name, 0.0):.10g}"]
        if mass:
            hit = r.system.find(name)
            row.insert(2, f"{r.system.species[hit[0]].molar_mass:.6g}" if name in mass and hit else "-")
        rows.append(row)
    return _table(headers, rows, f"Feed (entered in {units}; results are given in {e.amount_unit})")


def _provenance(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    versions = doc.get("versions", {})
    return [
        _table(("role", "path as given", "SHA-256"), _file_rows(doc), "Files read"),
        _table(("component", "version"), [("auditor (this tool)", doc["tool"]["version"]),
                                          ("cantera", versions.get("cantera") or "not installed")]
               + [(k, v) for k, v in sorted(versions.items()) if k not in ("auditor", "cantera")], "Software"),
        _para(f"Generated {doc.get('generated', '')} by auditor {doc['tool']['version']}.")]


def _system(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    sysd = doc["system"]
    labels = [s["label"] for s in sysd["species"]]
    return [
        _table(("phase", "model", "phase-species"),
               [(p["name"], p["model"], ", ".join(p["species"])) for p in sysd["phases"]], "Phases"),
        _table(["", *labels], [[el, *row] for el, row in zip(sysd["elements"], sysd["formula_matrix"])],
               "Formula matrix (rows: elements and charge; columns: phase-species)")]


def _reactions(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    """The listed reactions numbered from 1, with their dependences, imbalances and repeats."""
    rd = doc["reactions"]
    eqs = [x.equation for x in r.reactions.reactions]
    state = "complete" if rd["complete"] else ("not defined (unbalanced reactions)" if rd["unbalanced"]
                                               else "incomplete")
    blocks = _errors_of(doc, "Reactions") + [
        _para(f"Rank {rd['rank']} of {len(eqs)} listed (formula-matrix rank {rd['formula_rank']}, at most "
              f"{rd['max_independent']} independent); the list is {state}.")]
    if eqs:
        blocks.append(_table(("reaction", "equation", "role"),
                             [(i + 1, q, "independent" if i in set(r.reactions.independent) else "dependent")
                              for i, q in enumerate(eqs)], "Reactions (numbered from 1)"))
    an = r.reactions                        # indices from the analysis itself (equations may repeat)
    repeats = {i for g in an.duplicates for i, _ in g.members}
    dependent = [d for d in an.dependent if d.index not in repeats]   # repeats: in their own table
    if dependent:
        blocks.append(_table(("reaction", "exact combination of independent reactions"),
                             [(d.index + 1, " + ".join(f"({format_fraction(c)}) x reaction {j + 1}"
                                                       for j, c in d.combination)) for d in dependent],
                             "Dependent reactions"))
    if an.unbalanced:
        blocks.append(_table(("reaction", "imbalance, products minus reactants"),
                             [(u.index + 1, ", ".join(f"{el} {format_fraction(v)}" for el, v in u.imbalance))
                              for u in an.unbalanced], "Unbalanced reactions"))
    if an.duplicates:
        blocks.append(_table(("reaction", "repeated by"),
                             [(g.representative + 1, "; ".join(f"reaction {i + 1} (x {format_fraction(f)})"
                                                               for i, f in g.members)) for g in an.duplicates],
                             "Duplicates (same net change)"))
    if rd["frozen_directions"]:
        blocks += [_para("Frozen directions (reactions the list cannot produce):"), _list(rd["frozen_directions"])]
    if not rd["complete"] or isinstance(r.case.reactions, tuple):
        blocks += [_para("A complete independent set derived from the species alone: "
                         + ("; ".join(rd["derived_complete_set"]) or "none"))]
    blocks.append(_para("Conserved quantities: " + ("; ".join(rd["conserved_quantities"]) or "none")))
    return blocks + incidence(r)


def _relation_rows(r: AuditResult) -> list[tuple[str, str]]:
    """(relation, its meaning in words) of each restriction counted in r; feed-born ones in words."""
    words = dict(r.phase_rule.feed_words)
    rel_rows = []
    feed_rows = {}
    for rel in r.phase_rule.relations:
        if rel.origin == "feed":
            feed_rows.setdefault(rel.phase, []).append(rel)
    for rel in r.phase_rule.relations:
        meaning = {"feed": "set by the feed", "electroneutrality": "the phase is electrically neutral",
                   "declared": "declared in the case"}.get(rel.origin, rel.origin)
        if rel.origin == "feed" and rel.phase in words:
            group = feed_rows[rel.phase]
            if len(group) == 1:
                meaning = f"the feed fixes {words[rel.phase]} in the {rel.phase}"
            elif rel is group[0]:
                meaning = (f"these {len(group)} relations together say: the feed fixes {words[rel.phase]} "
                           f"in the {rel.phase}")
            else:
                meaning = "(part of the same statement)"
        rel_rows.append((rel.text, meaning))
    return rel_rows


def _phase_rule(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    """The phase-rule count, with feed-born relations in words."""
    pr = doc["phase_rule"]
    rel_rows = _relation_rows(r)
    how = {}
    for line in pr["explanation"]:
        if line.startswith("    "):
            continue                                  # the relations: in their own table below
        symbol = line.split(" ", 1)[0]
        how[symbol] = line.split(": ", 1)[1] if symbol in ("N", "pi", "m", "r") else line
    blocks = _errors_of(doc, "Phase rule") + [
        _table(("term", "value", "how it is counted"),
               [("N phase-species", pr["species"], how.get("N", "")), ("pi phases", pr["phases"], how.get("pi", "")),
                ("m independent reactions", pr["independent_reactions"], how.get("m", "")),
                ("r restrictions", pr["restrictions"], how.get("r", "")),
                ("C components", pr["components"], how.get("C", "")),
                ("F degrees of freedom", pr["degrees_of_freedom"], how.get("F", ""))], "Phase-rule count")]
    if rel_rows:
        blocks.append(_table(("relation on mole fractions", "in words"), rel_rows, "Restrictions counted in r"))
    if "Duhem:" in how:
        blocks.append(_para(how["Duhem:"]))
    if r.phase_rule.reactions_present and len(r.phase_rule.reactions_present) != len(r.reactions.reactions):
        blocks.append(_para("Independent reactions among the species of the coexisting phases (m): "
                            + "; ".join(x.equation for x in r.phase_rule.reactions_present)))
    return blocks


def _specification(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    sp = doc["specification"]
    return _errors_of(doc, "Specification audit") + [
        _table(("kind", "count", "specifications"), [("intensive", sp["intensive"], "; ".join(sp["intensive_names"]) or "-"),
                                                     ("extensive", sp["extensive"], "; ".join(sp["extensive_names"]) or "-")],
               "Specifications counted"),
        _para("Verdict rules as applied:"), _list(sp["rules_applied"]),
        _para(f"Free variables: {', '.join(sp['free']) or 'none'}"),
        _para(f"Conflicting specifications: {'; '.join(sp['conflicting']) or 'none'}"),
        _para(f"Suggested fix: {_spec_fix(sp, doc)}")]


def _spec_fix(sp: dict, doc: dict) -> str:
    """The specification's own fix; when the specifications are complete but the verdict is not
    well-posed, the remedy for what the equilibrium found."""
    if sp["suggestion"]:
        return sp["suggestion"]
    fix = remedy(doc)
    return f"none to the specifications (they are complete); for the verdict: {fix}" if fix else "none needed"


def _equilibrium(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    eq = doc["equilibrium"]
    blocks = _errors_of(doc, "Equilibrium and certificate")
    if eq is None and r.case.feed is not None:
        blocks.append(_para("The Gibbs minimisation was not run (counting only, --no-confirm)."))
    elif eq is None:
        blocks.append(_para("No Gibbs minimisation: the case gives no feed (an intensive problem)."))
    elif not eq["solved"]:
        blocks.append(_para("The Gibbs minimisation was not run or did not solve (see the errors above or the findings)."))
    else:
        T, P = eq["temperature_K"], eq["pressure_Pa"]
        blocks.append(_para(f"Solver: {eq['solver']}; T = {T:.2f} K ({T - 273.15:.2f} degC); P = {P / 1e5:.6g} bar; "
                            f"confirmed: {yes_no(eq['confirmed'])}."))
        blocks.append(composition(eq, e, doc["phase_rule"]["coexisting"]))
        from .bases import basis_blocks
        blocks += basis_blocks(doc)             # flow basis; dry, ppm(v) and mass tables
        blocks.append(certificate(eq, doc))
        if doc.get("real_gas"):
            from .text import real_gas_line
            blocks.append(_para(real_gas_line(doc["real_gas"]) + "."))
    return blocks


def _margins(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    from .margins import margin_blocks
    return margin_blocks(r, doc)


def _claims(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    return _errors_of(doc, "Claims") + [
        _table(("claim", "claimed", "found", "result"),
               [(c["claim"], show_value(c["claimed"]), show_value(c["found"]),
                 {True: "held", False: "refuted", None: "not checked"}[c["held"]]) for c in doc["claims"]], "Claims")
        if doc["claims"] else _para("The case makes no claims.")]


def _assumptions(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    eq = doc["equilibrium"]
    blocks = []
    if eq and eq.get("assumed_densities"):
        blocks.append(_table(("species", "density kg/m3", "source"),
                             [(d["species"], d["density_kg_m3"], d["source"]) for d in eq["assumed_densities"]],
                             "Densities assumed"))
    if doc.get("real_gas") and doc["real_gas"]["constants_sources"]:
        blocks.append(_table(("species", "source of critical constants"), sorted(doc["real_gas"]["constants_sources"].items()),
                             f"Critical constants for the ideal-gas check ({doc['real_gas']['model']})"))
    blocks.append(_table(("tolerance", "value", "unit"), tolerance_rows(doc["tolerances"]), "Named tolerances"))
    blocks.append(_table(("species", "thermo data range, K"),
                         [(s["label"], f"{s['thermo_range_K'][0]:g} - {s['thermo_range_K'][1]:g}")
                          for s in doc["system"]["species"]],
                         "Thermo data ranges"))
    return blocks


def _findings(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    rows = []
    for f in doc["findings"]:
        if f["severity"] == "error":
            rows.append((f["severity"], f["topic"], f"stated under {TOPIC_SECTION.get(f['topic'], 'Findings')}"))
        else:
            rows.append((f["severity"], f["topic"], f["message"]))
    return [_table(("severity", "topic", "message"), rows, "Findings") if rows else _para("No findings.")]


def _cautions(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    return [_list(doc["cautions"])]


def _signoff(r: AuditResult, doc: dict, e: entered_mod.Entered) -> list[Block]:
    return [Block("signoff", headers=("role", "name", "signature", "date"),
                  rows=(("prepared by", "", "", ""), ("checked by", "", "", ""), ("approved by", "", "", "")),
                  text="revision", caption="Sign-off")]


# the report's sections, in order: title and the function that builds its blocks
SECTIONS = (("Verdict", _verdict), ("Case as entered", _case_as_entered), ("Provenance", _provenance),
            ("System", _system), ("Reactions", _reactions), ("Phase rule", _phase_rule),
            ("Specification audit", _specification), ("Equilibrium and certificate", _equilibrium),
            ("Margins", _margins), ("Claims", _claims), ("Assumptions", _assumptions), ("Findings", _findings),
            ("Cautions", _cautions), ("Sign-off", _signoff))
SECTION_TITLES = tuple(title for title, _ in SECTIONS)


def build(r: AuditResult, doc: dict | None = None) -> tuple[dict, list[tuple[str, list[Block]]]]:
    """The JSON document and the report's sections, each a title and its blocks."""
    doc = doc or check_document(r, with_context=True)
    e = entered_mod.read(r.case)
    # the Margins section only when they were computed (a 'margins:' key or --margins)
    return doc, [(title, section(r, doc, e)) for title, section in SECTIONS
                 if title != "Margins" or getattr(r, "margins", None) is not None]
