"""Stoichiometric analysis: balances, independent and dependent reactions, a complete set.

Method: the formula-matrix method (W. R. Smith and R. W. Missen, *Chemical Reaction
Equilibrium Analysis: Theory and Algorithms*, Wiley 1982, §2.3): with formula matrix
``A`` of rank ``rho`` over ``N`` phase-species, a complete set of independent reactions
has ``N - rho`` members and spans the null space of ``A``.  For a given list of
reactions with stoichiometric matrix ``nu`` the rank ``m`` is computed exactly; the
independent reactions are the earliest independent ones in the user's order and every
other one is reported as its exact rational combination of them.

Reactions are vectors over phase-species with products positive.  All arithmetic is
delegated to :mod:`auditor.exact`.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction
from typing import Mapping, Sequence

from . import exact
from .case import Case
from .errors import CaseError, EquationError, InputError, Problem
from .sentences import signed_terms
from .system import ChemicalSystem, unknown_name_message

Stoich = tuple[tuple[int, int | Fraction], ...]  # exact; int whenever the value is whole


@dataclass(frozen=True)
class Reaction:
    """A reaction: its text as given (or generated) and its net exact stoichiometry."""

    equation: str
    stoich: Stoich  # (phase-species index, coefficient), products positive, sorted by index


@dataclass(frozen=True)
class Dependent:
    index: int
    combination: tuple[tuple[int, Fraction], ...]  # (independent reaction index, coefficient)


@dataclass(frozen=True)
class DuplicateGroup:
    """Reactions with parallel net change: each member equals factor x representative."""

    representative: int
    members: tuple[tuple[int, Fraction], ...]


@dataclass(frozen=True)
class Unbalanced:
    index: int
    imbalance: tuple[tuple[str, Fraction], ...]  # element (or "charge") -> products minus reactants


@dataclass(frozen=True)
class ConservedQuantity:
    """A linear combination of phase-species amounts that no listed reaction changes."""

    name: str
    vector: tuple[tuple[int, Fraction | int], ...]
    is_element: bool


@dataclass(frozen=True)
class ReactionAnalysis:
    labels: tuple[str, ...]
    reactions: tuple[Reaction, ...]
    formula_rank: int
    rank: int
    independent: tuple[int, ...]
    dependent: tuple[Dependent, ...]
    duplicates: tuple[DuplicateGroup, ...]
    unbalanced: tuple[Unbalanced, ...]
    no_net_change: tuple[int, ...]
    complete: bool
    frozen: tuple[Reaction, ...]          # directions the list cannot produce
    derived_basis: tuple[Reaction, ...]   # a complete independent set from the species alone
    conserved: tuple[ConservedQuantity, ...]

    @property
    def n_species(self) -> int:
        return len(self.labels)

    @property
    def max_independent(self) -> int:
        return len(self.labels) - self.formula_rank


# ------------------------------------------------------------------ equations

def format_coefficient(c: Fraction | int) -> str:
    if type(c) is int:
        return "" if c == 1 else f"{c} "
    c = Fraction(c)
    if c == 1:
        return ""
    return exact.format_fraction(c) + " "


def format_equation(stoich: Mapping[int, Fraction] | Stoich, labels: Sequence[str]) -> str:
    """``a A + b B <=> c C`` with integer or fractional coefficients; products positive."""
    items = sorted(dict(stoich).items())
    left = [f"{format_coefficient(-c)}{labels[k]}" for k, c in items if c < 0]
    right = [f"{format_coefficient(c)}{labels[k]}" for k, c in items if c > 0]
    return f"{' + '.join(left) or '(nothing)'} <=> {' + '.join(right) or '(nothing)'}"


_ARROW = re.compile(r"\s*(<=>|=>|=)\s*")
_TERM = re.compile(r"^(?:(\d+(?:\.\d*)?(?:/\d+)?|\.\d+)\s*)?(\S.*)$")
_SEPARATOR = re.compile(r"\s+\+\s+")


def parse_equation(text: str, system: ChemicalSystem, file: str = "", key_path: str = "",
                   line: int | None = None) -> Reaction:
    """Parse ``CH4 + H2O <=> CO + 3 H2`` (also ``=>``, ``=``; ``0.5 O2``, ``1/2 O2``).

    Terms are separated by `` + `` with spaces, so ion names such as ``H3O+`` survive.
    A species is named by its label, or by its plain name when that is unambiguous.
    """
    def fail(msg: str):
        raise EquationError(Problem(file, msg, key_path, line))

    if not isinstance(text, str) or not text.strip():
        fail(f"expected a reaction equation such as 'CH4 + H2O <=> CO + 3 H2', got {text!r}")
    parts = _ARROW.split(text.strip())
    if len(parts) != 3:
        fail(f"equation {text!r} needs exactly one of '<=>', '=>' or '=' between reactants and products")
    net: dict[int, Fraction] = {}
    for side, sign in ((parts[0], -1), (parts[2], 1)):
        if not side.strip():
            fail(f"equation {text!r} has an empty side")
        for term in _SEPARATOR.split(side.strip()):
            term = term.strip()
            whole = system.find(term)
            m = _TERM.match(term)
            if whole:      # a species whose name starts with a digit (1-C4H8) is a name, not 1 x '-C4H8'
                coef_text, name, hits = None, term, whole
            elif not m:
                fail(f"cannot read term {term!r} in equation {text!r}")
            else:
                coef_text, name = m.group(1), m.group(2).strip()
                hits = system.find(name)
            if not hits and coef_text is None:
                m2 = re.match(r"^(\d+)(\D.*)$", name)  # '2CO' written without a space
                if m2 and system.find(m2.group(2)):
                    coef_text, name = m2.group(1), m2.group(2)
                    hits = system.find(name)
            if not hits:
                fail(unknown_name_message("species", name, system.labels, f"equation {text!r}",
                                         {s.label: s.formula for s in system.species}))
            if len(hits) > 1:
                options = ", ".join(system.labels[h] for h in hits)
                fail(f"species {name!r} in equation {text!r} is in several phases; write one of {options}")
            try:
                coef = Fraction(coef_text) if coef_text else Fraction(1)
            except (ValueError, ZeroDivisionError):
                fail(f"cannot read coefficient {coef_text!r} in equation {text!r}")
            if coef == 0:
                fail(f"zero coefficient in equation {text!r}")
            k = hits[0]
            net[k] = net.get(k, Fraction(0)) + sign * coef
    stoich = tuple(sorted((k, c.numerator if c.denominator == 1 else c) for k, c in net.items() if c != 0))
    return Reaction(text.strip(), stoich)


def mechanism_reactions(system: ChemicalSystem) -> tuple[Reaction, ...]:
    """The mechanism's own reactions as :class:`Reaction` records."""
    return tuple(Reaction(r.equation, r.stoich) for r in system.reactions)


