"""Hostile mechanism files are refused before any parser expands them: exit 2, one message
naming the limit (or what the file is), within a bounded time; nothing is written."""
from __future__ import annotations

import os
import time

import pytest

pytest.importorskip("cantera")

from auditor import settings  # noqa: E402
from auditor.system.file_guard import check_text  # noqa: E402

from clitools import run  # noqa: E402
from small_mechanism import MECHANISM  # noqa: E402

REFUSAL_SECONDS = 2.0     # the bound for a refusal, whatever the file



def alias_bomb() -> str:
    # ten levels of ten references: 1e10 leaves once expanded, 3.5 KB on disk
    lines = ["a0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    for i in range(1, 10):
        lines.append(f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]")
    return "\n".join(lines) + "\n" + MECHANISM


def check_case(tmp_path, mechanism: str) -> os.PathLike:
    case = tmp_path / "case.yaml"
    case.write_text(f"system: {{mechanism: {mechanism}}}\nreactions: complete\nfeed: {{H2: 2, O2: 1}}\n"
                    "specified: {temperature: 1500 K, pressure: 1 atm}\n", encoding="utf-8")
    return case


def refused(args, tmp_path, *words):
    before = sorted(p.name for p in tmp_path.iterdir())
    t0 = time.perf_counter()
    code, out, err = run(args)
    elapsed = time.perf_counter() - t0
    assert code == 2, (code, out, err)
    assert "Traceback" not in err and err.count("\n") <= 2
    for w in words:
        assert w in err, err
    assert elapsed < REFUSAL_SECONDS, elapsed
    assert sorted(p.name for p in tmp_path.iterdir()) == before      # nothing written
    return err


def test_a_legitimate_mechanism_passes(tmp_path):
    mech = tmp_path / "small.yaml"
    mech.write_text(MECHANISM, encoding="utf-8")
    code, out, err = run(["check", str(check_case(tmp_path, "small.yaml"))])
    assert code == 0, err


def test_alias_bomb_is_refused_quickly(tmp_path):
    (tmp_path / "bomb.yaml").write_text(alias_bomb(), encoding="utf-8")
    refused(["reactions", str(tmp_path / "bomb.yaml")], tmp_path, "MAX_MECHANISM_NODES", "alias")
    refused(["check", str(check_case(tmp_path, "bomb.yaml"))], tmp_path, "MAX_MECHANISM_NODES")


@pytest.mark.parametrize("nesting", ["[" * 5000 + "]" * 5000, "{a: " * 5000 + "1" + "}" * 5000,
                                     "\n" + "- " * 5000 + "x"])
def test_deep_nesting_is_refused(tmp_path, nesting):
    (tmp_path / "deep.yaml").write_text(f"deep: {nesting}\n" + MECHANISM, encoding="utf-8")
    refused(["reactions", str(tmp_path / "deep.yaml")], tmp_path, "MAX_MECHANISM_DEPTH")


def test_file_above_the_size_limit_is_refused_unread(tmp_path):
    big = tmp_path / "big.yaml"
    with big.open("w", encoding="utf-8") as fh:
        fh.write(MECHANISM)
        line = "# " + "x" * 1021 + "\n"
        for _ in range(50 * 1024):            # 50 MB of comment
            fh.write(line)
    refused(["reactions", str(big)], tmp_path, "MAX_MECHANISM_FILE_BYTES", "bytes")


def test_twenty_thousand_species_are_refused(tmp_path):
    many = MECHANISM + "".join(f"- name: X{i}\n  composition: {{H: 2}}\n  thermo: {{model: constant-cp}}\n"
                            for i in range(20_000))
    (tmp_path / "many.yaml").write_text(many, encoding="utf-8")
    refused(["reactions", str(tmp_path / "many.yaml")], tmp_path, "MAX_MECHANISM_SPECIES", "20,00")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no named pipes on this platform")
def test_special_files_are_named_for_what_they_are(tmp_path):
    os.mkfifo(tmp_path / "pipe.yaml")
    refused(["reactions", str(tmp_path / "pipe.yaml")], tmp_path, "named pipe (FIFO)")
    (tmp_path / "dir.yaml").mkdir()
    refused(["reactions", str(tmp_path / "dir.yaml")], tmp_path, "is a directory")
    os.symlink(tmp_path / "loop_a.yaml", tmp_path / "loop_b.yaml")
    os.symlink(tmp_path / "loop_b.yaml", tmp_path / "loop_a.yaml")
    refused(["reactions", str(tmp_path / "loop_a.yaml")], tmp_path, "symbolic-link loop")
    if os.path.exists("/dev/null"):
        refused(["reactions", "/dev/null"], tmp_path, "character device")


def test_the_guard_costs_little_on_the_largest_shipped_mechanism():
    import cantera as ct
    from pathlib import Path
    path = Path(ct.get_data_directories()[-1]) / "example_data" / "n-hexane-NUIG-2015.yaml"
    text = path.read_text(encoding="utf-8")
    t0 = time.perf_counter()
    check_text(path, text)                     # 1268 species, 5336 reactions: within every limit
    assert time.perf_counter() - t0 < 0.5
    assert settings.MAX_MECHANISM_SPECIES > 1268 and settings.MAX_MECHANISM_REACTIONS > 5336
