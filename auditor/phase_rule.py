"""Gibbs phase rule with reactions and restrictions, and Duhem's theorem.

``F = 2 + N - pi - m - r`` over the phases assumed to coexist, with ``N`` their
phase-species, ``pi`` their number, ``m`` the independent reactions among their species
(combinations that cancel an absent species count) and ``r`` the independent intensive
restrictions: those derived from the feed, electroneutrality of each charged phase, and
the declared ones.  Component form ``C = N - m - r``, ``F = 2 + C - pi``.
(J. W. Gibbs 1876; with reactions and restrictions e.g. J. M. Smith, H. C. Van Ness and
M. M. Abbott, *Introduction to Chemical Engineering Thermodynamics*, ch. 14; K. G.
Denbigh, *The Principles of Chemical Equilibrium*, ch. 5.)

Feed-derived restrictions: with conserved quantities ``W`` and feed ``n0``,
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
from .sentences import signed_terms
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
    n_present: int                            # N: phase-species that can be present in the coexisting phases
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
    # declared restrictions on a species that cannot be present, each with the labels of those species
    unholdable: tuple[tuple[Relation, tuple[str, ...]], ...] = ()

    @property
    def n_species(self) -> int:
        """N under its earlier name (``ChemicalSystem.n_species`` counts every phase-species of the system)."""
        return self.n_present

    @property
    def restrictions(self) -> int:
        return self.r_feed + self.r_declared

    @property
    def components(self) -> int:
        return self.n_present - self.independent_reactions - self.restrictions

    @property
    def degrees_of_freedom(self) -> int:
        return 2 + self.n_present - self.n_phases - self.independent_reactions - self.restrictions


def relation_text(phase: str, coeffs: dict[int, Fraction | int], labels: Sequence[str], rhs: str = "0") -> str:
    text = signed_terms(((c, f"x({labels[k]})") for k, c in sorted(coeffs.items())), limit=12)
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
    # every vector compared here lies in the row space of W over the phase's species; on columns
    # where W has full row rank the restriction to them is one-to-one on that space, so the
    # exact elimination below runs on those few columns instead of every species
    inside = _spanning_columns(W, idx) or inside
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
    if len(kept) != len(relations) or any(ech.reduce({k: c for k, c in u.items() if k in inside})[0]
                                          for u in relations):
        return ""
    parts = [f"{names[i]}:{names[j]} = {_ratio_text(Fraction(b[i]) / b[j])}" for i, j in kept]
    return parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]


def _spanning_columns(W, idx) -> set[int] | None:
    """Columns (species of ``idx``) on which the rows of ``W`` have the same rank as over all of
    ``idx`` (chosen greedily, each column a short vector over the rows): restricting the row
    space to them is one-to-one (equal dimensions of the space and its image).  None when
    ``idx`` is empty."""
    ech = exact.RowEchelon(track=False)
    chosen: set[int] = set()
    for k in idx:
        column = {i: w[k] for i, w in enumerate(W) if w.get(k, 0) != 0}
        if column and ech.add(column) is None:
            chosen.add(k)
            if ech.rank == len(W):
                break
    return chosen or None


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


def _feed_amounts(case: Case, system: ChemicalSystem) -> dict[int, Fraction]:
    """Step 1: the feed as exact moles per phase-species (empty without a feed)."""
    n0: dict[int, Fraction] = {}
    for name, amount in feed_moles(case, system) or ():
        k = system.find(name)[0]
        n0[k] = n0.get(k, Fraction(0)) + _exact_amount(amount)
    return n0


def _excluded_species(case: Case, system: ChemicalSystem, analysis: ReactionAnalysis, n0: dict[int, Fraction],
                      coexisting: Sequence[str]) -> list[int]:
    """Step 2: with a feed, a species that a one-signed conserved quantity of zero feed value
    contains can never be present (an element the feed lacks, or a species the listed
    reactions cannot form and the feed does not hold): its mole fraction is identically zero."""
    excluded: list[int] = []
    if case.feed is not None:
        vectors = [dict(c.vector) for c in analysis.conserved]
        vectors += [{k: x for k, x in enumerate(row) if x != 0}
                    for e, row in zip(system.elements, system.formula_matrix) if e != "charge"]
        for w in vectors:
            one_signed = all(x > 0 for x in w.values()) or all(x < 0 for x in w.values())
            if w and one_signed and sum((w.get(k, 0) * a for k, a in n0.items()), Fraction(0)) == 0:
                excluded += [k for k in w if k not in excluded]
    return sorted(k for k in excluded if system.species[k].phase in coexisting)


def _declared_ratios(case: Case, system: ChemicalSystem) -> dict[str, list[Relation]]:
    """Step 5 (read first): the declared ratio restrictions, as relations grouped by phase."""
    labels = system.labels
    by_phase: dict[str, list[Relation]] = {}
    for r in case.restrictions:
        if r.kind == "ratio":
            rr = r.ratio
            i_num, i_den = system.index_in(rr.numerator, rr.phase), system.index_in(rr.denominator, rr.phase)
            u = {i_num: 1, i_den: -Fraction(repr(float(rr.value)))}
            by_phase.setdefault(rr.phase, []).append(Relation(
                rr.phase, tuple(sorted(u.items())), "declared",
                f"in phase {rr.phase}: x({labels[i_num]}) / x({labels[i_den]}) = {rr.value:g}", r.key_path))
    return by_phase


def _feed_vectors(W, b, idx, outside) -> list[dict]:
    """lambda in the left null space of [b | W on the present species outside the phase],
    each giving the relation lambda^T W on the phase's species."""
    out: list[dict] = []
    mat = [[b[i]] + [Fraction(W[i].get(k, 0)) for k in outside] for i in range(len(W))]
    for lam in exact.left_nullspace(mat):
        u: dict = {}
        for i, li in enumerate(lam):
            if li:
                for k in idx:
                    wk = W[i].get(k, 0)
                    if wk:
                        u[k] = u.get(k, 0) + li * wk
        u = {k: v for k, v in u.items() if v != 0}
        if u:
            out.append(u)
    return out