# ------------------------------------------------------------------ derived complete set

def _simplicity(system: ChemicalSystem, k: int) -> tuple:
    f = system.species[k].formula
    # references are the simplest species: fewest elements, then fewest atoms; a
    # charged species is never preferred over a neutral one except the electron
    return (abs(system.species[k].charge) != 0 and len(f) > 0, len(f), sum(abs(v) for v in f.values()), k)


def _formula_elimination(system: ChemicalSystem):
    """The formula matrix in reduced row echelon form over the species ordered from the
    simplest: (simplicity of each species, that order, the elimination over positions in it)."""
    n = system.n_species
    simplicity = [_simplicity(system, k) for k in range(n)]
    order = sorted(range(n), key=simplicity.__getitem__)
    position = {k: j for j, k in enumerate(order)}
    ech = exact.RowEchelon(track=False, leftmost=True)
    for row in system.formula_matrix:
        ech.add({position[k]: x for k, x in enumerate(row) if x != 0})
    return simplicity, order, ech


def derived_basis(system: ChemicalSystem) -> tuple[Reaction, ...]:
    """A complete set of independent reactions from the species alone.

    The formula matrix is put in reduced row echelon form with its columns ordered from
    the simplest species; the pivot species become references and every other species
    gets one formation-type reaction from them (at most ``rank A + 1`` terms), scaled to
    primitive integers and then made sparser where a cheap step helps.
    """
    n = system.n_species
    simplicity, order, ech = _formula_elimination(system)
    vectors = [{order[j]: x for j, x in w.items()} for w in ech.nullspace(range(n))]
    vectors = exact.small_integer_basis(vectors)
    out = []
    for vec in vectors:
        # sign: the more complex species on the product side
        top = max(vec, key=simplicity.__getitem__)
        if vec[top] < 0:
            vec = {k: -x for k, x in vec.items()}
        stoich = tuple(sorted(vec.items()))
        out.append(Reaction(format_equation(stoich, system.labels), stoich))
    return tuple(out)


# ------------------------------------------------------------------ analysis

def _imbalance(system: ChemicalSystem, columns, stoich: Stoich) -> tuple[tuple[str, Fraction], ...]:
    total = exact.sparse_matvec(columns, dict(stoich))
    return tuple((system.elements[e], Fraction(v)) for e, v in sorted(total.items()))


def _describe_quantity(vec: Mapping[int, Fraction | int], labels: Sequence[str]) -> str:
    return signed_terms((c, f"n({labels[k]})") for k, c in sorted(vec.items()))


