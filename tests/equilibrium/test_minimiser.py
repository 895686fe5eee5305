"""Tests for auditor.equilibrium.minimiser (independent Gibbs-energy minimiser).

Reference for every cross-check: the cantera library (3.2), multiphase
equilibrium by its VCS solver, ``ct.Mixture(...).equilibrate('TP',
solver='vcs')``.  Thermochemistry: cantera's packaged ``nasa_gas.yaml`` and
``nasa_condensed.yaml`` (NASA Glenn polynomials).  Both solvers get the same
formula matrix, the same standard chemical potentials and the same element
abundances (taken from the cantera Mixture), so any disagreement is a solver
disagreement.

Cantera conventions and pitfalls (checked in ``test_cantera_conventions`` where
they are conventions):

* ``IdealGasPhase.standard_gibbs_RT`` is the standard state at the *current*
  pressure: it already includes ln(P/P_ref).  Adding ln(P/P_ref) again would be
  wrong.  ``reference_pressure`` of these NASA7 data is 1 atm (cantera's NASA7
  default), not 1 bar.
* For a ``fixed-stoichiometry`` phase ``standard_gibbs_RT`` already includes
  V (P - P_ref)/RT, with V from the species' ``equation-of-state``.
  ``nasa_condensed.yaml`` gives no density, in which case cantera assumes
  0.001 kg/m3 and that term is absurd; every condensed species here gets a
  ``constant-volume`` density (values below).
* vcs can leave a zero-seeded minor gas species at exactly zero (CaCO3/CaO with
  a pure-CO2 gas: CO and O2 stay 0 although their equilibrium amounts are
  ~1e-6); every gas species is therefore seeded with 1e-12 of the gas feed.
  The seed is part of the feed, hence of ``b``, for both solvers.
* vcs raises "vcs_popPhaseID: Index out of bounds" when a pure phase contains
  an element of zero abundance.  In the zero-abundance case that phase is left
  out of the reference run; it is forced absent (n = 0 in every feasible n),
  so the reference problem has the same solution.
"""
from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import pytest

ct = pytest.importorskip("cantera")

from auditor.equilibrium.minimiser import MinimiserInputs, MinimiserResult, minimise_gibbs  # noqa: E402

# Densities of the condensed species, kg/m3 (CRC Handbook of Chemistry and
# Physics, room-temperature values, from memory; H2O(L) at 100 degC).
DENSITY = {
    "C(gr)": 2260.0,  # graphite 2.26 g/cm3
    "CaCO3(caL)": 2710.0,  # calcite 2.71 g/cm3
    "CaO(s)": 3340.0,  # lime 3.34 g/cm3
    "NH4CL(a)": 1520.0,  # ammonium chloride 1.52 g/cm3
    "NH4CL(b)": 1520.0,  # high-temperature form; room-temperature value used
    "H2O(L)": 958.0,  # liquid water at 373 K, 0.958 g/cm3
}

GAS_SEED = 1e-12  # of the gas feed, for every gas species (see module docstring)
PRESENT = 1e-12  # a phase is present if its moles exceed this fraction of the total
XTOL = 1e-6  # agreement of every mole fraction of every present phase


@functools.lru_cache(maxsize=None)
def _gas_db():
    return {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}


@functools.lru_cache(maxsize=None)
def _condensed_db():
    return {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}


def gas_phase(names):
    return ct.Solution(thermo="ideal-gas", species=[_gas_db()[n] for n in names])


def condensed_phase(name):
    data = dict(_condensed_db()[name].input_data)
    data["equation-of-state"] = {"model": "constant-volume", "density": DENSITY[name]}
    return ct.Solution(thermo="fixed-stoichiometry", species=[ct.Species.from_dict(data)])


@dataclass(frozen=True)
class Case:
    name: str
    T: float  # K
    P: float  # Pa
    gas: tuple[str, ...]  # gas-phase species (one ideal-gas phase, phase 0)
    feed: tuple[tuple[str, float], ...]  # gas feed, mol
    condensed: tuple[tuple[str, float], ...] = ()  # pure phases and their feed, mol
    expect: frozenset[str] = frozenset({"gas"})  # phases expected present (physics)
    charge_row: bool = False  # append a charge row (zero abundance) to A
    not_in_reference: tuple[str, ...] = ()  # pure phases vcs cannot take (see docstring)
    seed: float = GAS_SEED  # 0 where a seed would itself make a trace phase (water cases)


