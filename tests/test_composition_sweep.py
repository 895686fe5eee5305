"""Feed-composition sweeps, the ternary C-H-O map, and the confirmation's fallback routes.

Everything runs through the real pipeline: the demo case ``cases/carbon_map_cho.yaml``
(gas of 14 C-H-O species plus graphite, 923 K, 1 atm, fed as graphite, H2 and O2) is swept
by the real CLI into files under a temporary directory; single points go through
``auditor.audit.counting_stages`` and ``auditor.equilibrium.confirm``.

Outside references:
* the carbon-deposition criterion (common practice in reformer and gasifier design, e.g.
  J. R. Rostrup-Nielsen, *Catalytic Steam Reforming*, 1984 -- from memory): graphite forms
  exactly when the gas, equilibrated alone, has a carbon potential above that of graphite.
  The gas-alone equilibrium comes from cantera's single-phase solver (``ThermoPhase.equilibrate``,
  a different algorithm from the multiphase routes the tool takes);
* the element-ratio feeds are checked against hand calculations;
* the count of ternary compositions, (N - 1)(N - 2)/2 inside the triangle and
  (N + 1)(N + 2)/2 with its sides, is the number of compositions of N into three parts.
"""
from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from dataclasses import replace
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from auditor import settings
from auditor.audit import counting_stages
from auditor.case import load_case
from auditor.equilibrium import ROUTE_OURS, certificate_holds, confirm
from auditor.report import style
from auditor.report.document import check_document
from auditor.sweep import parse_ternary
from auditor.report.document import equilibrium_document  # noqa: E402

from clitools import read_csv, run

REPO = Path(__file__).resolve().parents[1]
MAP_CASE = REPO / "cases" / "carbon_map_cho.yaml"
REFORMER = REPO / "cases" / "reformer_design_point.yaml"
SVG_NS = "{http://www.w3.org/2000/svg}"


def confirm_at(c: int, h: int, o: int):
    """The confirmation of the map case fed C:H:O = c:h:o atoms (graphite, H2, O2)."""
    case = load_case(MAP_CASE)
    feed = tuple((s, a) for s, a in (("C(gr)", Fraction(c)), ("H2", Fraction(h, 2)), ("O2", Fraction(o, 2))) if a)
    case = replace(case, feed=feed)
    system, _, analysis, count, spec = counting_stages(case)
    return confirm(case, system, analysis, count, spec)


# ------------------------------------------------------------------ the 171-point grid

@pytest.fixture(scope="module")
def grid20(tmp_path_factory):
    d = tmp_path_factory.mktemp("ternary")
    rc, out, err = run(["sweep", MAP_CASE, "--ternary", "C,H,O", "--divisions", "20", "--jobs", "1",
                        "--out", d / "map"], d)
    return {"rc": rc, "out": out, "err": err, "rows": read_csv(d / "map.csv"), "svg": (d / "map.svg").read_text()}


def test_ternary_grid_of_171_points_is_certified_everywhere(grid20):
    assert grid20["rc"] == 0, grid20["err"]
    rows = grid20["rows"]
    assert len(rows) == 19 * 18 // 2 == 171                    # compositions of 20 into 3 positive parts
    assert {r["certified"] for r in rows} == {"yes"}
    assert not [r for r in rows if r["verdict"] == "failed"]
    assert all(r["route"] for r in rows)
    lines = grid20["out"].splitlines()
    n_graphite = sum("graphite" in r["phases_present"].split() for r in rows)
    assert lines[0].startswith(f"171 points: {n_graphite} with gas + graphite, {171 - n_graphite} with gas, 0 failed;")
    assert lines[1].startswith("  certificate holds at 171 of 171 points; ")


def test_ternary_csv_coordinates_are_exact_atom_fractions(grid20):
    rows = grid20["rows"]
    got = [(Fraction(r["atoms[C]"]), Fraction(r["atoms[H]"]), Fraction(r["atoms[O]"])) for r in rows]
    want = [(Fraction(i, 20), Fraction(j, 20), Fraction(20 - i - j, 20)) for j in range(1, 20) for i in range(1, 20)
            if 20 - i - j >= 1]
    assert [tuple(float(x) for x in g) for g in got] == [tuple(float(x) for x in w) for w in want]
    for r in rows:
        assert float(r["temperature_K"]) == 923.0 and float(r["pressure_Pa"]) == 101325.0


CARBON_IN = {"CH4": 1, "CO": 1, "CO2": 1, "C2H4": 2, "C2H6": 2, "CH3OH": 1}
HYDROGEN_IN = {"CH4": 4, "H2O": 2, "H2": 2, "C2H4": 4, "C2H6": 6, "H": 1, "OH": 1, "HO2": 1, "H2O2": 2, "CH3OH": 4}


