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
from small_mechanism import MECHANISM, MECHANISM_CASE  # noqa: E402

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


def _files(folder: Path) -> dict[str, bytes]:
    return {p.name: (p.read_bytes() if p.is_file() and not p.is_symlink() else os.readlink(p).encode())
            for p in sorted(folder.iterdir()) if p.is_file() or p.is_symlink()}


def test_a_second_sweep_on_a_prefix_in_use_is_refused(tmp_path):
    """Two sweeps on one --out: the second is refused (the lock), even with --force; the first's
    files are not touched by it; a killed sweep's lock does not block the next run."""
    case, prefix = _mechanism_sweep(tmp_path), tmp_path / "s"
    journal = Path(f"{prefix}.partial.jsonl")
    first = _start_sweep(case, prefix)
    try:
        assert _wait_for(lambda: _journal_rows(journal) >= 2, 60)
        t0 = time.monotonic()
        rc, _, err = run(["sweep", case, "--vary", "temperature=1000:1100:100", "--jobs", "1", "--out", prefix,
                          "--force"], cwd=tmp_path)
        assert rc == 2 and "another sweep is writing to this output prefix" in err and f"process {first.pid}" in err
        assert time.monotonic() - t0 < 5
        assert first.poll() is None and _journal_rows(journal) >= 2
        assert not Path(f"{prefix}.csv").exists()
    finally:
        first.kill()
        first.wait()
    assert Path(f"{prefix}.lock").exists()          # left by the kill, but no longer held
    rc, _, err = run(["sweep", case, "--vary", "temperature=1000:1100:100", "--jobs", "1", "--out", prefix,
                      "--force"], cwd=tmp_path)
    assert rc in (0, 1), err
    assert len(read_csv(Path(f"{prefix}.csv"))) == 2 and not Path(f"{prefix}.lock").exists()


def test_a_full_file_system_while_journalling_is_an_input_error(tmp_path):
    """RLIMIT_FSIZE stands for a full disk: the journal cannot grow past 40 kB (its header, with
    the grid's 2001 values, takes about 20 kB).  Exit 2
    naming the journal and how to continue; the CSV of an earlier run is kept; no part file."""
    import resource
    case, prefix = _mechanism_sweep(tmp_path), tmp_path / "s"
    Path(f"{prefix}.csv").write_text("an earlier run\n", encoding="utf-8")

    def small_files():
        resource.setrlimit(resource.RLIMIT_FSIZE, (40_000, 40_000))

    t0 = time.monotonic()
    proc = subprocess.run([sys.executable, "-m", "auditor", "sweep", str(case), "--vary", LONG_GRID, "--jobs", "1",
                           "--block-size", "2", "--out", str(prefix), "--force", "--quiet"], cwd=tmp_path,
                          preexec_fn=small_files, capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2, proc.stderr
    assert "cannot write the sweep's journal: File too large" in proc.stderr and "--resume" in proc.stderr
    assert time.monotonic() - t0 < 30
    assert Path(f"{prefix}.csv").read_text(encoding="utf-8") == "an earlier run\n"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]
    lines = Path(f"{prefix}.partial.jsonl").read_text(encoding="utf-8").splitlines()
    assert len(lines) >= 2 and json.loads(lines[0])["journal"] == 2


@pytest.mark.parametrize("command", ["report", "sweep-file", "sweep-folder"])
def test_a_symlink_loop_as_output_is_refused(tmp_path, command):
    case = _mechanism_sweep(tmp_path)
    for a, b in (("loop.html", "loop.html"), ("s.csv", "t.csv"), ("t.csv", "s.csv"), ("d1", "d2"), ("d2", "d1")):
        os.symlink(b, tmp_path / a)
    before = _files(tmp_path)
    argv = {"report": ["check", case, "--report", tmp_path / "loop.html", "--force"],
            "sweep-file": ["sweep", case, "--vary", "temperature=1000:1100:100", "--jobs", "1", "--out",
                           tmp_path / "s", "--force"],
            "sweep-folder": ["sweep", case, "--vary", "temperature=1000:1100:100", "--jobs", "1", "--out",
                             tmp_path / "d1" / "s"]}[command]
    t0 = time.monotonic()
    rc, _, err = run(argv, cwd=tmp_path)
    assert rc == 2 and "symbolic link that leads nowhere" in err
    assert time.monotonic() - t0 < 5
    assert _files(tmp_path) == before


# ------------------------------------------------------------------ schedulers: every wait bounded