REFORM = ("CH4", "H2O", "CO", "CO2", "H2", "O2", "C2H6", "C2H4", "C2H2,acetylene")
CALCINE = ("CO2", "CO", "O2", "N2")
AIR_BURN = ("CH4", "CO", "CO2", "H2O", "H2", "O2", "N2", "O", "H", "OH", "NO", "N",
            "HO2", "NO2", "N2O", "H2O2", "HCN", "NH3")
PLASMA = ("N2", "O2", "NO", "N", "O", "Ar", "NO+", "N2+", "O2+", "O+", "N+", "Ar+", "O-",
          "O2-", "Electron")
ATM = ct.one_atm
BAR = 1e5

CASES = [
    # Steam-methane reforming gas, S/C = 3.
    Case("reform-900K-1bar", 900, 1 * BAR, REFORM, (("CH4", 1), ("H2O", 3))),
    Case("reform-900K-25bar", 900, 25 * BAR, REFORM, (("CH4", 1), ("H2O", 3))),
    Case("reform-1100K-1bar", 1100, 1 * BAR, REFORM, (("CH4", 1), ("H2O", 3))),
    Case("reform-1100K-25bar", 1100, 25 * BAR, REFORM, (("CH4", 1), ("H2O", 3))),
    # Reforming gas + graphite: low steam deposits carbon, high steam does not.
    Case("reform-graphite-deposit-900K", 900, 1 * BAR, REFORM, (("CH4", 1), ("H2O", 0.5)),
         (("C(gr)", 0.0),), frozenset({"gas", "C(gr)"})),
    Case("reform-graphite-none-1100K", 1100, 1 * BAR, REFORM, (("CH4", 1), ("H2O", 3)),
         (("C(gr)", 0.0),)),
    Case("reform-graphite-deposit-1100K-25bar", 1100, 25 * BAR, REFORM,
         (("CH4", 1), ("H2O", 1)), (("C(gr)", 0.1),), frozenset({"gas", "C(gr)"})),
    # Calcination CaCO3 = CaO + CO2 with N2-diluted gas: three phases while
    # x_CO2 = K(T)/P is reachable, then CaCO3 vanishes.
    Case("calcite-N2-1000K", 1000, ATM, CALCINE, (("N2", 1), ("CO2", 0.1)),
         (("CaCO3(caL)", 1.0), ("CaO(s)", 0.5)), frozenset({"gas", "CaCO3(caL)", "CaO(s)"})),
    Case("calcite-N2-1100K", 1100, ATM, CALCINE, (("N2", 1), ("CO2", 0.1)),
         (("CaCO3(caL)", 1.0), ("CaO(s)", 0.5)), frozenset({"gas", "CaCO3(caL)", "CaO(s)"})),
    Case("calcite-N2-1150K", 1150, ATM, CALCINE, (("N2", 1), ("CO2", 0.1)),
         (("CaCO3(caL)", 1.0), ("CaO(s)", 0.5)), frozenset({"gas", "CaO(s)"})),
    # Under ~1 atm of CO2: decomposition temperature ~1170 K with these data.
    Case("calcite-CO2-1150K-below-Td", 1150, ATM, CALCINE[:3], (("CO2", 1.0),),
         (("CaCO3(caL)", 1.0), ("CaO(s)", 0.2)), frozenset({"gas", "CaCO3(caL)"})),
    Case("calcite-CO2-1190K-above-Td", 1190, ATM, CALCINE[:3], (("CO2", 1.0),),
         (("CaCO3(caL)", 1.0), ("CaO(s)", 0.2)), frozenset({"gas", "CaO(s)"})),
    # NH4Cl(s) = NH3 + HCl with argon carrier.
    Case("NH4Cl-a-400K", 400, ATM, ("NH3", "HCL", "Ar"),
         (("Ar", 1), ("NH3", 0.01), ("HCL", 0.01)), (("NH4CL(a)", 0.5),),
         frozenset({"gas", "NH4CL(a)"})),
    Case("NH4Cl-a-450K", 450, ATM, ("NH3", "HCL", "Ar"),
         (("Ar", 1), ("NH3", 0.01), ("HCL", 0.01)), (("NH4CL(a)", 0.5),),
         frozenset({"gas", "NH4CL(a)"})),
    Case("NH4Cl-b-600K-sublimed", 600, ATM, ("NH3", "HCL", "Ar"), (("Ar", 1),),
         (("NH4CL(b)", 0.1),)),
    # Water vapour and pure liquid water (formula matrix of rank 1 on these two).
    # (Unseeded: seeding H2 and O2 would leave ~1e-12 mol of gas next to the liquid.)
    Case("water-370K-liquid-only", 370, ATM, ("H2O", "H2", "O2"), (("H2O", 0.5),),
         (("H2O(L)", 0.5),), frozenset({"H2O(L)"}), seed=0.0),
    Case("water-376K-vapour-only", 376, ATM, ("H2O", "H2", "O2"), (("H2O", 0.5),),
         (("H2O(L)", 0.5),), seed=0.0),
    Case("water-N2-360K-two-phase", 360, ATM, ("H2O", "H2", "O2", "N2"),
         (("H2O", 3), ("N2", 1)), (("H2O(L)", 0.0),), frozenset({"gas", "H2O(L)"})),
    # Stoichiometric CH4/air products with radicals and NOx.
    Case("CH4-air-2000K", 2000, 1 * BAR, AIR_BURN, (("CH4", 1), ("O2", 2), ("N2", 7.52))),
    # Ammonia synthesis.
    Case("NH3-synthesis-700K-200bar", 700, 200 * BAR, ("N2", "H2", "NH3"),
         (("N2", 1), ("H2", 3))),
    # Elements of zero abundance: Ar, N and Cl are in A (gas species and a pure
    # phase) but not in the feed.
    Case("zero-abundance-Ar-N-Cl", 1100, 1 * BAR, REFORM + ("Ar", "N2", "HCL", "NH3"),
         (("CH4", 1), ("H2O", 3)), (("NH4CL(b)", 0.0),), not_in_reference=("NH4CL(b)",)),
    # Weakly ionised air: electron element row plus a (dependent) charge row.
    Case("ionised-air-5000K-charge-row", 5000, 1 * BAR, PLASMA,
         (("N2", 0.78), ("O2", 0.21), ("Ar", 0.01)), charge_row=True),
    Case("ionised-air-5000K", 5000, 1 * BAR, PLASMA,
         (("N2", 0.78), ("O2", 0.21), ("Ar", 0.01))),
]


