"""Issue 20: hostile inputs and faults around sweeps, schedulers and restrictions: each is
bounded in time, located in its message, never an internal error (exit 3), and loses or
overwrites nothing.  Every input is built in a temporary folder."""
from __future__ import annotations

import time
from pathlib import Path

import pytest

from clitools import run

RATIO_ON_ABSENT = """\
title: a ratio naming a species the feed cannot form
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2, N2, Ar]
feed: {CH4: 1, H2O: 3}
specified: {temperature: 900 K, pressure: 1 bar}
restrictions:
  - ratio: {phase: gas, numerator: NUM, denominator: DEN, value: 3}
"""


@pytest.mark.parametrize("num,den", [("H2", "Ar"), ("Ar", "H2"), ("N2", "Ar")])
@pytest.mark.parametrize("confirm", [True, False])
def test_ratio_restriction_on_a_species_that_cannot_be_present_is_inconsistent(tmp_path, num, den, confirm):
    """x(Ar) is identically zero without argon in the feed (element balance), so x(H2)/x(Ar) = 3
    cannot hold: a finding and the inconsistent verdict, not a crash (was KeyError, exit 3)."""
    case = tmp_path / "case.yaml"
    case.write_text(RATIO_ON_ABSENT.replace("NUM", num).replace("DEN", den), encoding="utf-8")
    rc, out, err = run(["check", case] + ([] if confirm else ["--no-confirm"]))
    assert rc == 1, err
    assert "Verdict: INCONSISTENT" in out
    assert "restrictions[0]" in out and "cannot hold" in out
    absent = [s for s in (num, den) if s in ("N2", "Ar")]
    assert all(s in out.split("Why:")[1].split("\n\n")[0] for s in absent)


REPO = Path(__file__).resolve().parents[1]
REFORMER = REPO / "cases" / "reformer_design_point.yaml"


@pytest.mark.parametrize("vary", ["feed.H2O=1e300:1e300:1", "feed.H2O=1e-320:1e-320:1",
                                  "ratio.O/C=1e-300:1e-300:1", "ratio.O/C=1e300:1e300:1"])
def test_sweep_values_beyond_the_arithmetic_are_refused_at_parse_time(tmp_path, vary):
    """The case file's limits on feed amounts (settings.MIN_FEED_AMOUNT, MAX_FEED_AMOUNT) hold
    for a --vary axis too: exit 2 naming the range, no file written."""
    t0 = time.perf_counter()
    rc, _, err = run(["sweep", REFORMER, "--vary", vary, "--jobs", "1", "--out", tmp_path / "s"])
    assert rc == 2 and "cannot be physical" in err and "1e-30" in err and "1e+30" in err
    assert time.perf_counter() - t0 < 5
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("temperature", ["1 K", "99999 K"])
def test_extreme_temperatures_inside_the_limits_are_no_internal_error(tmp_path, temperature):
    """At 1 K and 1e5 K (the limits, settings.MIN/MAX_TEMPERATURE_K) at 25 bar the refinement's
    iterates overflow exp(); they are refused before cantera takes them (was exit 3: 'density
    must be positive. density = -nan')."""
    case = tmp_path / "case.yaml"
    case.write_text(REFORMER.read_text(encoding="utf-8").replace("850 degC", temperature), encoding="utf-8")
    rc, out, err = run(["check", case])
    assert rc in (0, 1), err
    assert "internal error" not in err


def test_a_tiny_feed_axis_plots(tmp_path):
    """Axis values of 1e-30 mol: the plot's ticks keep twelve significant digits (were all
    rounded to zero: a division by zero while drawing, exit 3)."""
    rc, _, err = run(["sweep", REFORMER, "--vary", "feed.H2O=1e-30:2e-30:1e-30", "--jobs", "1",
                      "--out", tmp_path / "s"])
    assert rc in (0, 1), err
    assert (tmp_path / "s.svg").read_text(encoding="utf-8").count("<text") > 3
