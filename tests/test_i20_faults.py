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