@dataclass
class Solved:
    case: Case
    names: list[str]  # phase names, gas first
    A: np.ndarray
    g: np.ndarray
    phase_of: np.ndarray
    solution: np.ndarray
    b: np.ndarray
    mine: MinimiserResult
    ref_moles: np.ndarray  # cantera vcs, same species order (0 for omitted phases)
    ref_phase_moles: np.ndarray


def _problem(case: Case, condensed):
    """Build phases and the Mixture; return mixture and minimiser inputs."""
    gas = gas_phase(case.gas)
    feed = dict(case.feed)
    total = sum(feed.values())
    X = {n: feed.get(n, 0.0) + case.seed * total for n in case.gas}
    gas.TPX = case.T, case.P, X
    phases = [(gas, sum(X.values()))]
    for name, amount in condensed:
        ph = condensed_phase(name)
        ph.TP = case.T, case.P
        phases.append((ph, amount))
    mix = ct.Mixture(phases)
    mix.T, mix.P = case.T, case.P
    K = mix.n_species
    A = np.array([[mix.n_atoms(k, e) for k in range(K)] for e in range(mix.n_elements)])
    b = np.array([mix.element_moles(e) for e in range(mix.n_elements)])
    # standard_gibbs_RT already holds ln(P/P_ref) (gas) or V(P-P_ref)/RT (condensed).
    g = np.concatenate([ph.standard_gibbs_RT for ph, _ in phases])
    phase_of = np.concatenate([[p] * ph.n_species for p, (ph, _) in enumerate(phases)])
    solution = np.array([True] + [False] * len(condensed))
    if case.charge_row:
        q = np.concatenate([[ph.species(k).charge for k in range(ph.n_species)] for ph, _ in phases])
        A = np.vstack([A, q])
        b = np.append(b, 0.0)
    return mix, phases, A, g, phase_of, solution, b


