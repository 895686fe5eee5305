"""Every sentence a verdict is given in, written once from the records the stages return.

The verdict rules of the specification audit (its ``reasons`` and ``suggestion``), the
verdict's reason in one sentence, and the shared forms: a signed linear combination, an
element imbalance, a list joined with "and", a value as text, yes/no.  Nothing here decides
a verdict: ``structure`` counts, ``audit`` decides, this module words.
"""
from __future__ import annotations

from fractions import Fraction
from typing import Iterable

from .exact import format_fraction
from .verdicts import Verdict


def yes_no(flag: bool | None) -> str:
    """yes, no, or "not decided" for a check that could not be made."""
    return "not decided" if flag is None else ("yes" if flag else "no")


def signed_terms(terms: Iterable[tuple[Fraction | int, str]], times: str = " ", unit_coefficient: bool = False,
                 limit: int | None = None, empty: str = "") -> str:
    """Every signed linear combination the tool writes: ``u - 2 v + 1/2 w`` from (coefficient,
    name) pairs, exact, a leading plus left out.  ``times`` goes between a coefficient and its
    name (" x " for reactions); a coefficient of 1 is written only with ``unit_coefficient``;
    past ``limit`` terms the rest are counted, not written; ``empty`` stands for no terms."""
    parts = []
    for c, name in terms:
        mag = abs(Fraction(c))
        coef = f"{format_fraction(mag)}{times}" if mag != 1 or unit_coefficient else ""
        parts.append(f"{'-' if c < 0 else '+'} {coef}{name}")
    if limit is not None and len(parts) > limit:   # a mechanism-sized relation: its start and its length
        parts = parts[:limit] + [f"+ ... ({len(parts) - limit} more terms)"]
    text = " ".join(parts)
    return text[2:] if text.startswith("+ ") else (text or empty)


def imbalance_text(imbalance) -> str:
    """``O -1, H +2``: products minus reactants per element, signed."""
    return ", ".join(f"{e} {'+' if v > 0 else ''}{format_fraction(v)}" for e, v in imbalance)


def one_of(names) -> str:
    names = list(names)
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def verdict_reason(verdict, system, analysis, count, spec, equilibrium, checks, case=None,
                   impossible=(), physical=None) -> str:
    """Why the verdict is what it is, in one sentence an engineer would use.  ``physical`` is
    the verdict before the case's claims were weighed: when a refuted claim alone makes the
    case inconsistent, the physical finding leads and the refuted claim follows it."""
    eqs = [x.equation for x in analysis.reactions]
    if verdict == Verdict.INCONSISTENT:
        if analysis.unbalanced:
            u = analysis.unbalanced[0]
            imb = imbalance_text(u.imbalance)
            more = f" (and {len(analysis.unbalanced) - 1} more)" if len(analysis.unbalanced) > 1 else ""
            return f"reaction {u.index + 1} '{eqs[u.index]}' does not balance ({imb}){more}: correct the equation"
        if count.empty_phases:
            return (f"{one_of(count.empty_phases)} cannot form from this feed, yet the case assumes "
                    f"{'it' if len(count.empty_phases) == 1 else 'them'} present")
        if count.unholdable:
            rel, absent = count.unholdable[0]
            return (f"the declared restriction '{rel.text}' ({rel.key_path}) cannot hold: {', '.join(absent)} cannot "
                    "be present with this feed")
        if impossible:
            return (f"{one_of(p for p, _ in impossible)} cannot exist at T = {case.specified.temperature_K:.2f} K "
                    f"({'; '.join(why for _, why in impossible)}), yet the case assumes "
                    f"{'it' if len(impossible) == 1 else 'them'} present: not a well-posed case")
        if count.degrees_of_freedom < 0:
            return (f"the phases assumed to coexist ({', '.join(count.coexisting)}) cannot coexist: the phase rule "
                    f"gives F = {count.degrees_of_freedom}")
        bad = [c for c in checks if c.held is False]
        if bad:
            c = bad[0]
            claim = f"the case claims {c.name} = {show_value(c.claimed)}, but the audit finds {show_value(c.found)}"
            if physical is not None and physical not in (Verdict.WELL_POSED, Verdict.INCONSISTENT):
                lead = verdict_reason(physical, system, analysis, count, spec, equilibrium, (), case, impossible)
                return f"{lead}; and {claim}"
            return claim
    if verdict == Verdict.OVER_SPECIFIED:
        names = spec.symbols(spec.conflicting or spec.intensive + spec.extensive)
        n_intensive, n_all = len(spec.intensive), len(spec.intensive) + len(spec.extensive)
        excess = max(n_intensive - count.degrees_of_freedom, n_all - 2 if count.has_feed else 0, 1)
        what = "one" if excess == 1 else str(excess)
        why = (f"F = {count.degrees_of_freedom} allows {max(count.degrees_of_freedom, 0)} intensive"
               if n_intensive > count.degrees_of_freedom else "a known feed takes exactly two")
        return f"over-specified: drop {what} of {', '.join(names)} ({why})"
    if verdict == Verdict.UNDER_SPECIFIED:
        return "under-specified: " + (spec.suggestion or "fix more variables")
    if verdict == Verdict.NOT_CONFIRMED and equilibrium is not None:
        assumed = tuple(count.coexisting)
        found = tuple(equilibrium.phases_present)
        appeared = [p for p in found if p not in assumed]
        vanished = [p for p in assumed if p not in found]
        state = (f"the {'-'.join(assumed)}-only state assumed" if len(assumed) == 1
                 else f"the assumed {' + '.join(assumed)} state")
        if appeared:
            carbon = [p for p in appeared if all(set(system.species[k].formula) == {"C"}
                                                 for k in system.phase_indices(p))]
            if carbon:
                return f"{one_of(carbon)} forms at equilibrium: carbon deposition expected, not {state}"
            return f"{one_of(appeared)} form{'s' if len(appeared) == 1 else ''} at equilibrium, not {state}"
        if vanished:
            return f"{one_of(vanished)} {'is' if len(vanished) == 1 else 'are'} absent at equilibrium, not {state}"
        errors = [f.message for f in equilibrium.findings if f.severity == "error"]
        if not equilibrium.solved:
            return "the Gibbs minimisation did not solve: " + (errors[0] if errors else "see the equilibrium section")
        return "the Gibbs minimisation's certificate fails: " + (errors[0] if errors else "see the equilibrium section")
    given = spec.symbols(spec.intensive + spec.extensive)
    fixed = f"{one_of(given)} fix{'es' if len(given) == 1 else ''}" if given else "nothing fixes"
    if count.has_feed:
        text = f"{fixed} the state (Duhem's two for a known feed; F = {count.degrees_of_freedom})"
    else:
        text = f"{fixed} the intensive state (F = {count.degrees_of_freedom})"
    if equilibrium is not None and equilibrium.confirmed:
        text += f", and the Gibbs minimisation confirms the assumed phases ({', '.join(count.coexisting)})"
    return text