def _phase_relations(phase: str, system: ChemicalSystem, analysis: ReactionAnalysis, present, W, b
                     ) -> tuple[list[Relation], str]:
    """Step 4: the electroneutrality and feed relations on one phase's mole fractions, and the
    feed relations as ratios in words ("" when they do not read as ratios)."""
    labels, present_set = system.labels, set(present)
    idx = [k for k in system.phase_indices(phase) if k in present_set]
    outside = [k for k in present if k not in set(idx)]
    found: list[Relation] = []
    charges = {k: system.species[k].charge for k in idx if system.species[k].charge != 0}
    if charges:
        z = exact.primitive(charges)
        # first, so that a feed relation that coincides with it is the one left out
        found.append(Relation(phase, tuple(sorted(z.items())), "electroneutrality", relation_text(phase, z, labels)))
    words = ""
    if b is not None and W:
        # same span as the null-space vectors, written with small integer coefficients a reviewer can read
        basis_small = exact.small_integer_basis(_feed_vectors(W, b, idx, outside))
        found += [Relation(phase, tuple(sorted(u.items())), "feed", relation_text(phase, u, labels), "feed")
                  for u in basis_small]
        words = feed_ratios(W, [c.name for c in analysis.conserved], b, idx, outside, basis_small,
                            [c.is_element for c in analysis.conserved])
    return found, words


class _Tally:
    """The relations counted so far, by exact rank (all phases together)."""

    def __init__(self):
        self.counted = exact.RowEchelon(track=False)     # every relation counted so far
        self.feed_only = exact.RowEchelon(track=False)   # those the feed (and electroneutrality) imply
        self.relations: list[Relation] = []
        self.double: list[Relation] = []
        self.r_feed = self.r_declared = 0

    def implied(self, rel: Relation) -> None:
        """A relation that holds without being a restriction (fed to both, counted in neither)."""
        self.counted.add(dict(rel.coefficients))
        self.feed_only.add(dict(rel.coefficients))

    def feed(self, rel: Relation) -> None:
        u = dict(rel.coefficients)
        self.feed_only.add(u)
        if self.counted.add(u) is None:
            self.relations.append(rel)
            self.r_feed += 1

    def declared(self, rel: Relation) -> int:
        u = dict(rel.coefficients)
        new = _count_declared(rel, u, self.counted, self.feed_only, self.relations, self.double)
        self.r_declared += new
        return new

    def across(self, rel: Relation) -> int:
        """A declared relation across phases: counted when new (a repeated declaration is
        reported whole by the caller)."""
        if self.counted.add(dict(rel.coefficients)) is None:
            self.relations.append(rel)
            self.r_declared += 1
            return 1
        return 0