@pytest.mark.parametrize("address", ["local:0", "local:-1", "local:two", "tcp://127.0.0.1:0", "127.0.0.1"])
@pytest.mark.parametrize("command", ["sweep", "check"])
def test_invalid_scheduler_addresses_are_refused_at_parse_time(tmp_path, address, command):
    case = _mechanism_sweep(tmp_path)
    argv = (["sweep", case, "--vary", "temperature=1000:1100:100", "--out", tmp_path / "s"] if command == "sweep"
            else ["check", case, case])
    t0 = time.monotonic()
    rc, _, err = run(argv + ["--scheduler", address], cwd=tmp_path)
    assert rc == 2 and "--scheduler" in err and repr(address) in err
    assert time.monotonic() - t0 < 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.yaml", "mech.yaml"]


class _Listener:
    """Something on loopback that is not a Dask scheduler: silent, or answering like a web server."""

    def __init__(self, mode: str):
        import socket
        import threading
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen()
        self.port = self.sock.getsockname()[1]
        self.mode, self.held = mode, []
        threading.Thread(target=self._serve, daemon=True).start()

    def _serve(self):
        while True:
            try:
                conn, _ = self.sock.accept()
            except OSError:
                return
            if self.mode == "web":
                conn.sendall(b"HTTP/1.0 400 Bad Request\r\nContent-Length: 0\r\n\r\n" + b"x" * 64)
            self.held.append(conn)

    def close(self):
        self.sock.close()
        for c in self.held:
            c.close()


@pytest.mark.parametrize("mode", ["nothing", "silent", "web"])
def test_a_scheduler_address_where_no_scheduler_answers(tmp_path, monkeypatch, mode):
    """Nothing listening: refused at once; another service (silent, or a web server): refused
    within settings.SCHEDULER_CONNECT_S (1 s here).  No journal is left."""
    import socket
    from auditor import settings
    monkeypatch.setattr(settings, "SCHEDULER_CONNECT_S", 1.0)
    case = _mechanism_sweep(tmp_path)
    if mode == "nothing":
        s = socket.socket()
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
        s.close()
        listener = None
    else:
        listener = _Listener(mode)
        port = listener.port
    try:
        t0 = time.monotonic()
        rc, _, err = run(["sweep", case, "--vary", "temperature=1000:1100:100", "--out", tmp_path / "s",
                          "--scheduler", f"tcp://127.0.0.1:{port}"], cwd=tmp_path)
        took = time.monotonic() - t0
    finally:
        if listener:
            listener.close()
    assert rc == 2 and f"tcp://127.0.0.1:{port}" in err
    assert {"nothing": "nothing listens there", "silent": "sent no Dask greeting within 1 s",
            "web": "another service answers there"}[mode] in err
    assert took < 3
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.yaml", "mech.yaml"]


def test_a_scheduler_without_workers_is_an_error_in_bounded_time(tmp_path, monkeypatch):
    """A real Dask scheduler on loopback with no worker: an error naming it after
    settings.SCHEDULER_WORKERS_WAIT_S (1 s here), and no journal left."""
    pytest.importorskip("distributed")
    from dask.distributed import LocalCluster
    from auditor import settings
    monkeypatch.setattr(settings, "SCHEDULER_WORKERS_WAIT_S", 1.0)
    case = _mechanism_sweep(tmp_path)
    with LocalCluster(n_workers=0, processes=False, protocol="tcp://", dashboard_address=None,
                      host="127.0.0.1") as cluster:
        t0 = time.monotonic()
        rc, _, err = run(["sweep", case, "--vary", "temperature=1000:1100:100", "--out", tmp_path / "s",
                          "--scheduler", cluster.scheduler_address], cwd=tmp_path)
        took = time.monotonic() - t0
    assert rc == 2 and "has no worker after 1 s" in err and cluster.scheduler_address in err
    assert took < 6
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.yaml", "mech.yaml"]


# ------------------------------------------------------------------ sweep validates first; Ctrl-C says how to go on

@pytest.mark.parametrize("bad", ["unknown-species", "rejected-mechanism"])
def test_sweep_validates_the_case_before_creating_any_file(tmp_path, bad):
    case = _mechanism_sweep(tmp_path)
    if bad == "unknown-species":
        case.write_text(MECHANISM_CASE.replace("O2: 1}", "O2: 1, Xe: 1}"), encoding="utf-8")
    else:
        (tmp_path / "mech.yaml").write_text(MECHANISM.replace("cp0: 29.4 J/mol/K", "cp0: hot"), encoding="utf-8")
    rc_check, _, err_check = run(["check", case], cwd=tmp_path)
    t0 = time.monotonic()
    rc, _, err = run(["sweep", case, "--vary", "temperature=1000:1400:100", "--jobs", "2", "--out",
                      tmp_path / "s"], cwd=tmp_path)
    assert rc == rc_check == 2, err
    assert err.splitlines()[0] == err_check.splitlines()[0]
    assert time.monotonic() - t0 < 10
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.yaml", "mech.yaml"]


