"""Families of ordinary cases, each compared with cantera run directly: a verdict must be
right on every ordinary case, not on chosen points.

* fuel/air products on gri30: fuels x equivalence ratio x T x P, single gas phase at fixed
  T and P -- always well posed (Duhem's theorem: F = 2 for one phase of known feed), and
  the composition equals cantera's ``equilibrate('TP', solver='vcs')`` on the same mechanism;
* steam reforming around the carbon boundary (packaged data, gas + graphite): steam-to-carbon
  ratio x T x P; whether graphite forms is decided by cantera's multiphase solver run
  directly on the same phases (graphite at the same tabulated density), and the tool's
  verdict follows: well posed when the assumed phases are those found, not confirmed when
  the case assumes gas only and graphite forms.
"""
from __future__ import annotations

import contextlib
import io
import itertools
import warnings

import numpy as np
import pytest

ct = pytest.importorskip("cantera")

from auditor.audit import audit_file  # noqa: E402
from auditor.equilibrium import density_table  # noqa: E402

# moles of O2 per mole of fuel for complete combustion (stoichiometry, common practice)
FUELS = {"H2": 0.5, "CO": 0.5, "CH4": 2.0, "C2H6": 3.5, "C3H8": 5.0, "CH3OH": 1.5}
PHI = (0.5, 1.0, 2.0)
TEMPERATURES = (300.0, 1000.0, 2200.0)
PRESSURES_ATM = (1.0, 20.0)
X_REL = 1e-5        # mole fractions above X_FLOOR agree with cantera to this (two solvers, one model)
X_FLOOR = 1e-8

GRI = """\
title: {fuel}/air, phi = {phi}, {T} K, {P} atm (test family)
system:
  mechanism: gri30.yaml
reactions: complete
feed: {{{fuel}: 1, O2: {o2:.6g}, N2: {n2:.6g}}}
specified:
  temperature: {T} K
  pressure: {P} atm
"""


@pytest.fixture(scope="module")
def gri_gas():
    return ct.Solution("gri30.yaml", transport_model=None)


@pytest.mark.parametrize("fuel", sorted(FUELS))
def test_fuel_air_products_family(tmp_path, gri_gas, fuel):
    failures = []
    for phi, T, P in itertools.product(PHI, TEMPERATURES, PRESSURES_ATM):
        o2 = FUELS[fuel] / phi
        feed = {fuel: 1.0, "O2": o2, "N2": 3.76 * o2}       # air as O2 + 3.76 N2 (common practice)
        path = tmp_path / f"{fuel}_{phi}_{T:g}_{P:g}.yaml"
        path.write_text(GRI.format(fuel=fuel, phi=phi, T=T, P=P, o2=o2, n2=3.76 * o2), encoding="utf-8")
        result = audit_file(path)
        eq = result.equilibrium
        where = f"{fuel} phi={phi} T={T} P={P}"
        if result.verdict != "well-posed":
            failures.append(f"{where}: {result.verdict}: {result.reason}")
            continue
        gri_gas.TPX = T, P * 101325.0, feed
        gri_gas.equilibrate("TP", solver="vcs")
        x = dict(eq.phases[0].mole_fractions)
        for name, ref in zip(gri_gas.species_names, gri_gas.X):
            if ref > X_FLOOR and abs(x.get(name, 0.0) - ref) > X_REL * ref:
                failures.append(f"{where}: x({name}) {x.get(name)} against cantera {ref}")
    assert failures == []


REFORMER = """\
title: steam reformer, S/C = {sc}, {T} K, {P} bar (test family)
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2]
    graphite: [C(gr)]
reactions: complete
feed: {{CH4: 1, H2O: {sc}}}
coexisting: {coexisting}
specified:
  temperature: {T} K
  pressure: {P} bar
"""


def direct_graphite(T: float, P: float, sc: float) -> float:
    """Moles of graphite at equilibrium, from cantera's multiphase solver run directly on the
    packaged gas species and C(gr) at the same tabulated density."""
    gas = ct.Solution(thermo="ideal-gas", species=[s for s in ct.Species.list_from_file("nasa_gas.yaml")
                                                   if s.name in ("CH4", "H2O", "CO", "CO2", "H2")])
    rho = density_table()["C(gr)"][0]
    cgr = next(s for s in ct.Species.list_from_file("nasa_condensed.yaml") if s.name == "C(gr)")
    data = cgr.input_data
    data["equation-of-state"] = {"model": "constant-volume", "density": f"{rho} kg/m^3"}
    graphite = ct.Solution(thermo="fixed-stoichiometry", species=[ct.Species.from_dict(data)])
    mix = ct.Mixture([(gas, 1.0), (graphite, 0.0)])
    mix.T, mix.P = T, P * 1e5
    start = {"CH4": 1.0, "H2O": sc, "CO": 1e-12, "CO2": 1e-12, "H2": 1e-12, "C(gr)": 1e-12}
    mix.species_moles = [start[n] for n in mix.species_names] if hasattr(mix, "species_names") else \
        [start[gas.species_name(k)] for k in range(gas.n_species)] + [start["C(gr)"]]
    with warnings.catch_warnings(), contextlib.redirect_stdout(io.StringIO()):
        warnings.simplefilter("ignore")
        mix.equilibrate("TP", solver="vcs", max_steps=2000, max_iter=200)
    return float(np.asarray(mix.species_moles)[-1])


@pytest.mark.parametrize("sc", [0.5, 1.0, 2.0, 3.0])
def test_reformer_carbon_boundary_family(tmp_path, sc):
    failures = []
    for T, P in itertools.product((800.0, 1000.0, 1200.0), (1.0, 5.0, 25.0)):
        carbon = direct_graphite(T, P, sc) > 1e-9
        found = ["gas", "graphite"] if carbon else ["gas"]
        where = f"S/C={sc} T={T} P={P} (cantera: {'graphite' if carbon else 'no graphite'})"
        for coexisting, expected in ((found, "well-posed"), (["gas"], "not-confirmed" if carbon else "well-posed")):
            path = tmp_path / f"r_{sc}_{T:g}_{P:g}_{len(coexisting)}.yaml"
            path.write_text(REFORMER.format(sc=sc, T=T, P=P, coexisting=f"[{', '.join(coexisting)}]"),
                            encoding="utf-8")
            result = audit_file(path)
            if result.verdict != expected:
                failures.append(f"{where}, assumed {coexisting}: {result.verdict} ({result.reason})")
            elif expected == "well-posed":
                present = set(result.equilibrium.phases_present)
                if present != set(found):
                    failures.append(f"{where}: present {sorted(present)}")
    assert failures == []