@functools.lru_cache(maxsize=None)
def solved(name: str) -> Solved:
    case = next(c for c in CASES if c.name == name)
    mix, phases, A, g, phase_of, solution, b = _problem(case, case.condensed)
    mine = minimise_gibbs(MinimiserInputs.from_arrays(A, g, phase_of, solution, b))
    names = ["gas"] + [n for n, _ in case.condensed]
    # Reference run (without phases vcs cannot take: they are forced absent).
    kept = [(n, a) for n, a in case.condensed if n not in case.not_in_reference]
    rmix = _problem(case, kept)[0] if len(kept) < len(case.condensed) else mix
    rmix.equilibrate("TP", solver="vcs", rtol=1e-12, max_steps=5000)
    kept_names = ["gas"] + [n for n, _ in kept]
    ref_moles = np.zeros(len(g))
    ref_pm = np.zeros(len(names))
    k0 = 0
    for p, n in enumerate(kept_names):
        q = names.index(n)
        idx = np.flatnonzero(phase_of == q)
        ref_moles[idx] = rmix.species_moles[k0 : k0 + idx.size]
        ref_pm[q] = rmix.phase_moles(p)
        k0 += idx.size
    return Solved(case, names, A, g, phase_of, solution, b, mine, ref_moles, ref_pm)


def present_names(s: Solved, phase_moles) -> set[str]:
    total = phase_moles.sum()
    return {n for n, pm in zip(s.names, phase_moles) if pm > PRESENT * total}


def mole_fraction_disagreement(s: Solved) -> float:
    worst = 0.0
    for p in range(len(s.names)):
        if s.mine.phase_moles[p] > 0 and s.ref_phase_moles[p] > 0:
            idx = s.phase_of == p
            x_mine = s.mine.moles[idx] / s.mine.phase_moles[p]
            x_ref = s.ref_moles[idx] / s.ref_phase_moles[p]
            worst = max(worst, float(np.abs(x_mine - x_ref).max()))
    return worst


def test_enough_systems():
    assert len(CASES) >= 12
    assert len({c.name for c in CASES}) == len(CASES)


def test_cantera_conventions():
    """The conventions the inputs rely on (reference: cantera 3.2 behaviour)."""
    T, P = 900.0, 25 * BAR
    gas = gas_phase(("CH4", "H2O"))
    assert gas.reference_pressure == pytest.approx(ct.one_atm)
    gas.TP = T, gas.reference_pressure
    g_ref = gas.standard_gibbs_RT
    gas.TP = T, P
    assert np.allclose(gas.standard_gibbs_RT, g_ref + np.log(P / gas.reference_pressure),
                       rtol=0, atol=1e-12)
    gas.TPX = T, P, "CH4:1, H2O:3"
    mu = gas.chemical_potentials / (ct.gas_constant * T)
    assert np.allclose(mu, gas.standard_gibbs_RT + np.log(gas.X), rtol=0, atol=1e-10)

    gr = condensed_phase("C(gr)")
    assert gr.density == pytest.approx(DENSITY["C(gr)"])
    gr.TP = T, gr.reference_pressure
    g_ref = gr.standard_gibbs_RT[0]
    gr.TP = T, P
    v = gr.molecular_weights[0] / DENSITY["C(gr)"]  # m3/kmol
    expected = g_ref + v * (P - gr.reference_pressure) / (ct.gas_constant * T)
    assert gr.standard_gibbs_RT[0] == pytest.approx(expected, rel=0, abs=1e-12)


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_matches_cantera_vcs(case):
    """Same present phases and every mole fraction within 1e-6 (reference: cantera vcs)."""
    s = solved(case.name)
    assert s.mine.converged, s.mine.message
    mine_present = present_names(s, s.mine.phase_moles)
    assert mine_present == present_names(s, s.ref_phase_moles)
    assert mine_present == set(case.expect)
    assert mole_fraction_disagreement(s) <= XTOL
    # Phase amounts too (relative to the total amount).
    total = s.ref_phase_moles.sum()
    assert np.abs(s.mine.phase_moles - s.ref_phase_moles).max() <= XTOL * total


