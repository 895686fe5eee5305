"""Compact human-readable audit for the terminal."""
from __future__ import annotations

import textwrap

from ..audit import AuditResult, show_value
from .document import CAUTIONS

WIDTH = 100


def _wrap(text: str, indent: str = "  ") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ") or [indent]


def audit_text(r: AuditResult, explain: bool = False) -> str:
    pr, sp, a = r.phase_rule, r.specification, r.reactions
    out = [f"{r.case.title}  ({r.case.path})", f"Verdict: {r.verdict.upper()}", ""]
    out.append("Phase rule over the phases assumed to coexist:")
    rows = [("N  phase-species", pr.n_species), ("pi phases", pr.n_phases),
            ("m  independent reactions", pr.independent_reactions),
            ("r  restrictions (feed + electroneutrality, declared)", f"{pr.restrictions} ({pr.r_feed} + {pr.r_declared})"),
            ("C  components = N - m - r", pr.components), ("F  degrees of freedom = 2 + C - pi", pr.degrees_of_freedom)]
    w = max(len(x) for x, _ in rows)
    out += [f"  {name:<{w}}  {val}" for name, val in rows]
    if explain:
        out += ["", "How the count was made:"] + [f"  {line}" for line in pr.explanation()]
    out += ["", f"Reactions: rank {a.rank} of the {len(a.reactions)} listed over all phases; "
            + ("complete" if a.complete else "incomplete" if not a.unbalanced else "unbalanced reactions present")
            + (f"; {pr.independent_reactions} among the species of the coexisting phases (m)"
               if pr.independent_reactions != a.rank else "")]
    shown = pr.reactions_present[:12]
    if pr.reactions_present:
        out.append("Independent reactions among the species of the coexisting phases:")
    for x in shown:
        out.append(f"  {x.equation}")
    if len(pr.reactions_present) > len(shown):
        out.append(f"  ... and {len(pr.reactions_present) - len(shown)} more (see --json or --report)")
    out += ["", f"Specifications: {len(sp.intensive)} intensive ({', '.join(sp.intensive) or 'none'}), "
            f"{len(sp.extensive)} extensive ({', '.join(sp.extensive) or 'none'})"]
    if explain:
        out += ["Verdict rules as applied:"] + [l for reason in sp.reasons for l in _wrap(reason)]
    if sp.free:
        names = ", ".join(sp.free[:8]) + (f" and {len(sp.free) - 8} more" if len(sp.free) > 8 else "")
        if sp.status == "well-posed":
            out += _wrap(f"left free by the intensive specifications and fixed by the extensive one(s): {names}")
        else:
            out += _wrap(f"free (structurally undetermined) variables: {names}")
    if sp.conflicting:
        out += _wrap("conflicting: " + "; ".join(sp.conflicting))
    if sp.suggestion:
        out += _wrap("suggested fix: " + sp.suggestion)
    if r.equilibrium is not None:
        out += [""] + [l for line in r.equilibrium.summary_lines() for l in _wrap(line, "")]
    if r.claims:
        out += ["", "Claims:"]
        for c in r.claims:
            state = "held" if c.held else "REFUTED" if c.held is False else "not checked"
            out.append(f"  {c.name}: claimed {show_value(c.claimed)}, found {show_value(c.found)} -> {state}")
    if r.findings:
        out += ["", "Findings:"]
        for f in r.findings:
            out += _wrap(f"[{f.severity}] {f.topic}: {f.message}")
    out += ["", "Cautions:"] + [l for c in CAUTIONS for l in _wrap(c)]
    return "\n".join(out) + "\n"


def summary_line(r: AuditResult) -> str:
    pr = r.phase_rule
    return f"{r.verdict:<16} F={pr.degrees_of_freedom:<3} m={pr.independent_reactions:<3} {r.case.path}"