# Above this many vectors the complements below are chosen by coordinates (linear in the species
# count) instead of by growing one elimination over them (quadratic); below it the incremental
# choice, whose picks a reader of a small case's report has seen, is kept.
COORDINATE_COMPLEMENT_MIN = 200


def _free_columns(ech: exact.RowEchelon, n: int) -> list[int]:
    pivots = set(ech.pivots)
    return [c for c in range(n) if c not in pivots]


def _beyond_elements(rows, element_pivots, ech: exact.RowEchelon, null_w, n: int, base: exact.RowEchelon):
    """The conserved quantities of the listed reactions (``null_w``, one per free column of
    their elimination ``ech``) that complete the element rows to a basis.  Each null vector
    has one nonzero among the free columns, so a vector of the null space is fixed by its free
    coordinates: the element rows' free parts, in echelon form with pivots P, and the null
    vectors of the free columns outside P form a basis.  ``base`` (the element rows' own
    elimination) serves the small case, where null vectors are taken in order."""
    if len(null_w) < COORDINATE_COMPLEMENT_MIN:
        return [w for w in null_w if base.add(w) is None]
    free = _free_columns(ech, n)
    free_set = set(free)
    parts = exact.RowEchelon(track=False)
    for e in element_pivots:
        parts.add({k: x for k, x in enumerate(rows[e]) if x != 0 and k in free_set})
    taken = set(parts.pivots)
    return [w for w, c in zip(null_w, free) if c not in taken]


def _frozen_directions(system: ChemicalSystem, reactions, basis_reaction, basis, ech: exact.RowEchelon):
    """Reactions of the derived complete set that the listed ones cannot produce: a complement
    of their span within the element-balanced directions.  For a large set the derived
    reactions are in canonical form (one species each outside the pivots of the formula
    matrix's elimination, as ``derived_basis`` builds them), and the complement is read off
    the listed reactions' free coordinates; otherwise the listed reactions' elimination is
    continued with the derived ones in order."""
    if len(basis) >= COORDINATE_COMPLEMENT_MIN:
        _, order, elim = _formula_elimination(system)
        pivots = {order[j] for j in elim.pivots}
        own = [[k for k, _ in r.stoich if k not in pivots] for r in basis]
        if all(len(c) == 1 for c in own):
            listed = exact.RowEchelon(track=False)
            for i in basis_reaction:
                listed.add({k: c for k, c in reactions[i].stoich if k not in pivots})
            reached = set(listed.pivots)
            return [r for r, c in zip(basis, own) if c[0] not in reached]
    ech.track = False           # continue the same elimination: what the list cannot reach is frozen
    return [r for r in basis if ech.add({k: c for k, c in r.stoich}) is None]


