"""Text of the stages' results for people: the phase-rule count term by term, the
equilibrium check in a few lines.  Booleans are said as yes/no, never as Python's
True/False/None."""
from __future__ import annotations

import math
from typing import TYPE_CHECKING

from ..phase_rule import PhaseRuleCount
from ..sentences import yes_no

if TYPE_CHECKING:   # the stage is imported only where a case is confirmed (cold start)
    from ..equilibrium import EquilibriumCheck


def kilojoules(joules: float) -> str:
    """J as kJ to 6 significant digits, rounding-off noise below a micro-kJ shown as 0."""
    return f"{round(joules / 1000, 6) + 0.0:.6g}"


def nonsingular_words(test: str, rcond: float | None) -> str:
    """Whether the equations are nonsingular at the solution, and which test decided."""
    if rcond is None:
        return f"yes ({test})"
    from .. import settings
    return f"{yes_no(rcond >= settings.JACOBIAN_RANK_TOLERANCE)} ({test}; smallest/largest singular value {rcond:.3e})"


def _sci(x: float | None) -> str:
    return "n/a" if x is None else f"{x:.2e}"


def phase_rule_explanation(pr: PhaseRuleCount) -> list[str]:
    """The count, term by term, in words a reviewer can follow."""
    lines = [
        f"N = {pr.n_present}: phase-species in the phases assumed to coexist ({', '.join(pr.coexisting)})"
        + (f", leaving out {', '.join(pr.excluded)} (none can form from this feed)"
           if pr.excluded else ""),
        f"pi = {pr.n_phases}: phases assumed to coexist",
        f"m = {pr.independent_reactions}: independent reactions among those species (rank of the reactions "
        "that involve only present species, combinations included)",
        f"r = {pr.restrictions}: independent intensive restrictions "
        f"({pr.r_feed} from the feed and electroneutrality, {pr.r_declared} declared)",
    ]
    for rel in pr.relations:
        lines.append(f"    {rel.origin}: {rel.text}")
    for rel in pr.double_counted:
        lines.append(f"    declared but already {rel.origin} (counted once): {rel.text}")
    lines.append(f"C = N - m - r = {pr.n_present} - {pr.independent_reactions} - {pr.restrictions} = {pr.components} components")
    lines.append(f"F = 2 + C - pi = 2 + {pr.components} - {pr.n_phases} = {pr.degrees_of_freedom} "
                 "intensive variables may be fixed independently")
    if pr.has_feed:
        lines.append("Duhem: with the feed known, exactly 2 independent variables (intensive or extensive) fix the state")
    return lines


def equilibrium_summary_lines(eq: EquilibriumCheck) -> list[str]:
    """The equilibrium check in a few lines of text."""
    if not eq.solved:
        msgs = [f.message for f in eq.findings if f.topic == "equilibrium"][:3]
        return msgs or ["Gibbs minimisation: not solved"]
    out = [f"Gibbs minimisation ({eq.solver}) at T = {eq.temperature_K:.2f} K, P = {eq.pressure_Pa:.6g} Pa: "
           + ("CONFIRMED" if eq.confirmed else "NOT CONFIRMED")]
    for p in eq.phases:
        if p.moles <= 0:
            continue
        major = sorted(p.mole_fractions, key=lambda kv: -kv[1])[:8]
        out.append(f"  {p.name}: {p.moles:.6g} mol; " + ", ".join(f"{k} {v:.4g}" for k, v in major))
    aside = dict(eq.set_aside)
    absent = ", ".join(f"{n} {d:+.3g}" if math.isfinite(d) else f"{n} cannot form at this T (outside its thermo data)"
                       if n in aside else f"{n} cannot form (needs an element the feed lacks)"
                       for n, d in eq.absent_phase_driving_force)
    out.append(f"  certificate: balance error {eq.element_balance_error:.2e}, max affinity "
               f"{_sci(eq.max_affinity_RT)} RT, potential residual {_sci(eq.potential_residual_RT)} RT, "
               f"unique {yes_no(eq.unique)} ({eq.unique_basis})")
    if absent:
        out.append(f"  driving force to form absent phases (RT, must be >= 0): {absent}")
    if eq.jacobian_rcond is not None:
        out.append(f"  Jacobian smallest/largest singular value: {eq.jacobian_rcond:.3e}")
    if len(eq.attempts) > 1:
        out.append(f"  solve route: {eq.route or 'none certified'}, after " + "; ".join(
            f"{r} {o}" for r, o in eq.attempts if o != "certified"))
    return out


def real_gas_line(rg: dict) -> str:
    """The ideal-gas check (the JSON ``real_gas`` block) in one line."""
    where = f"{rg['pressure_Pa'] / 1e5:.4g} bar, {rg['temperature_K']:.2f} K"
    if rg["status"] != "checked":
        why = {"no-constants": "no gas species has critical constants",
               "no-gas-root": "the Peng-Robinson cubic has no gas root at this state",
               "not-converged": "the re-solve with fugacity coefficients did not settle"}.get(rg["status"], rg["status"])
        return f"ideal-gas check ({where}): not completed: {why}"
    shift = rg["largest_shift"] or {"species": "none", "change": 0.0}
    lnk = rg["largest_lnK_shift"] or {"equation": "none", "change": 0.0}
    ideal, real = rg["ideal_mole_fractions"].get(shift["species"]), rg["real_mole_fractions"].get(shift["species"])
    moved = (f"x({shift['species']}) {ideal:.4f} -> {real:.4f}" if ideal is not None
             else f"x({shift['species']}) {shift['change']:+.4f}")
    phis = ", ".join(f"{k} {v:.3f}" for k, v in list(rg["fugacity_coefficients"].items())[:3])
    verdict = "MATTERS" if rg["matters"] else "within tolerance"
    missing = f"; not checked (no critical constants): {', '.join(rg['missing_constants'])}" if rg["missing_constants"] else ""
    return (f"ideal-gas check ({rg['model'].split(' (')[0]}, {where}): {verdict}: {moved}, ln K {lnk['change']:+.3f}; "
            f"phi: {phis}{missing}")
