"""Compact human-readable audit for the terminal."""
from __future__ import annotations

import textwrap

from ..audit import AuditResult, show_value
from ..verdicts import Verdict
from .text import composition_entries, kilojoules, left_out_words, nonsingular_words, phase_rule_explanation
from .document import case_cautions

WIDTH = 100


def _wrap(text: str, indent: str = "  ") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ") or [indent]


def audit_text(r: AuditResult, explain: bool = False) -> str:
    pr, sp, a = r.phase_rule, r.specification, r.reactions
    out = [f"{r.case.title}  ({r.case.path})", f"Verdict: {r.verdict.upper()}"]
    out += _wrap(f"Why: {r.reason}", "") if r.reason else []
    out.append("")
    out.append("Phase rule over the phases assumed to coexist:")
    rows = [("N  phase-species", pr.n_present), ("pi phases", pr.n_phases),
            ("m  independent reactions", pr.independent_reactions),
            ("r  restrictions (feed + electroneutrality, declared)", f"{pr.restrictions} ({pr.r_feed} + {pr.r_declared})"),
            ("C  components = N - m - r", pr.components), ("F  degrees of freedom = 2 + C - pi", pr.degrees_of_freedom)]
    w = max(len(x) for x, _ in rows)
    out += [f"  {name:<{w}}  {val}" for name, val in rows]
    if explain:
        out += ["", "How the count was made:"] + [f"  {line}" for line in phase_rule_explanation(pr)]
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
        if sp.status == Verdict.WELL_POSED:
            out += _wrap(f"left free by the intensive specifications and fixed by the extensive one(s): {names}")
        else:
            out += _wrap(f"free (structurally undetermined) variables: {names}")
    if sp.conflicting:
        out += _wrap("conflicting: " + "; ".join(sp.conflicting))
    if sp.suggestion:
        out += _wrap("suggested fix: " + sp.suggestion)
    if r.equilibrium is not None:
        out += [""] + [l for line in equilibrium_lines(r) for l in _wrap(line, "")]
    if r.claims:
        out += ["", "Claims:"]
        for c in r.claims:
            state = "held" if c.held else "REFUTED" if c.held is False else "not checked"
            out.append(f"  {c.name}: claimed {show_value(c.claimed)}, found {show_value(c.found)} -> {state}")
    if r.findings:
        out += ["", "Findings:"]
        for f in r.findings:
            out += _wrap(f"[{f.severity}] {f.topic}: {f.message}")
    out += ["", "Cautions:"] + [l for c in case_cautions(r) for l in _wrap(c)]
    return "\n".join(out) + "\n"


def _fmt(x, why: str = "not computed") -> str:
    return f"n/a ({why})" if x is None else f"{x:.2e}"


def _entry_lines(head: str, entries: list[str], tail: str) -> list[str]:
    """``head`` then the entries, wrapped to WIDTH between entries (a name never parted from its
    value), then ``tail``."""
    lines, line = [], head
    for i, item in enumerate(entries):
        item += "," if i < len(entries) - 1 else ""
        if len(line) + len(item) + 1 > WIDTH and line.strip():
            lines.append(line.rstrip())
            line = "    "
        line += ("" if line.endswith((": ", "    ")) else " ") + item
    lines.append(line.rstrip())
    return lines + [l for l in _wrap(tail.lstrip("; ").capitalize(), "    ")] if tail else lines


def heat_words(heat_J: float, feed_T: float, balance: str, reaction_J: float | None) -> str:
    """The heat from the feed to the state, and the heat of reaction at the state, in kJ."""
    change = "internal-energy change, rigid vessel" if balance == "internal energy" else "enthalpy change at fixed pressure"
    text = f"heat added from the feed at {feed_T:.2f} K to this state: {kilojoules(heat_J)} kJ ({change})"
    if reaction_J is not None:
        text += f"; heat of reaction at the state: {kilojoules(reaction_J)} kJ"
    return text