def test_ternary_points_hold_the_atoms_they_were_fed(grid20):
    """The map case feeds 4 mol of atoms (graphite 1, H2 1, O2 0.5); a point at atom
    fractions (c, h) must end with 4c mol of C and 4h mol of H (element balance)."""
    for r in grid20["rows"]:
        gas = float(r["moles[gas]"])
        c_found = gas * sum(float(r[f"x[gas:{sp}]"]) * k for sp, k in CARBON_IN.items()) + float(r["moles[graphite]"])
        h_found = gas * sum(float(r[f"x[gas:{sp}]"]) * k for sp, k in HYDROGEN_IN.items())
        assert c_found == pytest.approx(4 * float(r["atoms[C]"]), rel=1e-9)
        assert h_found == pytest.approx(4 * float(r["atoms[H]"]), rel=1e-9)


def _carbon_potential_gas_alone(c: float, h: float, o: float) -> float:
    """mu_C/RT of the gas equilibrated alone (no graphite allowed) at 923 K, 1 atm, from the
    element potentials that fit the chemical potentials of its species."""
    ct = pytest.importorskip("cantera")
    names = ["CH4", "H2O", "CO", "CO2", "H2", "O2", "C2H4", "C2H6", "H", "O", "OH", "HO2", "H2O2", "CH3OH", "C"]
    species = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}
    gas = ct.Solution(thermo="ideal-gas", species=[species[n] for n in names])
    # the atomic species only carry the element amounts in; equilibrium leaves them at traces
    gas.TPX = 923.0, 101325.0, {"C": c, "H": h, "O": o}
    gas.equilibrate("TP")
    mu = gas.chemical_potentials / (ct.gas_constant * 923.0)
    A = np.array([[gas.n_atoms(k, e) for e in ("C", "H", "O")] for k in range(gas.n_species)])
    keep = gas.X > 1e-200
    lam, *_ = np.linalg.lstsq(A[keep], mu[keep], rcond=None)
    return float(lam[0])


def test_graphite_present_exactly_where_the_gas_alone_is_supersaturated_in_carbon(grid20):
    ct = pytest.importorskip("cantera")
    graphite = {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}["C(gr)"]
    g_graphite_RT = graphite.thermo.h(923.0) / (ct.gas_constant * 923.0) - graphite.thermo.s(923.0) / ct.gas_constant
    checked = 0
    for r in grid20["rows"]:
        c, h, o = (float(r[f"atoms[{e}]"]) for e in "CHO")
        margin = _carbon_potential_gas_alone(c, h, o) - g_graphite_RT
        if abs(margin) < 1e-6:
            continue
        present_found = "graphite" in r["phases_present"].split()
        assert present_found == (margin > 0), (c, h, o, margin)
        checked += 1
    assert checked >= 150


def test_ternary_svg_is_a_labelled_triangle_in_our_colours(grid20):
    root = ET.fromstring(grid20["svg"])
    texts = [t.text or "" for t in root.iter(SVG_NS + "text")]
    for label in ("C", "H", "O", "atom % H", "atom % O", "atom % C", "phases present", "boundary (traced)",
                  "design point"):
        assert label in texts, label
    assert any(t.startswith("gas + graphite (") for t in texts) and any(t.startswith("gas (") for t in texts)
    assert any("923 K" in t for t in texts)
    cells = [p for p in root.iter(SVG_NS + "polygon") if p.find(SVG_NS + "title") is not None]
    assert len(cells) == 171
    assert cells[0].find(SVG_NS + "title").text.startswith("C:H:O = 1:1:18")
    palette = set(style.SERIES) | {style.INK, style.GRID, style.RULE, style.LABEL_HALO, style.BOUNDARY,
                                   style.DESIGN_POINT} | {c for pair in style.VERDICT.values() for c in pair}
    colours = set(re.findall(r'(?:fill|stroke)="(#[0-9a-f]{6})"', grid20["svg"]))
    assert colours and colours <= palette
    traced = [e for e in root.iter(SVG_NS + "polyline") if (e.findtext(SVG_NS + "title") or "") == "traced boundary"]
    assert traced, "the carbon boundary is drawn, traced between compositions"


# ------------------------------------------------------------------ fallback routes

def test_points_where_the_first_route_fails_are_solved_by_a_later_one():
    """C:H:O = 3:14:3 and 6:8:6: cantera's vcs solver raises there (cantera 3.2); the state
    must still be certified, and the route that produced it reported."""
    for point in ((3, 14, 3), (6, 8, 6)):
        eq = confirm_at(*point)
        assert certificate_holds(eq), point
        assert eq.attempts[-1] == (eq.route, "certified")
        assert [r for r, _ in eq.attempts] == list(dict.fromkeys(r for r, _ in eq.attempts)), "each route once"
        for _, outcome in eq.attempts[:-1]:
            assert outcome.startswith(("failed: ", "certificate failed: "))
        doc = equilibrium_document(eq)
        assert doc["route"] == eq.route
        assert doc["attempts"][-1] == {"route": eq.route, "outcome": "certified"}


