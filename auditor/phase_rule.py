"""Gibbs phase rule with reactions and restrictions, and Duhem's theorem (design §2).

``F = 2 + N - pi - m - r`` over the phases assumed to coexist, with ``N`` their
phase-species, ``pi`` their number, ``m`` the independent reactions among their species
(combinations that cancel an absent species count) and ``r`` the independent intensive
restrictions: those derived from the feed, electroneutrality of each charged phase, and
the declared ones.  Component form ``C = N - m - r``, ``F = 2 + C - pi``.
(J. W. Gibbs 1876; with reactions and restrictions e.g. J. M. Smith, H. C. Van Ness and
M. M. Abbott, *Introduction to Chemical Engineering Thermodynamics*, ch. 14; K. G.
Denbigh, *The Principles of Chemical Equilibrium*, ch. 5.)

Feed-derived restrictions (design §2): with conserved quantities ``W`` and feed ``n0``,
``b = W n0``.  For a phase ``p`` every ``lambda`` with ``lambda . b = 0`` whose
combination ``lambda^T W`` vanishes on the present species outside ``p`` gives the
relation ``sum_k (lambda^T W)_k x_k = 0`` on the mole fractions of ``p``.  All relations
of one phase (feed, electroneutrality, declared ratios) are counted together by exact
rank, so a declared one already implied is reported as double counting, counted once.

Duhem's theorem: a closed system of known feed is fixed by exactly two independent
variables, intensive or extensive.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Sequence

from . import exact
from .case import Case
from .system import feed_moles, matching_species
from .stoichiometry import ReactionAnalysis, Reaction, basis_within, format_equation
from .system import ChemicalSystem


@dataclass(frozen=True)
class Relation:
    """A linear homogeneous relation on mole fractions: sum_k coefficient_k x_k = 0."""

    phase: str                    # phase name, or "across phases" for same-composition
    coefficients: tuple[tuple[int, int | Fraction], ...]   # phase-species index -> coefficient
    origin: str                   # "feed", "electroneutrality", "declared"
    text: str
    key_path: str = ""


@dataclass(frozen=True)
class PhaseRuleCount:
    coexisting: tuple[str, ...]
    present_species: tuple[int, ...]          # phase-species of the coexisting phases
    n_species: int                            # N
    n_phases: int                             # pi
    independent_reactions: int                # m (among present species)
    reactions_present: tuple[Reaction, ...]   # a basis of those reactions
    r_feed: int                               # feed-derived incl. electroneutrality
    r_declared: int
    relations: tuple[Relation, ...]           # the independent relations counted
    double_counted: tuple[Relation, ...]      # declared relations already implied
    has_feed: bool
    excluded: tuple[str, ...] = ()            # species that need an element the feed lacks
    empty_phases: tuple[str, ...] = ()        # assumed phases none of whose species can exist
    feed_words: tuple[tuple[str, str], ...] = ()  # (phase, the feed relations of it as ratios in words)

    @property
    def restrictions(self) -> int:
        return self.r_feed + self.r_declared

    @property
    def components(self) -> int:
        return self.n_species - self.independent_reactions - self.restrictions

    @property
    def degrees_of_freedom(self) -> int:
        return 2 + self.n_species - self.n_phases - self.independent_reactions - self.restrictions


def relation_text(phase: str, coeffs: dict[int, Fraction | int], labels: Sequence[str], rhs: str = "0") -> str:
    terms = []
    for k, c in sorted(coeffs.items()):
        c = Fraction(c)
        sign = "-" if c < 0 else "+"
        mag = abs(c)
        coef = "" if mag == 1 else f"{exact.format_fraction(mag)} "
        terms.append(f"{sign} {coef}x({labels[k]})")
    more = len(terms) - 12
    if more > 0:   # a mechanism-sized relation: show its start and say how long it is
        terms = terms[:12] + [f"+ ... ({more} more terms)"]
    text = " ".join(terms)
    text = text[2:] if text.startswith("+ ") else text
    return f"in phase {phase}: {text} = {rhs}"


def _ratio_text(x: Fraction) -> str:
    f = float(x)
    if Fraction(repr(round(f, 6))) == x:
        return f"{f:g}"
    return exact.format_fraction(x) if x.denominator <= 1000 else f"{f:.4g}"


def feed_ratios(W, names, b, idx, outside, relations, readable=None) -> str:
    """The feed relations of one phase as ratios of conserved quantities ("H:C = 4"), when the
    ratios span exactly the same relations; "" otherwise (the equations then stand alone)."""
    if not relations:
        return ""
    readable = readable or [True] * len(W)   # quantities with a short name (the elements)
    order = sorted((i for i in range(len(W)) if b[i] != 0 and readable[i]), key=lambda i: (names[i] != "C", i))
    inside, outside, kept = set(idx), set(outside), []
    ech = exact.RowEchelon(track=False)
    for pos, j in enumerate(order):            # j the reference (carbon first when fed)
        for i in order[pos + 1:]:
            # b_j W_i - b_i W_j, scaled to integers when both rows are (only its direction matters)
            scale = math.lcm(Fraction(b[i]).denominator, Fraction(b[j]).denominator)
            bi, bj = exact.whole(b[i] * scale), exact.whole(b[j] * scale)
            Wi, Wj = W[i], W[j]
            v = {k: bj * Wi.get(k, 0) - bi * Wj.get(k, 0) for k in Wi.keys() | Wj.keys()}
            if outside and any(v[k] != 0 for k in outside.intersection(v)):
                continue
            v = {k: c for k, c in v.items() if c != 0 and k in inside}
            if v and ech.add(v) is None:
                kept.append((i, j))
    if len(kept) != len(relations) or any(ech.reduce(dict(u))[0] for u in relations):
        return ""
    parts = [f"{names[i]}:{names[j]} = {_ratio_text(Fraction(b[i]) / b[j])}" for i, j in kept]
    return parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]


def _exact_amount(x) -> Fraction:
    # feed amounts are exact already; a float is taken as the decimal it prints as
    return x if isinstance(x, Fraction) else Fraction(repr(float(x)))


def _count_declared(rel: Relation, u, counted, feed_only, relations, double) -> int:
    """Count a declared relation once if it is new; otherwise record what already implies it."""
    if counted.add(u) is None:
        relations.append(rel)
        return 1
    by_feed = not feed_only.reduce(u)[0]
    double.append(Relation(rel.phase, rel.coefficients,
                           "implied by the feed" if by_feed else "implied by the other restrictions",
                           rel.text, rel.key_path))
    return 0


def count_phase_rule(case: Case, system: ChemicalSystem, reactions: Sequence[Reaction],
          analysis: ReactionAnalysis) -> PhaseRuleCount:
    """Phase-rule count for a case over its assumed coexisting phases."""
    # longer than 80 lines on purpose: the terms N, pi, m, r are counted from one set of present species, in
    # the order of the explanation
    labels = system.labels
    coexisting = case.coexisting or tuple(p.name for p in system.phases)
    n0: dict[int, Fraction] = {}
    for name, amount in feed_moles(case, system) or ():
        k = system.find(name)[0]
        n0[k] = n0.get(k, Fraction(0)) + _exact_amount(amount)
    # with a feed, a species that a one-signed conserved quantity of zero feed value contains
    # can never be present (an element the feed lacks, or a species the listed reactions
    # cannot form and the feed does not hold): it is not a phase-species of the equilibrium
    # state, its mole fraction being identically zero
    excluded = []
    if case.feed is not None:
        vectors = [dict(c.vector) for c in analysis.conserved]
        vectors += [{k: x for k, x in enumerate(row) if x != 0}
                    for e, row in zip(system.elements, system.formula_matrix) if e != "charge"]
        for w in vectors:
            one_signed = all(x > 0 for x in w.values()) or all(x < 0 for x in w.values())
            if w and one_signed and sum((w.get(k, 0) * a for k, a in n0.items()), Fraction(0)) == 0:
                excluded += [k for k in w if k not in excluded]
    excluded = sorted(k for k in excluded if system.species[k].phase in coexisting)
    present = tuple(k for k, s in enumerate(system.species) if s.phase in coexisting and k not in excluded)
    empty = tuple(p for p in coexisting if not any(system.species[k].phase == p for k in present))
    coexisting = tuple(p for p in coexisting if p not in empty)
    present_set = set(present)
    basis = basis_within(reactions, system.n_species, present)
    m = len(basis)
    reactions_present = tuple(Reaction(format_equation(tuple(sorted(v.items())), labels), tuple(sorted(v.items())))
                              for v in basis)

    # conserved quantities and their feed values
    W = [dict(c.vector) for c in analysis.conserved]
    b = None
    if case.feed is not None:
        b = [sum((Fraction(w.get(k, 0)) * a for k, a in n0.items()), Fraction(0)) for w in W]

    relations: list[Relation] = []
    double: list[Relation] = []
    r_feed = r_declared = 0
    declared_by_phase: dict[str, list[tuple[dict, str, str]]] = {}
    feed_words: list[tuple[str, str]] = []
    for r in case.restrictions:
        if r.kind == "ratio":
            rr = r.ratio
            i_num = system.index_in(rr.numerator, rr.phase)
            i_den = system.index_in(rr.denominator, rr.phase)
            val = Fraction(repr(float(rr.value)))
            declared_by_phase.setdefault(rr.phase, []).append(({i_num: 1, i_den: -val}, r.key_path,
                                                               f"x({labels[i_num]}) / x({labels[i_den]}) = {rr.value:g}"))

    counted = exact.RowEchelon(track=False)     # every relation counted so far
    feed_only = exact.RowEchelon(track=False)   # those the feed (and electroneutrality) imply
    for phase in coexisting:
        idx = [k for k in system.phase_indices(phase) if k in present_set]
        outside = [k for k in present if k not in set(idx)]
        found: list[tuple[dict, str, str, str]] = []   # (vector, origin, text, key path)
        charges = {k: system.species[k].charge for k in idx if system.species[k].charge != 0}
        if charges:
            z = exact.primitive({k: c for k, c in charges.items()})
            # first, so that a feed relation that coincides with it is the one left out
            found.append((z, "electroneutrality", relation_text(phase, z, labels), ""))
        if b is not None and W:
            # lambda in the left null space of [b | W restricted to present species outside the phase]
            feed_vectors: list[dict] = []
            mat = [[b[i]] + [Fraction(W[i].get(k, 0)) for k in outside] for i in range(len(W))]
            for lam in exact.left_nullspace(mat):
                u = {}
                for i, li in enumerate(lam):
                    if li:
                        for k in idx:
                            wk = W[i].get(k, 0)
                            if wk:
                                u[k] = u.get(k, 0) + li * wk
                u = {k: v for k, v in u.items() if v != 0}
                if u:
                    feed_vectors.append(u)
            # same span, written with small integer coefficients a reviewer can read
            basis_small = exact.small_integer_basis(feed_vectors)
            for u in basis_small:
                found.append((u, "feed", relation_text(phase, u, labels), "feed"))
            words = feed_ratios(W, [c.name for c in analysis.conserved], b, idx, outside, basis_small,
                                [c.is_element for c in analysis.conserved])
            if words:
                feed_words.append((phase, words))
        # independent feed/electroneutrality relations of this phase
        for u, origin, text, kp in found:
            feed_only.add(u)
            if counted.add(u) is None:
                relations.append(Relation(phase, tuple(sorted(u.items())), origin, text, kp))
                r_feed += 1
        for u, kp, text in declared_by_phase.get(phase, []):
            rel = Relation(phase, tuple(sorted(u.items())), "declared", f"in phase {phase}: {text}", kp)
            r_declared += _count_declared(rel, u, counted, feed_only, relations, double)
    # relations that tie phases together; both normalisations make x(a) - x(c) summed over all
    # species zero already, so that combination is implied and not counted
    for r in case.restrictions:
        if r.kind == "same-composition" and all(p in coexisting for p in r.phases):
            first = r.phases[0]
            for other in r.phases[1:]:
                pairs = matching_species(system, first, other)
                implied = {}
                for a, c in pairs:
                    implied[a], implied[c] = 1, -1
                counted.add(implied)
                feed_only.add(implied)
                new = 0
                for a, c in pairs:
                    if counted.add({a: 1, c: -1}) is None:
                        relations.append(Relation("across phases", ((a, 1), (c, -1)), "declared",
                                                  f"x({labels[a]}) = x({labels[c]}) (same composition of {first} "
                                                  f"and {other})", r.key_path))
                        new += 1
                r_declared += new
                if not new:   # the whole declaration repeats what is already counted
                    double.append(Relation("across phases", (), "implied by the other restrictions",
                                           f"same composition of {first} and {other}", r.key_path))
    return PhaseRuleCount(
        coexisting=tuple(coexisting), present_species=present, n_species=len(present),
        n_phases=len(coexisting), independent_reactions=m, reactions_present=reactions_present,
        r_feed=r_feed, r_declared=r_declared, relations=tuple(relations), double_counted=tuple(double),
        has_feed=case.feed is not None, excluded=tuple(system.labels[k] for k in excluded), empty_phases=empty,
        feed_words=tuple(feed_words))


count = count_phase_rule          # the name tests and parallel work import