def equilibrium_lines(r: AuditResult) -> list[str]:
    """The minimisation in words: phases with amounts in the feed's unit, and the certificate."""
    import math
    from .entered import case_amount_unit
    eq = r.equilibrium
    if not eq.solved:
        msgs = [f.message for f in eq.findings if f.topic == "equilibrium"][:3]
        return msgs or ["Gibbs minimisation: not solved"]
    amount_unit, mol_per_unit = case_amount_unit(r.case)
    yes = {True: "yes", False: "no", None: "not decided"}
    out = [f"Gibbs minimisation ({eq.solver}) at T = {eq.temperature_K:.2f} K ({eq.temperature_K - 273.15:.2f} degC), "
           f"P = {eq.pressure_Pa / 1e5:.6g} bar: " + ("CONFIRMED" if eq.confirmed else "NOT CONFIRMED")]
    if getattr(r.case, "rate_per", None) is not None:     # a feed of rates: say what the amounts are
        from .bases import flow_document
        out += _wrap("flow basis: " + flow_document(r.case)["statement"])
    for p in eq.phases:
        if p.moles <= 0:
            continue
        shown, left_out = composition_entries(p.mole_fractions)
        out += _entry_lines(f"  {p.name}: {p.moles / mol_per_unit:.6g} {amount_unit}; x: ", shown,
                            left_out_words(left_out))
    if eq.heat_J is not None:
        out.append("  " + heat_words(eq.heat_J, eq.heat_feed_temperature_K, eq.heat_balance, eq.heat_of_reaction_J))
    for equation, dt, t2, lnk, lnq in eq.approach:
        out.append(f"  approach to equilibrium: {equation} held {dt:g} K short: ln Q = "
                   + (f"{lnq:.6g}" if lnq is not None else "not defined") + f", ln K({t2:.2f} K) = {lnk:.6g}")
    for name, d, frac in eq.incipient:
        out.append(f"  incipient phase {name}: present in zero amount (driving force to form {d:+.2e} RT, "
                   f"fraction {frac:.2e}; both must be zero)")
    unique = f"{yes[eq.unique]} ({eq.unique_basis})" if eq.unique_basis else yes[eq.unique]
    out.append(f"  certificate: converged {yes[eq.converged]}; unique {unique}; balance error "
               f"{_fmt(eq.element_balance_error)}; largest affinity {_fmt(eq.max_affinity_RT)} RT; potential residual "
               f"{_fmt(eq.potential_residual_RT)} RT")
    if len(eq.attempts) > 1:      # a fallback route was needed: say which, and what the earlier ones gave
        out.append(f"  solve route: {eq.route or 'none certified'}, after " + "; ".join(
            f"{route} {outcome}" for route, outcome in eq.attempts if outcome != "certified"))
    aside = dict(eq.set_aside)
    absent = ", ".join(f"{n} {d:+.3g}" if math.isfinite(d) else f"{n} cannot form at this T (outside its thermo data)"
                       if n in aside else f"{n} cannot form (needs an element the feed lacks)"
                       for n, d in eq.absent_phase_driving_force)
    if absent:
        out.append(f"  driving force to form absent phases (RT, must be positive): {absent}")
    if eq.nonsingularity_test:
        out.append(f"  equations nonsingular at the solution: {nonsingular_words(eq.nonsingularity_test, eq.jacobian_rcond)}")
    if getattr(r, "real_gas", None) is not None:
        from .document import real_gas_document
        from .text import real_gas_line
        out.append("  " + real_gas_line(real_gas_document(r.real_gas)))
    if getattr(r, "margins", None) is not None:
        from .margins import margin_lines
        out += ["  " + line for line in margin_lines(r.margins)]
    return out


def why(r: AuditResult) -> str:
    """Why, in one line: the verdict's reason for a problem; for a well-posed case its first
    warning when it has one, else the reason."""
    if r.verdict == Verdict.WELL_POSED:
        warnings_ = [f for f in r.findings if f.severity == "warning"]
        if warnings_:
            return f"warning: {warnings_[0].message.split('; ')[0]}"
    return r.reason


def summary_line(r: AuditResult) -> str:
    pr = r.phase_rule
    line = f"{r.verdict:<16} F={pr.degrees_of_freedom:<3} m={pr.independent_reactions:<3} {r.case.path}"
    reason = " ".join(why(r).split())
    return f"{line}: {reason}" if reason else line