def test_every_route_is_tried_in_order_before_not_confirmed(monkeypatch):
    """No state can meet an affinity tolerance of zero: every route is tried, in the fixed
    order, and each outcome is listed in the findings."""
    eq = confirm_at(6, 8, 6)
    monkeypatch.setattr(settings, "AFFINITY_TOLERANCE_RT", 0.0)
    bad = confirm_at(6, 8, 6)
    assert not bad.confirmed and not certificate_holds(bad) and bad.route == ""
    order = ["cantera vcs from the feed", "cantera gibbs from the feed", "cantera vcs from an interior estimate",
             "cantera gibbs from an interior estimate", "cantera vcs from a shifted estimate", ROUTE_OURS]
    # a cantera state that fails only on its affinity is also polished (Newton's method on
    # its present species): that attempt follows its route in the history
    polished = ", polished by Newton's method"
    assert [r for r, _ in bad.attempts if polished not in r] == order
    assert all(r.split(polished)[0] in order for r, _ in bad.attempts)
    listed = [f.message for f in bad.findings if f.message.startswith("route ") and polished not in f.message]
    assert [m.split(":")[0] for m in listed] == [f"route {r}" for r in order]
    assert eq.route in order


def test_check_json_carries_route_and_attempts():
    rc, out, _ = run(["check", REFORMER, "--json"])
    import json
    doc = json.loads(out)
    assert rc == 0
    assert doc["equilibrium"]["route"] == "cantera vcs from the feed"
    assert doc["equilibrium"]["attempts"] == [{"route": "cantera vcs from the feed", "outcome": "certified"}]


# ------------------------------------------------------------------ feed axes

def test_ratio_axis_feeds_match_hand_calculation(tmp_path):
    """Reformer feed CH4 1, H2O 3, N2 0.02 mol.  O/C = r with CH4 + H2O = 4 mol (N2 holds
    neither element and keeps its amount): CH4 = 4/(1 + r), H2O = 4r/(1 + r) (by hand)."""
    rc, out, err = run(["sweep", REFORMER, "--vary", "ratio.O/C=1:3:1", "--jobs", "1", "--out", "r"], tmp_path)
    assert rc == 0, err
    rows = read_csv(tmp_path / "r.csv")
    assert [float(r["ratio.O/C"]) for r in rows] == [1.0, 2.0, 3.0]
    from auditor.sweep import _ratio_feed
    formulas = {"CH4": {"C": 1, "H": 4}, "H2O": {"H": 2, "O": 1}, "N2": {"N": 2}}
    base = {"CH4": Fraction(1), "H2O": Fraction(3), "N2": Fraction(1, 50)}
    for r in (1, 2, 3):
        feed = _ratio_feed(base, formulas, [(("O", "C"), r)])
        assert feed == {"CH4": Fraction(4, 1 + r), "H2O": Fraction(4 * r, 1 + r), "N2": Fraction(1, 50)}
    # at O/C = 3 the point is the case itself: the sweep agrees with the packaged answer
    assert rows[2]["phases_present"] == "gas"


def test_two_ratio_axes_fix_the_feed_of_three_species():
    """CH4, H2O, CO2 fed 1, 1, 1 mol; O/C = 1 and H/C = 3 with 3 mol in all: by hand,
    C: a + c, H: 4a + 2b, O: b + 2c; O = C gives a = b + c, H = 3 C gives a + 2b = 3c, so
    c = 3b/2, a = 5b/2 and a + b + c = 5b = 3: a = 3/2, b = 3/5, c = 9/10 (by hand)."""
    from auditor.sweep import _ratio_feed
    formulas = {"CH4": {"C": 1, "H": 4}, "H2O": {"H": 2, "O": 1}, "CO2": {"C": 1, "O": 2}}
    feed = _ratio_feed({"CH4": Fraction(1), "H2O": Fraction(1), "CO2": Fraction(1)}, formulas,
                       [(("O", "C"), 1), (("H", "C"), 3)])
    assert feed == {"CH4": Fraction(3, 2), "H2O": Fraction(3, 5), "CO2": Fraction(9, 10)}


