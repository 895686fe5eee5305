"""Text of the stages' results for people: the phase-rule count term by term, the
non-singularity test, composition entries, the ideal-gas check.  Booleans are said as
yes/no, never as Python's True/False/None."""
from __future__ import annotations

from ..phase_rule import PhaseRuleCount
from ..sentences import yes_no


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


# the terminal lists every species at or above this mole fraction, and says how many are below it
SHOWN_MOLE_FRACTION = 1e-6     # 1 ppm (mol/mol)


def composition_entries(mole_fractions) -> tuple[list[str], int]:
    """("N2 0.5379", ...) for the species at or above SHOWN_MOLE_FRACTION, largest first,
    and how many species were left out below it."""
    ordered = sorted(mole_fractions, key=lambda kv: -kv[1])
    shown = [f"{k} {v:.4g}" for k, v in ordered if v >= SHOWN_MOLE_FRACTION]
    return shown, len(ordered) - len(shown)


def left_out_words(n: int) -> str:
    """What the composition line says of the species below the threshold ("" when none)."""
    if not n:
        return ""
    return f"; {n} species below {SHOWN_MOLE_FRACTION * 1e6:g} ppm not shown (see --json or --report)"


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