def analyse(system: ChemicalSystem, reactions: Sequence[Reaction],
            basis: tuple[Reaction, ...] | None = None) -> ReactionAnalysis:
    """Complete exact account of a list of reactions over the system's phase-species.
    ``basis``: the system's ``derived_basis`` when the caller has it already (it is the
    reaction list of a case that asks for the complete set)."""
    # longer than 80 lines on purpose: one exact elimination carried through rank, dependents, frozen
    # directions and conserved quantities
    n = system.n_species
    rows = [row for row in system.formula_matrix]
    element_pivots = exact.pivot_rows([list(r) for r in rows]) if rows else []
    formula_rank = len(element_pivots)

    columns = [system.column(k) for k in range(n)]
    unbalanced = []
    for i, r in enumerate(reactions):
        imb = _imbalance(system, columns, r.stoich)
        if imb:
            unbalanced.append(Unbalanced(i, imb))

    # Group parallel reactions first: third-body variants and reverse duplicates of one
    # reaction share a direction and need only one trip through the elimination.
    groups: dict[tuple, tuple[int, Fraction]] = {}
    member_of: dict[int, tuple[int, Fraction]] = {}
    no_net = []
    ech = exact.RowEchelon()
    basis_reaction: list[int] = []
    combo_of: dict[int, dict[int, Fraction]] = {}
    for i, r in enumerate(reactions):
        vec = dict(r.stoich)
        if not vec:
            no_net.append(i)
            continue
        key, factor = exact.canonical_direction(vec)
        if key in groups:
            rep, rep_factor = groups[key]
            f = factor / rep_factor
            member_of[i] = (rep, f.numerator if f.denominator == 1 else f)   # int when whole: cheap products
            continue
        groups[key] = (i, factor)
        combo = ech.add(vec)
        if combo is None:
            basis_reaction.append(i)
        else:
            combo_of[i] = {basis_reaction[b]: c for b, c in combo.items()}

    dependent = []
    dup_members: dict[int, list[tuple[int, Fraction]]] = {}
    no_net_set = set(no_net)
    for i in range(len(reactions)):
        if i in combo_of:
            combo = combo_of[i]
        elif i in member_of:
            rep, f = member_of[i]
            dup_members.setdefault(rep, []).append((i, f))
            combo = {rep: f} if rep not in combo_of else {j: f * c for j, c in combo_of[rep].items()}
        elif i in no_net_set:
            combo = {}
        else:
            continue
        dependent.append(Dependent(i, tuple(sorted(combo.items()))))
    duplicates = tuple(DuplicateGroup(rep, tuple(m)) for rep, m in sorted(dup_members.items()))

    # Conserved quantities: the null space of the listed reactions (N - m vectors).
    m = ech.rank
    null_w = ech.nullspace(range(n))
    all_balanced = not unbalanced
    conserved: list[ConservedQuantity] = []
    if all_balanced:
        # the element rows are conserved; name them, then add the extra (frozen) ones
        base = exact.RowEchelon(track=False)
        for e in element_pivots:
            vec = {k: x for k, x in enumerate(rows[e]) if x != 0}
            base.add(vec)
            conserved.append(ConservedQuantity(system.elements[e], tuple(sorted(vec.items())), True))
        extra = 0
        for w in _beyond_elements(rows, element_pivots, ech, null_w, n, base):
            extra += 1
            conserved.append(ConservedQuantity(f"extra {extra}: {_describe_quantity(w, system.labels)}",
                                               tuple(sorted(w.items())), False))
    else:
        for j, w in enumerate(null_w, 1):
            conserved.append(ConservedQuantity(f"quantity {j}: {_describe_quantity(w, system.labels)}",
                                               tuple(sorted(w.items())), False))

    if basis is None:
        basis = derived_basis(system)
    frozen = []
    if all_balanced and m < n - formula_rank:
        frozen = _frozen_directions(system, reactions, basis_reaction, basis, ech)
    complete = all_balanced and m == n - formula_rank

    return ReactionAnalysis(
        labels=system.labels, reactions=tuple(reactions), formula_rank=formula_rank, rank=m,
        independent=tuple(basis_reaction), dependent=tuple(dependent), duplicates=duplicates,
        unbalanced=tuple(unbalanced), no_net_change=tuple(no_net), complete=complete,
        frozen=tuple(frozen), derived_basis=basis, conserved=tuple(conserved))


def basis_within(reactions: Sequence[Reaction], n_species: int, present: Sequence[int]) -> tuple[dict[int, int], ...]:
    """A basis of the reactions among ``present`` species that the list can produce.

    That space is ``span(nu) ∩ {v : v_k = 0 for every absent k}``: combinations that
    cancel an absent species count.  Its dimension is ``rank(nu)`` minus the rank of
    ``nu`` restricted to the absent columns.
    """
    present_set = set(present)
    # listed reactions that already involve only present species come first, as written
    chosen = exact.RowEchelon(track=False)
    out = []
    skipped = False
    for r in reactions:
        if r.stoich and all(k in present_set for k, _ in r.stoich):
            if chosen.add(dict(r.stoich)) is None:
                out.append(exact.primitive(dict(r.stoich)))
        elif r.stoich:
            skipped = True
    if not skipped:
        return tuple(out)      # every reaction is among present species: nothing to combine
    ech = exact.RowEchelon(track=False)
    for r in reactions:
        if r.stoich:
            ech.add(dict(r.stoich))
    absent = [k for k in range(n_species) if k not in present_set]
    # then what combinations that cancel absent species add
    for row in exact.eliminate_columns(ech.basis_rows(), absent):
        if chosen.add(row) is None:
            out.append(exact.primitive(row))
    return tuple(out)


def build_reactions(case: Case, system: ChemicalSystem, basis: tuple[Reaction, ...] | None = None
                    ) -> tuple[Reaction, ...]:
    """The reaction list a case asks for, as :class:`Reaction` records (``basis``: the
    system's ``derived_basis`` when the caller has it already)."""
    if case.reactions == "complete":
        return basis if basis is not None else derived_basis(system)
    if case.reactions == "from-mechanism":
        return mechanism_reactions(system)
    problems, out = [], []
    for eq, kp in case.reactions:
        try:
            out.append(parse_equation(eq, system, str(case.path), kp, case.line(kp)))
        except InputError as exc:
            problems.extend(exc.problems)
    if problems:
        raise CaseError(problems)
    return tuple(out)


from_mechanism = mechanism_reactions     # the earlier name, kept for callers