def show_value(v) -> str:
    """A claimed or found value as text: lists as [a, b], a missing value as 'not computed'."""
    if isinstance(v, (tuple, list)):
        return "[" + ", ".join(map(str, v)) + "]"
    return "not computed" if v is None else str(v)


# ------------------------------------------------------------------ the specification audit's rules

def specification_reasons(status: Verdict, has_feed: bool, n_int: int, n_ext: int, F: int) -> list[str]:
    """Each verdict rule (README, 'Verdicts') as applied to these counts (``status`` by the counts alone)."""
    if not has_feed:
        reasons = [f"no feed: an intensive problem, well posed when the intensive specifications ({n_int}) "
                   f"equal F = {F}"]
        if n_ext:
            reasons.append(f"extensive specifications ({n_ext}) cannot be used without a feed")
        return reasons
    reasons = [f"closed system with a known feed: intensive specifications ({n_int}) must not exceed "
               f"F = {F}, and intensive + extensive ({n_int} + {n_ext} = {n_int + n_ext}) must equal 2 (Duhem)"]
    if status == Verdict.OVER_SPECIFIED:
        if n_int > F:
            reasons.append(f"{n_int} intensive specifications exceed F = {F}")
        if n_int + n_ext > 2:
            reasons.append(f"{n_int + n_ext} specifications exceed Duhem's 2")
    elif status == Verdict.UNDER_SPECIFIED:
        reasons.append(f"{n_int + n_ext} specification{'s are' if n_int + n_ext != 1 else ' is'} fewer than Duhem's 2")
    else:
        reasons.append("the counts satisfy both rules and no specification conflicts in the structure")
    return reasons


def specification_suggestion(status: Verdict, has_feed: bool, n_int: int, n_ext: int, F: int,
                             conflicting: tuple[str, ...], free: tuple[str, ...]) -> str:
    """The fix for a case that is not well posed by the counts, in one sentence ('' when well posed)."""
    if status == Verdict.WELL_POSED:
        return ""
    if has_feed and status == Verdict.OVER_SPECIFIED:
        drop = max(n_int - F, n_int + n_ext - 2, 1)
        text = (f"drop {drop} of the conflicting specifications ({'; '.join(conflicting)})"
                + (f"; with F = {F} at most {max(F, 0)} of them may be intensive" if n_int > F else ""))
        if n_int > F and n_int + n_ext - drop < 2:
            text += ("; then fix an extensive variable in its place (a phase fraction, a volume, or an adiabatic "
                     "enthalpy balance) to keep Duhem's two")
        return text
    if has_feed:
        need = 2 - n_int - n_ext
        hint = []
        if F - n_int > 0:
            hint.append(f"an intensive variable such as {' or '.join(free[:3]) or 'temperature or pressure'}")
        hint.append("an extensive one: a phase fraction, a volume, a heat duty, or an adiabatic balance")
        return f"fix {need} more variable{'s' if need > 1 else ''}: " + ", or ".join(hint)
    if status == Verdict.OVER_SPECIFIED:
        text = (f"drop {max(n_int - F, 0) + n_ext} specification(s) among: {'; '.join(conflicting)}"
                if n_int > F or n_ext else f"drop one of: {'; '.join(conflicting)}")
        return text + (" (or give the feed, which makes extensive specifications meaningful)" if n_ext else "")
    return (f"fix {F - n_int} more intensive variable(s), e.g. "
            + (", ".join(free[:F - n_int + 1]) if free else "temperature or pressure")
            + "; or give the feed and fix a phase fraction or an adiabatic balance")


def phases_cannot_coexist(F: int, n_phases: int, coexisting: tuple[str, ...]) -> tuple[str, str]:
    """The rule and the fix when the phase rule gives F < 0."""
    return (f"F = {F} < 0: the assumed phases cannot coexist",
            f"the {n_phases} phases assumed to coexist ({', '.join(coexisting)}) cannot all "
            f"be present at equilibrium: assume at most {n_phases + F} of them (remove {-F} from "
            "'coexisting'), or check the reactions and restrictions")