def test_feed_amount_axis_sets_the_amount_in_mol(tmp_path):
    rc, out, err = run(["sweep", REFORMER, "--vary", "feed.H2O=0.5:2.5:1", "--jobs", "1", "--out", "f"], tmp_path)
    assert rc == 1, err                     # at 0.5 mol of steam graphite forms, against the assumption
    rows = read_csv(tmp_path / "f.csv")
    assert [float(r["feed.H2O"]) for r in rows] == [0.5, 1.5, 2.5]
    assert [r["phases_present"] for r in rows] == ["gas graphite", "gas", "gas"]
    assert {r["certified"] for r in rows} == {"yes"}
    # element balance of the varied feed: hydrogen in the gas = 4 CH4 + 2 H2O fed
    for r, steam in zip(rows, (0.5, 1.5, 2.5)):
        h_found = float(r["moles[gas]"]) * sum(float(r[f"x[gas:{sp}]"]) * nh for sp, nh in
                                                (("CH4", 4), ("H2O", 2), ("H2", 2)))
        assert h_found == pytest.approx(4 * 1.0 + 2 * steam, rel=1e-8)
    root = ET.fromstring((tmp_path / "f.svg").read_text())
    assert "H2O in the feed, mol" in [t.text for t in root.iter(SVG_NS + "text")]


@pytest.mark.parametrize("n,edges,count", [(20, False, 171), (50, True, 1326), (3, False, 1), (2, True, 6)])
def test_ternary_grid_sizes(n, edges, count):
    assert len(parse_ternary("C,H,O", n, edges).values) == count   # compositions of n into 3 parts


# ------------------------------------------------------------------ bad input: one message, exit 2, nothing written

BAD = [
    (["--ternary", "C,H,O", "--vary", "temperature=900:1000:50"], "give --vary (one or two axes) or --ternary"),
    ([], "give --vary (one or two axes) or --ternary"),
    (["--ternary", "C,H"], "expected three different elements"),
    (["--ternary", "C,H,H"], "expected three different elements"),
    (["--ternary", "C,H,O", "--divisions", "1"], "must be between 2 and 200"),
    (["--ternary", "C,H,O", "--divisions", "2"], "no composition with every element present"),
    (["--ternary", "C,H,N"], "needs a species made of N alone"),
    (["--vary", "feed.CH3OH=1:2:1"], "'CH3OH' is not a species of the case's system"),
    (["--vary", "ratio.O=1:2:1"], "ratio.X/Y with two different elements"),
    (["--vary", "ratio.O/O=1:2:1"], "ratio.X/Y with two different elements"),
    (["--vary", "ratio.O/C=1:2:1 mol"], "an element ratio has no unit"),
    (["--vary", "ratio.O/C=-1:2:1"], "must not be negative"),
    (["--vary", "ratio.N/C=1:2:1"], "must hold both N and C"),
    (["--vary", "ratio.H/C=1:1:1"], "has H/C = 1 with every amount non-negative"),
    (["--vary", "feed.H2=1:2:1 K"], "amount"),
    (["--vary", "volume=1:2:1"], "feed.SPECIES or ratio.X/Y"),
]


@pytest.mark.parametrize("extra,message", BAD, ids=[" ".join(b[0]) or "none" for b in BAD])
def test_bad_sweep_input_is_one_message_and_exit_2(tmp_path, extra, message):
    case = MAP_CASE if "--ternary" in extra or "ratio.N/C=1:2:1" in extra else REFORMER
    rc, out, err = run(["sweep", case, *extra, "--out", "x"], tmp_path)
    assert rc == 2, (out, err)
    assert message in err and "Traceback" not in err
    assert list(tmp_path.iterdir()) == []


def test_ternary_journal_of_another_element_order_is_refused(tmp_path):
    """A journal names its map's elements: C,H,O points must not resume an H,C,O map."""
    from auditor.case import load_case
    from auditor.sweep_files import journal_header
    header = journal_header(load_case(MAP_CASE), [parse_ternary("C,H,O", 6)])   # the journal a C,H,O map writes
    (tmp_path / "m.partial.jsonl").write_text(header + "\n")
    rc, out, err = run(["sweep", MAP_CASE, "--ternary", "H,C,O", "--divisions", "6", "--out", "m", "--resume"],
                       tmp_path)
    assert rc == 2 and "cannot be resumed: it belongs to another grid" in err
    rc, out, err = run(["sweep", MAP_CASE, "--ternary", "C,H,O", "--divisions", "6", "--out", "m", "--resume",
                        "--jobs", "1"], tmp_path)
    assert rc == 0, err
    assert len(read_csv(tmp_path / "m.csv")) == 10                     # 5 * 4 / 2


def test_exact_square_solve():
    from auditor.exact import solve_rational
    assert solve_rational([[2, 1], [1, 3]], [3, 5]) == [Fraction(4, 5), Fraction(7, 5)]   # by hand
    assert solve_rational([[1, 2], [2, 4]], [1, 2]) is None                               # singular
