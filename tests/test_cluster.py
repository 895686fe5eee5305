"""Sweeps on every executor give the same bytes; dead workers and interruptions are survived.

A real local Dask cluster (scheduler and two worker processes on loopback) is started and
stopped by the tests.
"""
from __future__ import annotations

import os
from pathlib import Path

import cloudpickle
import pytest

from auditor import sweep
from auditor.cli import main
from auditor.executors import DaskCluster, InProcess, ProcessPool

distributed = pytest.importorskip("dask.distributed")
CASES = Path(__file__).resolve().parent.parent / "cases"
CASE = str(CASES / "reformer_design_point.yaml")
VARY = ["temperature=1000:1150:50", "pressure=10:30:10"]   # 4 x 3 = 12 points

cloudpickle.register_pickle_by_value(__import__(__name__))


def _run_cli(tmp_path, prefix, *extra):
    out = tmp_path / prefix
    argv = ["sweep", CASE, "--out", str(out), "--quiet"] + [a for v in VARY for a in ("--vary", v)] + list(extra)
    status = main(argv)
    return status, (tmp_path / f"{prefix}.csv").read_bytes()


@pytest.fixture(scope="module")
def cluster():
    c = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                 host="127.0.0.1")
    yield c
    c.close()


def test_dask_cluster_matches_in_process_byte_for_byte(tmp_path, cluster):
    status_a, in_process = _run_cli(tmp_path, "a", "--jobs", "1")
    status_b, on_dask = _run_cli(tmp_path, "b", "--scheduler", cluster.scheduler_address, "--block-size", "2")
    status_c, on_pool = _run_cli(tmp_path, "c", "--jobs", "2", "--block-size", "5")
    assert status_a == status_b == status_c
    assert in_process == on_dask == on_pool
    assert in_process.count(b"\n") == 13   # header + 12 points
    for suffix in ("_boundaries.csv", ".svg"):    # the map's traced boundaries and picture too
        assert len({(tmp_path / f"{p}{suffix}").read_bytes() for p in "abc"}) == 1, suffix


def _dies_once(marker: str, case_path, vary, points):
    """Unit of work whose first execution kills its worker process outright."""
    if not os.path.exists(marker):
        open(marker, "w").close()
        os._exit(1)
    return sweep.evaluate_block(case_path, vary, points)


def _expected(points):
    vary = ("pressure", "temperature")
    return sweep.csv_text(sweep.evaluate_block(CASE, vary, points))


def test_dead_dask_worker_is_survived(tmp_path, cluster):
    case = sweep.load_case(CASE)
    axes = [sweep.parse_vary(v) for v in VARY]
    points = sweep.grid(case, axes)
    blocks = sweep.blocks_of(points, 2, 3)
    marker = str(tmp_path / "died")
    ex = DaskCluster(cluster.scheduler_address)
    try:
        got = []
        for args, result in ex.map_blocks(_dies_once, [(marker, CASE, ("pressure", "temperature"), b) for b in blocks]):
            assert not isinstance(result, BaseException), result
            got.extend(result)
    finally:
        ex.close()
    assert os.path.exists(marker)
    assert sweep.csv_text(got) == _expected(points)


def test_dead_pool_worker_is_survived(tmp_path):
    case = sweep.load_case(CASE)
    points = sweep.grid(case, [sweep.parse_vary(v) for v in VARY])
    blocks = sweep.blocks_of(points, 2, 4)
    marker = str(tmp_path / "died")
    ex = ProcessPool(2)
    try:
        got = []
        for args, result in ex.map_blocks(_dies_once, [(marker, CASE, ("pressure", "temperature"), b) for b in blocks]):
            assert not isinstance(result, BaseException), result
            got.extend(result)
    finally:
        ex.close()
    assert sweep.csv_text(got) == _expected(points)


def _always_fails(case_path, vary, points):
    raise RuntimeError("simulated failure of this block")


def test_failing_block_is_retried_once_then_recorded(tmp_path):
    calls = []

    class Counting(InProcess):
        def map_blocks(self, fn, args_list):
            def counted(*a):
                calls.append(1)
                return _always_fails(*a)
            return super().map_blocks(counted, args_list)

    axes = [sweep.parse_vary("temperature=1000:1100:50")]
    results = sweep.run_sweep(CASE, axes, Counting(), block_size=3)
    assert len(calls) == 2                       # one try and one retry
    assert [r.verdict for r in results] == ["failed"] * 3
    assert all("simulated failure" in r.message for r in results)


def test_interrupted_sweep_resumes(tmp_path):
    status, full = _run_cli(tmp_path, "full", "--jobs", "1")

    class StopAfter(InProcess):
        def __init__(self, n):
            self.n = n

        def map_blocks(self, fn, args_list):
            for i, item in enumerate(super().map_blocks(fn, args_list)):
                if i == self.n:
                    raise KeyboardInterrupt
                yield item

    import auditor.executors as executors
    original = executors.make_executor
    executors.make_executor = lambda jobs, scheduler: StopAfter(2)
    try:
        assert main(["sweep", CASE, "--out", str(tmp_path / "part"), "--quiet", "--block-size", "2"]
                    + [a for v in VARY for a in ("--vary", v)]) == 130
    finally:
        executors.make_executor = original
    journal = tmp_path / "part.partial.jsonl"
    assert len(journal.read_text().splitlines()) == 1 + 4      # header, then two blocks of two points
    assert not (tmp_path / "part.csv").exists()                # no partial output
    status, resumed = _run_cli(tmp_path, "part", "--resume", "--jobs", "1")
    assert resumed == full
    assert not journal.exists()


def _check_json(capsys, *argv):
    status = main(["check", "--json", *argv])
    out, err = capsys.readouterr()
    return status, out, err


def test_multi_case_check_is_the_same_on_every_executor(tmp_path, capsys, cluster):
    bad = tmp_path / "bad.yaml"
    bad.write_text("system: {source: packaged, phases: {gas: [H2, O2, H2O]}}\nfeed: {H2: -1}\n", encoding="utf-8")
    cases = [str(p) for p in sorted(CASES.glob("*.yaml"))[:4]] + [str(bad)]
    runs = [_check_json(capsys, *cases, "--jobs", "1"),
            _check_json(capsys, *cases, "--jobs", "2"),
            _check_json(capsys, *cases, "--scheduler", cluster.scheduler_address)]
    assert {r[0] for r in runs} == {2}                    # the bad file sets the worst status
    assert runs[0][1] == runs[1][1] == runs[2][1]         # same JSON, in the order given
    assert all("bad.yaml" in r[2] and "feed.H2" in r[2] for r in runs)