def check_invariants(A, g, phase_of, solution, b, r: MinimiserResult):
    """Element balance, equal chemical potentials, stability of absent phases."""
    n, lam = r.moles, r.element_potentials
    assert np.all(n >= 0)
    scale = max(np.abs(b).max(), 1e-300)
    assert np.abs(A @ n - b).max() <= 1e-10 * scale
    red = g - A.T @ lam  # reduced potentials (g_k - A_k.lambda)
    gsize = 1.0 + np.abs(g).max()
    for p in range(len(solution)):
        idx = np.flatnonzero(phase_of == p)
        if idx.size == 0:
            continue
        if r.phase_moles[p] > 0:
            assert r.present[p]
            if solution[p]:
                x = n[idx] / n[idx].sum()
                pos = x > 0
                # mu_k/RT = g_k + ln x_k = A_k.lambda for every present species
                assert np.abs(red[idx][pos] + np.log(x[pos])).max() <= 1e-8 * gsize
            else:
                assert abs(red[idx[0]]) <= 1e-8 * gsize
        else:
            assert not r.present[p]
            if solution[p]:  # sum_k exp(-(g_k - A_k.lambda)) <= 1
                assert np.exp(-red[idx]).sum() <= 1 + 1e-8
            else:
                assert red[idx[0]] >= -1e-8 * gsize


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_invariants_on_cantera_systems(case):
    s = solved(case.name)
    assert s.mine.converged, s.mine.message
    check_invariants(s.A, s.g, s.phase_of, s.solution, s.b, s.mine)


def test_zero_abundance_species_absent():
    """Species containing Ar, N or Cl get n = 0 and g - A.lambda >= 100."""
    s = solved("zero-abundance-Ar-N-Cl")
    names = list(s.case.gas) + ["NH4CL(b)"]
    lam = s.mine.element_potentials
    for k, nm in enumerate(names):
        if nm in ("Ar", "N2", "HCL", "NH3", "NH4CL(b)"):
            assert s.mine.moles[k] == 0.0
            assert s.g[k] - s.A[:, k] @ lam >= 100.0
    assert not s.mine.present[1]


def test_trace_species_agree_in_log():
    """Trace species (down to 1e-25) agree with cantera vcs in ln x to 1e-4."""
    s = solved("reform-900K-1bar")
    x_mine = s.mine.moles[s.phase_of == 0] / s.mine.phase_moles[0]
    x_ref = s.ref_moles[s.phase_of == 0] / s.ref_phase_moles[0]
    assert x_mine.min() < 1e-20  # O2 is a trace species here
    sel = x_ref > 1e-25
    assert np.abs(np.log(x_mine[sel]) - np.log(x_ref[sel])).max() < 1e-4


# ----------------------------------------------------------------------------- synthetic


def test_forced_zero_by_face_of_polytope():
    """CO, CO2, O2 with C:O = 1:1 and no other carbon carrier: only CO is feasible.

    Worked by hand: C balance n_CO + n_CO2 = 1, O balance n_CO + 2 n_CO2 + 2 n_O2 = 1
    give n_CO2 = n_O2 = 0 (no zero-abundance row: found by the LP presolve)."""
    A = np.array([[1.0, 1.0, 0.0], [1.0, 2.0, 2.0]])
    g = np.array([-30.0, -50.0, 0.0])
    r = minimise_gibbs(MinimiserInputs.from_arrays(A, g, [0, 0, 0], [True], [1.0, 1.0]))
    assert r.converged, r.message
    assert np.array_equal(r.moles, [1.0, 0.0, 0.0])
    check_invariants(A, g, np.zeros(3, int), np.array([True]), np.array([1.0, 1.0]), r)


def test_huge_potentials():
    """|g| up to 5e4 and a pure phase 1e4 above the gas (worked by hand: 2 CO ->
    CO2 + C has dG/RT = +1e4, so C:O = 1:1.5 gives CO = CO2 = 0.5, no graphite)."""
    A = np.array([[1.0, 1.0, 0.0, 1.0], [1.0, 2.0, 2.0, 0.0]])
    g = np.array([-3e4, -5e4, 1e4, 0.0])
    r = minimise_gibbs(MinimiserInputs.from_arrays(A, g, [0, 0, 0, 1], [True, False], [1.0, 1.5]))
    assert r.converged, r.message
    assert np.allclose(r.moles, [0.5, 0.5, 0.0, 0.0], rtol=0, atol=1e-12)
    assert list(r.present) == [True, False]
    check_invariants(A, g, np.array([0, 0, 0, 1]), np.array([True, False]), np.array([1.0, 1.5]), r)


