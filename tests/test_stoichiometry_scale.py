"""The stoichiometric analysis of a phase with many species and few reactions (its cost, about
linear in the species count, is measured by tests/benchmarks/bench_many_species.py): its complements (extra conserved quantities, frozen
directions) are right: checked by the identities of linear algebra (rank-nullity, every
conserved quantity orthogonal to every listed reaction, every frozen direction balanced, the
union of each complement with what it completes spanning the whole space), and against the
incremental choice the small cases use."""
from __future__ import annotations

import pytest

pytest.importorskip("cantera")

from auditor import exact, stoichiometry  # noqa: E402
from auditor.stoichiometry import analyse, derived_basis, mechanism_reactions  # noqa: E402
from auditor.system import from_mechanism  # noqa: E402


def many_species(tmp_path, n: int):
    """A gas of ``n`` invented C/H species (compositions repeat every 35) and two reactions
    between species of equal composition."""
    species = "".join(
        f"- name: X{i}\n  composition: {{C: {1 + i % 7}, H: {2 * (i % 5) + 2}}}\n"
        f"  thermo: {{model: constant-cp, T0: 298.15 K, h0: {-1000 * (i % 13)} J/mol, s0: 200 J/mol/K, "
        f"cp0: 30 J/mol/K}}\n" for i in range(n))
    names = ", ".join(f"X{i}" for i in range(n))
    text = (f"phases:\n- name: gas\n  thermo: ideal-gas\n  elements: [C, H]\n  species: [{names}]\n"
            f"  kinetics: gas\n  reactions: all\n  state: {{T: 300.0, P: 1 atm}}\nspecies:\n{species}"
            "reactions:\n- equation: X0 => X35\n  rate-constant: {A: 1.0, b: 0, Ea: 0}\n"
            "- equation: X1 => X36\n  rate-constant: {A: 1.0, b: 0, Ea: 0}\n")
    path = tmp_path / f"many{n}.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def analysed(path):
    system = from_mechanism(path)
    reactions = mechanism_reactions(system)
    return system, reactions, analyse(system, reactions, derived_basis(system))


def check_identities(system, reactions, a):
    n, rho, m = system.n_species, a.formula_rank, a.rank
    # rank-nullity: N - m conserved quantities, N - rho - m frozen directions (theorem)
    assert len(a.conserved) == n - m and len(a.frozen) == n - rho - m
    nu = [dict(r.stoich) for r in reactions]
    for c in a.conserved:                                 # conserved by every listed reaction
        w = dict(c.vector)
        assert all(sum(w.get(k, 0) * x for k, x in v.items()) == 0 for v in nu)
    assert exact.RowEchelon(track=False).rank == 0
    conserved = exact.RowEchelon(track=False)
    for c in a.conserved:
        conserved.add(dict(c.vector))
    assert conserved.rank == n - m                        # independent: a basis of the null space
    span = exact.RowEchelon(track=False)
    for v in nu:
        span.add(v)
    columns = [system.column(k) for k in range(n)]
    for r in a.frozen:                                    # balanced, and new to the listed span
        assert not exact.sparse_matvec(columns, dict(r.stoich))
        assert span.add(dict(r.stoich)) is None
    assert span.rank == n - rho                           # together: every balanced direction


def test_complements_are_right_at_scale(tmp_path):
    system, reactions, a = analysed(many_species(tmp_path, 600))
    assert len(a.conserved) >= stoichiometry.COORDINATE_COMPLEMENT_MIN     # the coordinate path ran
    check_identities(system, reactions, a)


def test_coordinate_and_incremental_choices_agree_in_span(tmp_path, monkeypatch):
    system, reactions, fast = analysed(many_species(tmp_path, 300))
    monkeypatch.setattr(stoichiometry, "COORDINATE_COMPLEMENT_MIN", 10 ** 9)
    _, _, slow = analysed(many_species(tmp_path, 300))
    check_identities(system, reactions, slow)
    for part in ("conserved", "frozen"):
        vectors = [dict(getattr(x, "vector", None) or x.stoich) for x in getattr(fast, part)]
        others = [dict(getattr(x, "vector", None) or x.stoich) for x in getattr(slow, part)]
        both = exact.RowEchelon(track=False)
        for v in vectors + others:
            both.add(v)
        if part == "conserved":
            assert both.rank == len(vectors) == len(others)       # the same space
        else:
            assert len(vectors) == len(others)                     # complements of one space


@pytest.mark.parametrize("name", ["reformer_design_point.yaml", "methanol_loop_complete_set.yaml",
                                  "sulphur_furnace_demo.yaml"])
def test_the_certificate_may_reuse_the_counts_basis(name):
    # the certificate takes the phase-rule count's reactions among the present species instead of
    # computing them again: both come from basis_within on the same set (identity)
    from pathlib import Path
    from auditor.audit import counting_stages
    from auditor.case import load_case
    from auditor.stoichiometry import basis_within
    st = counting_stages(load_case(Path(__file__).resolve().parents[1] / "cases" / name))
    again = basis_within(st.analysis.reactions, st.system.n_species, tuple(st.count.present_species))
    assert [dict(r.stoich) for r in st.count.reactions_present] == list(again)
