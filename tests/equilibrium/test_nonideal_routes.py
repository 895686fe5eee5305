"""Non-ideal condensed phases whose first solve routes fail the certificate (issue 18, item 3).

Two hand-written mechanisms (tests/data/):
* ``co2_aqueous_mech.yaml``: 0.01 mol CO2 in 1 kg of water, an ideal molal solution;
  cantera's ``vcs`` stops with a 4e-4 RT affinity on the water dissociation (hydroxide at
  1.5e-10 mol), and its restarts from other estimates fail or stop at states of higher G;
* ``margules_two_liquids_mech.yaml``: two identical symmetric Margules liquids at
  W/RT = 3, fed 0.5/0.5; every cantera route stops at the x = 0.5 saddle, and only a
  restart from a perturbed estimate finds the split.
Both ended with exit 3 ("internal error: AttributeError ... 'converged'") when the
uniqueness restart asked a route solver that had moved past the feed routes.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from auditor import case as case_mod
from auditor.audit import counting_stages
from auditor.equilibrium import routes, uniqueness, workspace
from clitools import run

DATA = Path(__file__).resolve().parents[1] / "data"
AQUEOUS = DATA / "co2_aqueous_case.yaml"
TWO_LIQUIDS = DATA / "margules_two_liquids_case.yaml"
M_WATER = 0.01801528   # kg/mol, from the IUPAC standard atomic weights (common practice)


def check_json(path: Path) -> tuple[int, dict, str]:
    rc, out, err = run(["check", path, "--json"])
    return rc, json.loads(out) if out.strip() else {}, err


def phase(doc: dict, name: str) -> dict:
    return next(p for p in doc["equilibrium"]["phases"] if p["name"] == name)


def test_carbonic_acid_ph():
    rc, doc, err = check_json(AQUEOUS)
    assert rc in (0, 1) and "internal error" not in err
    assert rc == 0 and doc["verdict"] == "well-posed", doc["findings"]
    eq = doc["equilibrium"]
    assert eq["phases_present"] == ["aqueous"]
    aq = phase(doc, "aqueous")
    x = aq["mole_fractions"]
    molality_h = x["H+"] / (x["H2O(L)"] * M_WATER)          # mol per kg of water
    ph = -math.log10(molality_h)
    # 0.01 mol/kg of a weak acid with pKa1 = 6.35 (W. Stumm and J. J. Morgan, Aquatic
    # Chemistry, carbonic acid at 25 degC; from memory): pH = (pKa1 - log10 c) / 2 = 4.18;
    # the 4.19, within 0.05
    assert ph == pytest.approx(4.19, abs=0.05)
    # the same state as cantera run directly (vcs from the feed, 298.15 K, 1 atm):
    # 6.5375e-5 mol H+ in 55.508 mol of water; vcs stops 4e-4 RT short of equilibrium on
    # the water dissociation, which moves H+ by less than 1e-3 of itself
    assert x["H+"] * aq["moles"] == pytest.approx(6.5375e-5, rel=1e-3)
    # electroneutrality (a theorem of the charge balance): H+ = HCO3- + 2 CO3-2 + OH-
    assert x["H+"] == pytest.approx(x["HCO3-"] + 2 * x["CO3-2"] + x["OH-"], rel=1e-9)
    # the solver's route: vcs from the feed, polished; the first state is in the route history
    assert eq["route"].startswith("cantera vcs from the feed, polished")
    assert eq["attempts"][0]["outcome"].startswith("certificate failed: affinity")
    assert eq["max_affinity_RT"] < 1e-6


def binodal_x() -> float:
    """The A-poor branch of the symmetric regular solution's binodal at W/RT = 3: equal
    chemical potentials in both phases with x' = 1 - x give ln(x / (1 - x)) = (W/RT)(2x - 1)
    (theorem of the symmetric regular solution; scipy's brentq as the outside solver)."""
    from scipy.optimize import brentq
    return brentq(lambda x: math.log(x / (1 - x)) - 3.0 * (2 * x - 1), 1e-6, 0.4, xtol=1e-14)


def test_symmetric_margules_liquids_split_on_the_binodal():
    x_poor = binodal_x()
    assert x_poor == pytest.approx(0.0707, abs=1e-4)
    rc, doc, err = check_json(TWO_LIQUIDS)
    assert rc in (0, 1) and "internal error" not in err
    assert rc == 0 and doc["verdict"] == "well-posed", doc["findings"]
    eq = doc["equilibrium"]
    assert sorted(eq["phases_present"]) == ["liquid-1", "liquid-2"]
    xs = sorted(phase(doc, p)["mole_fractions"][f"A[{p}]"] for p in ("liquid-1", "liquid-2"))
    assert xs[0] == pytest.approx(x_poor, abs=1e-6)
    assert xs[1] == pytest.approx(1 - x_poor, abs=1e-6)
    # lever rule on the symmetric feed: half of the moles in each liquid (theorem)
    assert [phase(doc, p)["moles"] for p in ("liquid-1", "liquid-2")] == pytest.approx([0.5, 0.5], abs=1e-9)
    # the routes stopped at the x = 0.5 saddle; a restart of lower Gibbs energy was certified
    assert "restart of lower Gibbs energy" in eq["route"]
    assert eq["attempts"][0]["route"] == "cantera vcs from the feed"


def _solver(path: Path):
    case = case_mod.load_case(path)
    system, _, analysis, _, _ = counting_stages(case)
    ws = workspace.Workspace(system, analysis)
    n0 = workspace.feed_vector(case, system)
    return ws, routes.RouteSolver(ws, n0, np.ones(system.n_species, dtype=bool))


def test_a_restart_past_the_feed_routes_returns_a_state():
    # routes begun at the last cantera route (a shifted estimate): a restart still runs
    # cantera's vcs from its own start and returns what it reached, never nothing
    ws, solver = _solver(AQUEOUS)
    solver.start_at(solver.routes.index("cantera vcs from a shifted estimate"))
    start = solver._estimate("interior", 298.15)
    got = solver.solve(298.15, 101325.0, start)
    assert isinstance(got, routes.SolvedState) and got.route == "cantera vcs from a shifted estimate"
    assert solver.failures == {}          # a restart's failure is not a route failure


def test_a_restart_that_reaches_nothing_leaves_uniqueness_not_checked():
    # the carbonic-acid state of cantera's vcs; from the perturbed estimates vcs fails, so
    # with only vcs left to restart, uniqueness is neither proved (a molal solution is not
    # ideal) nor checked
    ws, solver = _solver(AQUEOUS)
    solver.start_at(solver.routes.index("cantera vcs from a shifted estimate"))
    n = np.array([55.5079346, 9.934625e-03, 6.53751972e-05, 1.54667853e-10, 6.53749488e-05, 4.6851068e-11, 0, 0])
    sol = routes.SolvedState(n, 298.15, 101325.0, "cantera vcs", True, route="cantera vcs from the feed")
    totals = n @ ws.arrays.membership
    unique, starts, how, _ = uniqueness.uniqueness(ws.arrays, solver, sol, n, totals, totals > 0, {"gas": 1.0})
    assert unique is None and starts == 1
    assert how.startswith(uniqueness.NOT_CHECKED)