def test_an_interrupted_sweep_says_how_to_continue(tmp_path, monkeypatch):
    case = _mechanism_sweep(tmp_path)
    real = auditor.sweep.evaluate_block

    def stop_at_third(case_path, vary, points):
        if any(p.index == 2 for p in points):
            raise KeyboardInterrupt
        return real(case_path, vary, points)

    monkeypatch.setattr(auditor.sweep, "evaluate_block", stop_at_third)
    rc, _, err = run(["sweep", case, "--vary", "temperature=1000:1400:100", "--jobs", "1", "--block-size", "1",
                      "--out", tmp_path / "s"], cwd=tmp_path)
    assert rc == 130
    assert "2 of 5 points are kept in" in err and "--resume" in err
    assert not (tmp_path / "s.lock").exists()


# ------------------------------------------------------------------ wording: long values, floods, NaN, part files

def test_a_flood_of_problems_of_one_kind_is_summarised(tmp_path):
    """1000 unknown feed species: the first settings.MAX_PROBLEMS_OF_A_KIND lines, then one counting the rest."""
    from auditor import settings
    case = tmp_path / "case.yaml"
    feed = ", ".join(f"Zz{i}: 1" for i in range(1000))
    case.write_text(RATIO_ON_ABSENT.split("restrictions:")[0].replace("feed: {CH4: 1, H2O: 3}", f"feed: {{{feed}}}"),
                    encoding="utf-8")
    rc, _, err = run(["check", case])
    lines = err.strip().splitlines()
    assert rc == 2 and len(lines) == settings.MAX_PROBLEMS_OF_A_KIND + 1
    assert "unknown species 'Zz0'" in lines[0]
    assert "and 995 more of the same kind" in lines[-1]


@pytest.mark.parametrize("where", ["species", "temperature"])
def test_a_long_value_is_cut_with_its_length_stated(tmp_path, where):
    long = "x" * 5000
    text = RATIO_ON_ABSENT.split("restrictions:")[0]
    text = text.replace("N2, Ar]", f"N2, {long}]") if where == "species" else text.replace("900 K", long)
    case = tmp_path / "case.yaml"
    case.write_text(text, encoding="utf-8")
    rc, _, err = run(["check", case])
    assert rc == 2 and "(5000 characters)" in err
    assert len(err) < 400


@pytest.mark.parametrize("written,named", [(".nan", "not a number (NaN)"), (".NaN", "not a number (NaN)"),
                                           ("-.inf", "an infinity")])
def test_nan_in_thermo_data_is_named_as_such(tmp_path, written, named):
    case = _mechanism_sweep(tmp_path)
    (tmp_path / "mech.yaml").write_text(MECHANISM.replace("s0: 205.1 J/mol/K", f"s0: {written}"), encoding="utf-8")
    rc, _, err = run(["check", case], cwd=tmp_path)
    assert rc == 2 and f"mech.yaml:13: mechanism file holds {named}, written {written}" in err


def test_a_report_killed_mid_write_leaves_no_part_file(tmp_path):
    """The writer is killed (SIGKILL) after writing the text and before naming the file: nothing
    is left in the folder, not even a hidden part file (an unnamed O_TMPFILE file on Linux)."""
    script = ("import os, signal, sys\n"
              "from auditor.report import files\n"
              "os.fsync = lambda fd: os.kill(os.getpid(), signal.SIGKILL)\n"
              "files.write_atomic(sys.argv[1], 'x' * 100000)\n")
    proc = subprocess.run([sys.executable, "-c", script, str(tmp_path / "report.html")], capture_output=True, timeout=30)
    assert proc.returncode == -signal.SIGKILL
    assert list(tmp_path.iterdir()) == []


def test_an_input_error_crosses_process_boundaries_whole():
    """Errors come back from pool workers pickled: the problems survive, and so does the summary."""
    import pickle
    from auditor.errors import CaseError, Problem
    err = CaseError([Problem("f.yaml", f"unknown species 'S{i}'", f"feed.S{i}", 3) for i in range(8)])
    back = pickle.loads(pickle.dumps(err))
    assert type(back) is CaseError and back.problems == err.problems and str(back) == str(err)
    assert str(back).splitlines()[-1] == "f.yaml: ... and 3 more of the same kind (unknown species '_')"