def _same_composition(case: Case, system: ChemicalSystem, coexisting: Sequence[str], tally: _Tally,
                      present: set) -> list[Relation]:
    """Step 6: relations that tie phases together; both normalisations make x(a) - x(c) summed
    over all species zero already, so that combination is implied and not counted.  A pair of
    which neither species can be present holds trivially (left out); a pair of which one only
    can be present cannot hold as written (returned)."""
    labels = system.labels
    unholdable: list[Relation] = []
    for r in case.restrictions:
        if r.kind != "same-composition" or not all(p in coexisting for p in r.phases):
            continue
        first = r.phases[0]
        for other in r.phases[1:]:
            pairs = [(a, c) for a, c in matching_species(system, first, other) if a in present or c in present]
            lone = [(a, c) for a, c in pairs if (a in present) != (c in present)]
            if lone:
                absent = ", ".join(labels[k] for a, c in lone for k in (a, c) if k not in present)
                unholdable.append(Relation("across phases", tuple((k, 1) for a, c in lone for k in (a, c)), "declared",
                                           f"same composition of {first} and {other} (but {absent} cannot be present)",
                                           r.key_path))
                continue
            implied = {}
            for a, c in pairs:
                implied[a], implied[c] = 1, -1
            tally.implied(Relation("across phases", tuple(sorted(implied.items())), "implied", "both normalisations"))
            new = sum(tally.across(Relation("across phases", ((a, 1), (c, -1)), "declared",
                                              f"x({labels[a]}) = x({labels[c]}) (same composition of {first} "
                                              f"and {other})", r.key_path)) for a, c in pairs)
            if not new:   # the whole declaration repeats what is already counted
                tally.double.append(Relation("across phases", (), "implied by the other restrictions",
                                             f"same composition of {first} and {other}", r.key_path))
    return unholdable


def count_phase_rule(case: Case, system: ChemicalSystem, reactions: Sequence[Reaction],
                     analysis: ReactionAnalysis) -> PhaseRuleCount:
    """Phase-rule count for a case over its assumed coexisting phases, in the order of the explanation:
    feed amounts, excluded species, the present basis (N, pi, m), relations per phase (r), same composition."""
    labels = system.labels
    coexisting = case.coexisting or tuple(p.name for p in system.phases)
    n0 = _feed_amounts(case, system)
    excluded = _excluded_species(case, system, analysis, n0, coexisting)
    # step 3: the present basis
    present = tuple(k for k, s in enumerate(system.species) if s.phase in coexisting and k not in excluded)
    empty = tuple(p for p in coexisting if not any(system.species[k].phase == p for k in present))
    coexisting = tuple(p for p in coexisting if p not in empty)
    basis = basis_within(reactions, system.n_species, present)
    reactions_present = tuple(Reaction(format_equation(tuple(sorted(v.items())), labels), tuple(sorted(v.items())))
                              for v in basis)
    # conserved quantities and their feed values
    W = [dict(c.vector) for c in analysis.conserved]
    b = None
    if case.feed is not None:
        b = [sum((Fraction(w.get(k, 0)) * a for k, a in n0.items()), Fraction(0)) for w in W]
    declared = _declared_ratios(case, system)
    present_set = set(present)
    # a declared ratio of a species that cannot be present cannot hold (x = 0, or a ratio over zero)
    unholdable = [rel for phase, rels in declared.items() if phase in coexisting for rel in rels
                  if any(k not in present_set for k, _ in rel.coefficients)]
    declared = {p: [rel for rel in rels if rel not in unholdable] for p, rels in declared.items()}
    tally, feed_words = _Tally(), []
    for phase in coexisting:
        found, words = _phase_relations(phase, system, analysis, present, W, b)
        if words:
            feed_words.append((phase, words))
        for rel in found:
            tally.feed(rel)
        for rel in declared.get(phase, []):
            tally.declared(rel)
    unholdable += _same_composition(case, system, coexisting, tally, present_set)
    return PhaseRuleCount(
        coexisting=tuple(coexisting), present_species=present, n_present=len(present),
        n_phases=len(coexisting), independent_reactions=len(basis), reactions_present=reactions_present,
        r_feed=tally.r_feed, r_declared=tally.r_declared, relations=tuple(tally.relations),
        double_counted=tuple(tally.double), has_feed=case.feed is not None,
        excluded=tuple(system.labels[k] for k in excluded), empty_phases=empty, feed_words=tuple(feed_words),
        unholdable=tuple((rel, tuple(dict.fromkeys(labels[k] for k, _ in rel.coefficients if k not in present_set)))
                         for rel in unholdable))


count = count_phase_rule          # the name tests and parallel work import