def test_two_species_ideal_gas_closed_form():
    """A <=> B isomers in one ideal phase: x_B/x_A = exp(g_A - g_B) (closed form)."""
    A = np.array([[1.0, 1.0]])
    g = np.array([0.0, -2.0])
    r = minimise_gibbs(MinimiserInputs.from_arrays(A, g, [0, 0], [True], [3.0]))
    assert r.converged
    xb = 1.0 / (1.0 + np.exp(-2.0))
    assert np.allclose(r.moles, [3.0 * (1 - xb), 3.0 * xb], rtol=1e-13, atol=0)
    assert r.element_potentials[0] == pytest.approx(-2.0 + np.log(xb), abs=1e-12)


def test_dependent_rows_and_scaling():
    """Duplicated and combined rows, and b scaled by 1e-20 and 1e20: same x."""
    A = np.array([[1.0, 1.0, 0.0, 1.0], [1.0, 2.0, 2.0, 0.0]])
    g = np.array([-30.0, -80.0, 0.0, 0.0])
    phase_of, sol, b = np.array([0, 0, 0, 1]), np.array([True, False]), np.array([1.0, 1.5])
    base = minimise_gibbs(MinimiserInputs.from_arrays(A, g, phase_of, sol, b))
    assert base.converged
    A3 = np.vstack([A, A[0] + 2 * A[1], A[1]])
    b3 = np.concatenate([b, [b[0] + 2 * b[1], b[1]]])
    for s in (1e-20, 1.0, 1e20):
        r = minimise_gibbs(MinimiserInputs.from_arrays(A3, g, phase_of, sol, s * b3))
        assert r.converged, r.message
        assert np.allclose(r.moles / s, base.moles, rtol=1e-10, atol=1e-14)
        check_invariants(A3, g, phase_of, sol, s * b3, r)


def test_infeasible_and_empty_do_not_raise():
    A = np.array([[1.0, 1.0], [0.0, 1.0]])
    r = minimise_gibbs(MinimiserInputs.from_arrays(A, [0.0, 0.0], [0, 0], [True], [1.0, 2.0]))  # needs n_0 = -1
    assert not r.converged and "infeasible" in r.message
    r = minimise_gibbs(MinimiserInputs.from_arrays(A, [0.0, 0.0], [0, 0], [True], [0.0, 0.0]))
    assert r.converged and np.all(r.moles == 0) and not r.present.any()


def test_bad_input_raises():
    with pytest.raises(ValueError):
        minimise_gibbs(MinimiserInputs.from_arrays(np.ones((1, 2)), [0.0], [0, 0], [True], [1.0]))
    with pytest.raises(ValueError):  # pure phase holding two species
        minimise_gibbs(MinimiserInputs.from_arrays(np.ones((1, 2)), [0.0, 1.0], [0, 0], [False], [1.0]))
    with pytest.raises(ValueError):
        minimise_gibbs(MinimiserInputs.from_arrays(np.ones((1, 2)), [0.0, np.nan], [0, 0], [True], [1.0]))


def _random_problem(seed):
    """Random formula matrix (with dependent and charge-like rows), g over 4
    decades, ideal and pure phases; b = A n0 for a random n0 >= 0."""
    rng = np.random.default_rng(seed)
    E, P = rng.integers(1, 6), rng.integers(1, 6)
    sizes = [int(rng.integers(1, 8)) if rng.random() < 0.5 else 1 for _ in range(P)]
    solution = np.array([s > 1 or rng.random() < 0.3 for s in sizes])
    phase_of = np.concatenate([[p] * s for p, s in enumerate(sizes)])
    N = phase_of.size
    A = rng.integers(0, 4, size=(E, N)).astype(float) * (rng.random((E, N)) < 0.6)
    A[:, A.sum(0) == 0] = 1.0
    if rng.random() < 0.3:
        A = np.vstack([A, A[0] + A[-1]])
    if rng.random() < 0.3:
        A = np.vstack([A, rng.integers(-2, 3, size=N).astype(float)])
    g = rng.normal(0.0, 10 ** rng.uniform(0, 4), N)
    n0 = rng.exponential(1.0, N) * (rng.random(N) < 0.5)
    if n0.sum() == 0:
        n0[0] = 1.0
    return A, g, phase_of, solution, A @ n0


@pytest.mark.parametrize("seed", range(60))
def test_invariants_on_random_problems(seed):
    A, g, phase_of, solution, b = _random_problem(seed)
    r = minimise_gibbs(MinimiserInputs.from_arrays(A, g, phase_of, solution, b))
    assert r.converged, r.message
    check_invariants(A, g, phase_of, solution, b, r)
