"""Issue 20: hostile inputs and faults around sweeps, schedulers and restrictions: each is
bounded in time, located in its message, never an internal error (exit 3), and loses or
overwrites nothing.  Every input is built in a temporary folder."""
from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

import auditor.sweep
from clitools import read_csv, run

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


# ------------------------------------------------------------------ sweeps killed, resumed, contended

MECHANISM = """\
phases:
- name: gas
  thermo: ideal-gas
  elements: [H, O]
  species: [H2, O2, H2O]
  state: {T: 300, P: 1 atm}
species:
- name: H2
  composition: {H: 2}
  thermo: {model: constant-cp, T0: 298.15 K, h0: 0, s0: 130.68 J/mol/K, cp0: 28.8 J/mol/K}
- name: O2
  composition: {O: 2}
  thermo: {model: constant-cp, T0: 298.15 K, h0: 0, s0: 205.1 J/mol/K, cp0: 29.4 J/mol/K}
- name: H2O
  composition: {H: 2, O: 1}
  thermo: {model: constant-cp, T0: 298.15 K, h0: -241.8 kJ/mol, s0: 188.8 J/mol/K, cp0: 33.6 J/mol/K}
"""
MECHANISM_CASE = """\
title: mechanism case
system:
  mechanism: mech.yaml
reactions: from-mechanism
feed: {H2: 2, O2: 1}
specified: {temperature: 1000 K, pressure: 1 bar}
"""
LONG_GRID = "temperature=1000:3000:1"          # 2001 points: minutes of work, stopped after a few


def _mechanism_sweep(tmp_path: Path) -> Path:
    (tmp_path / "mech.yaml").write_text(MECHANISM, encoding="utf-8")
    case = tmp_path / "case.yaml"
    case.write_text(MECHANISM_CASE, encoding="utf-8")
    return case


def _children(pid: int) -> list[int]:
    """Processes whose parent is ``pid`` (from /proc)."""
    out = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                out.append(int(entry.name))
    return out


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def _wait_for(condition, seconds: float) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if condition():
            return True
        time.sleep(0.05)
    return condition()


def _journal_rows(journal: Path) -> int:
    try:
        return max(0, journal.read_text(encoding="utf-8").count("\n") - 1)
    except OSError:
        return 0


def _start_sweep(case: Path, prefix: Path, *extra) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "auditor", "sweep", str(case), "--vary", LONG_GRID, "--jobs", "2",
                             "--block-size", "2", "--out", str(prefix), "--quiet", *extra],
                            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            cwd=case.parent)


@pytest.fixture
def killed_sweep(tmp_path, request):
    """A --jobs 2 sweep of a mechanism case, ended by a signal once a few points are journalled;
    returns (case, prefix, workers it had)."""
    sig = getattr(request, "param", signal.SIGKILL)
    case, prefix = _mechanism_sweep(tmp_path), tmp_path / "s"
    journal = Path(f"{prefix}.partial.jsonl")
    proc = _start_sweep(case, prefix)
    try:
        assert _wait_for(lambda: _journal_rows(journal) >= 4, 60), proc.stderr.read().decode() if proc.poll() else ""
        workers = _children(proc.pid)
        assert len([w for w in workers if _alive(w)]) >= 2
        os.kill(proc.pid, sig)
        proc.wait(10)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    request.addfinalizer(lambda: _kill_survivors(workers))
    return case, prefix, workers


def _kill_survivors(pids) -> None:
    """A failing test leaves no process behind (these are the workers this test started)."""
    for pid in pids:
        if _alive(pid):
            os.kill(pid, signal.SIGKILL)


@pytest.mark.parametrize("killed_sweep", [signal.SIGKILL, signal.SIGTERM], indirect=True)
def test_workers_end_with_a_killed_sweep(killed_sweep):
    """No orphan: each worker sees its parent die (PR_SET_PDEATHSIG, else a poll of getppid)."""
    _, _, workers = killed_sweep
    t0 = time.monotonic()
    assert _wait_for(lambda: not any(_alive(w) for w in workers), 5), "a worker outlived its sweep"
    assert time.monotonic() - t0 < 5


@pytest.mark.parametrize("edit,named", [("mech.yaml", "mechanism file"), ("case.yaml", "case file")])
def test_resume_after_an_input_changed_is_refused_naming_it(killed_sweep, edit, named):
    case, prefix, _ = killed_sweep
    journal = Path(f"{prefix}.partial.jsonl")
    before = journal.read_bytes()
    path = case.parent / edit
    original = path.read_text(encoding="utf-8")
    path.write_text(original.replace("cp0: 33.6", "cp0: 35.0").replace("title: mechanism case", "title: edited"),
                    encoding="utf-8")
    t0 = time.monotonic()
    rc, _, err = run(["sweep", case, "--vary", LONG_GRID, "--jobs", "1", "--out", prefix, "--resume"], cwd=case.parent)
    assert rc == 2 and "cannot be resumed" in err and named in err and edit in err
    assert time.monotonic() - t0 < 10
    assert journal.read_bytes() == before, "the journal is kept as it was"
    assert not Path(f"{prefix}.csv").exists()


def test_resume_refuses_a_damaged_row(killed_sweep, monkeypatch):
    case, prefix, _ = killed_sweep
    journal = Path(f"{prefix}.partial.jsonl")
    lines = journal.read_text(encoding="utf-8").splitlines(keepends=True)
    row = json.loads(lines[2])
    row["verdict"] = "well-posed" if row["verdict"] != "well-posed" else "inconsistent"
    lines[2] = json.dumps(row, sort_keys=True) + "\n"          # the old row hash kept: it no longer matches
    journal.write_text("".join(lines), encoding="utf-8")
    before = journal.read_bytes()
    rc, _, err = run(["sweep", case, "--vary", LONG_GRID, "--jobs", "1", "--out", prefix, "--resume"], cwd=case.parent)
    assert rc == 2 and "line 3" in err and "damaged" in err
    assert journal.read_bytes() == before


def test_resume_after_a_kill_continues_when_nothing_changed(killed_sweep, monkeypatch):
    """The journalled rows are kept (their points not recomputed) and the grid is finished."""
    case, prefix, _ = killed_sweep
    journal = Path(f"{prefix}.partial.jsonl")
    kept = {json.loads(ln)["index"] for ln in journal.read_text(encoding="utf-8").splitlines()[1:]
            if ln.endswith("}")}
    n = max(kept) + 5
    seen = []
    real = auditor.sweep.evaluate_block
    monkeypatch.setattr(auditor.sweep, "evaluate_block", lambda c, v, pts: (seen.extend(p.index for p in pts),
                                                                            real(c, v, pts))[1])
    # only the journalled points and a few more are wanted here: the grid is cut after them
    monkeypatch.setattr(auditor.sweep, "grid", _first_points(auditor.sweep.grid, n))
    rc, _, err = run(["sweep", case, "--vary", LONG_GRID, "--jobs", "1", "--out", prefix, "--resume"], cwd=case.parent)
    assert rc in (0, 1), err
    assert sorted(seen) == sorted(set(range(n)) - kept), "journalled points are not recomputed"
    assert [int(r["index"]) for r in read_csv(Path(f"{prefix}.csv"))] == list(range(n))
    assert not journal.exists() and not Path(f"{prefix}.lock").exists()


def _first_points(grid, n):
    def first(case, axes):
        return grid(case, axes)[:n]
    return first
