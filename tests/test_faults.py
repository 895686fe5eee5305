"""Faults from outside: files that change under the tool, disks that fill up, interruptions,
and hostile input (design §4-§6: nothing the user has is ever damaged; exit 2 with one
clear message; a limit that refuses an input is named).
"""
from __future__ import annotations

import errno
import os
import re
import time
from pathlib import Path

import pytest

import auditor.audit
import auditor.case
from auditor import settings
from auditor.case import load_case
from auditor.system import build_system
from auditor.cli import main
from auditor.errors import InputError
from small_mechanism import MECHANISM, MECHANISM_CASE  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
DEMO = (REPO / "cases" / "reformer_design_point.yaml").read_text(encoding="utf-8")



def run_main(argv, capsys):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def listing(directory: Path) -> dict[str, bytes]:
    """Every file in a directory (hidden ones included) with its bytes."""
    return {p.name: p.read_bytes() for p in sorted(directory.iterdir()) if p.is_file()}


@pytest.fixture
def mech_case(tmp_path):
    (tmp_path / "mech.yaml").write_text(MECHANISM, encoding="utf-8")
    case = tmp_path / "case.yaml"
    case.write_text(MECHANISM_CASE, encoding="utf-8")
    return case


@pytest.fixture
def demo(tmp_path):
    p = tmp_path / "case.yaml"
    p.write_text(DEMO, encoding="utf-8")
    return p


# ------------------------------------------------------------------ a mechanism that changes under us

def test_mechanism_builds_when_left_alone(mech_case):
    system = build_system(load_case(mech_case))
    assert [p.name for p in system.phases] == ["gas"] and len(system.reactions) == 0


def test_mechanism_deleted_after_loading(mech_case):
    case = load_case(mech_case)
    (mech_case.parent / "mech.yaml").unlink()
    with pytest.raises(InputError) as info:
        build_system(case)
    msg = str(info.value)
    assert "mech.yaml" in msg and "not found" in msg
    assert "Traceback" not in msg and "CanteraError" not in msg and len(msg.splitlines()) == 1
    assert not re.search(r"mech\.yaml:\d", msg), msg        # no line number invented for the mechanism
    assert str(mech_case) in msg                           # the case that names it


def test_mechanism_is_never_taken_from_the_current_directory(tmp_path, monkeypatch):
    (tmp_path / "sub").mkdir()
    (tmp_path / "mech.yaml").write_text(MECHANISM, encoding="utf-8")      # in the cwd, not beside the case
    case = tmp_path / "sub" / "case.yaml"
    case.write_text(MECHANISM_CASE, encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError, match="not found"):
        load_case(case)


def test_mechanism_replaced_by_garbage_after_loading(mech_case):
    case = load_case(mech_case)
    (mech_case.parent / "mech.yaml").write_text(MECHANISM.replace("species: [H2, O2, H2O]",
                                                                  "species: [H2, O2, H2O, XYZ]"), encoding="utf-8")
    with pytest.raises(InputError) as info:
        build_system(case)
    msg = str(info.value)
    assert "cantera cannot build phase 'gas'" in msg and "XYZ" in msg   # cantera's own words
    assert "Traceback" not in msg


def test_mechanism_deleted_during_a_cli_run(mech_case, monkeypatch, capsys):
    real = auditor.case.load_case

    def load_then_delete(path):
        case = real(path)
        (Path(path).parent / "mech.yaml").unlink()
        return case

    monkeypatch.setattr(auditor.case, "load_case", load_then_delete)
    rc, out, err = run_main(["check", "--no-confirm", mech_case], capsys)
    assert rc == 2
    assert err.startswith("auditor: error: ") and "mech.yaml" in err and "not found" in err
    assert "Traceback" not in err and "internal error" not in err


# ------------------------------------------------------------------ a report write that fails

def _enospc(*args, **kwargs):
    raise OSError(errno.ENOSPC, "No space left on device")


@pytest.mark.parametrize("where", ["os.replace", "os.fsync"])
@pytest.mark.parametrize("existing", [False, True], ids=["new", "over-existing-with-force"])
def test_report_write_fails_no_space(where, existing, demo, tmp_path, monkeypatch, capsys):
    report = tmp_path / "audit.md"
    if existing:
        report.write_text("the previous report\n", encoding="utf-8")
    before = listing(tmp_path)
    monkeypatch.setattr(os, where.split(".")[1], _enospc)
    rc, out, err = run_main(["check", "--no-confirm", demo, "--report", report] + (["--force"] if existing else []),
                            capsys)
    monkeypatch.undo()
    assert rc == 2
    assert "No space left on device" in err and str(report) in err
    assert "Traceback" not in err
    assert listing(tmp_path) == before                     # no partial or temporary file; the old one intact


def test_report_written_atomically_when_all_is_well(demo, tmp_path, capsys):
    report = tmp_path / "audit.json"
    rc, out, err = run_main(["check", "--no-confirm", demo, "--report", report], capsys)
    assert rc == 0 and report.is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["audit.json", "case.yaml"]


# ------------------------------------------------------------------ never over the user's files

@pytest.mark.parametrize("suffix", [".md", ".html", ".json"])
def test_existing_report_not_overwritten_without_force(suffix, demo, tmp_path, capsys):
    report = tmp_path / f"audit{suffix}"
    report.write_bytes(b"my own notes \xff\x00 keep me\n")
    stat = report.stat()
    rc, out, err = run_main(["check", "--no-confirm", demo, "--report", report], capsys)
    assert rc == 2
    assert f"{report}: the file exists; pass --force to overwrite it" in err
    assert report.read_bytes() == b"my own notes \xff\x00 keep me\n"
    assert report.stat().st_mtime_ns == stat.st_mtime_ns
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["case.yaml", report.name])


def test_existing_report_kept_when_the_case_is_broken_even_with_force(tmp_path, capsys):
    case = tmp_path / "broken.yaml"
    case.write_text(DEMO.replace("25 bar", "0 bar"), encoding="utf-8")
    report = tmp_path / "audit.md"
    report.write_text("previous\n", encoding="utf-8")
    rc, out, err = run_main(["check", "--no-confirm", case, "--report", report, "--force"], capsys)
    assert rc == 2 and "pressure must be positive" in err
    assert report.read_text(encoding="utf-8") == "previous\n"


@pytest.mark.parametrize("spelling", ["same", "dotted", "symlink"])
@pytest.mark.parametrize("force", [False, True], ids=["", "force"])
def test_report_over_the_input_case_is_refused(spelling, force, tmp_path, capsys):
    case = tmp_path / "case.md"        # a case file with a report suffix: the report would replace it
    case.write_text(DEMO, encoding="utf-8")
    target = {"same": case, "dotted": tmp_path / "sub" / ".." / "case.md", "symlink": tmp_path / "link.md"}[spelling]
    (tmp_path / "sub").mkdir()
    if spelling == "symlink":
        target.symlink_to(case)
    before = listing(tmp_path)
    rc, out, err = run_main(["check", "--no-confirm", case, "--report", target] + (["--force"] if force else []),
                            capsys)
    assert rc == 2
    assert "refusing to write the report over an input file" in err
    assert case.read_text(encoding="utf-8") == DEMO
    assert listing(tmp_path) == before


def test_several_cases_give_one_report_never_over_an_input(demo, tmp_path, capsys):
    # several cases write one comparison report (issue 24); an input is still never overwritten
    rc, out, err = run_main(["check", demo, demo, "--report", tmp_path / "r.md"], capsys)
    assert rc == 0 and "## Comparison" in (tmp_path / "r.md").read_text(encoding="utf-8")
    rc, out, err = run_main(["check", demo, str(tmp_path / "r.md"), "--report", tmp_path / "r.md", "--force"], capsys)
    assert rc == 2 and "refusing to write the report over an input file" in err


# ------------------------------------------------------------------ interruptions

def test_keyboard_interrupt_during_the_audit(demo, tmp_path, monkeypatch, capsys):
    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(auditor.audit, "run", interrupted)
    report = tmp_path / "audit.html"
    before = listing(tmp_path)
    rc, out, err = run_main(["check", demo, "--report", report], capsys)
    assert rc == 130
    assert "interrupted" in err and "Traceback" not in err
    assert not report.exists() and listing(tmp_path) == before


def test_keyboard_interrupt_while_writing_the_report(demo, tmp_path, monkeypatch, capsys):
    report = tmp_path / "audit.md"
    report.write_text("previous\n", encoding="utf-8")
    before = listing(tmp_path)

    def interrupted(fd):
        raise KeyboardInterrupt

    monkeypatch.setattr(os, "fsync", interrupted)
    rc, out, err = run_main(["check", "--no-confirm", demo, "--report", report, "--force"], capsys)
    monkeypatch.undo()
    assert rc == 130 and "interrupted" in err
    assert listing(tmp_path) == before                     # no .part file; the previous report untouched


# ------------------------------------------------------------------ hostile input

def alias_bomb(levels: int = 9, width: int = 10, key: str = "title", mapping: bool = False) -> str:
    """'Billion laughs': ``width ** levels`` leaves from a few hundred bytes of aliases."""
    if mapping:
        rows = ["x0: &a0 {" + ", ".join(f"k{j}: lol" for j in range(width)) + "}"]
        rows += [f"x{i}: &a{i} {{" + ", ".join(f"k{j}: *a{i - 1}" for j in range(width)) + "}"
                 for i in range(1, levels)]
    else:
        rows = ["x0: &a0 [" + ", ".join(["lol"] * width) + "]"]
        rows += [f"x{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * width) + "]" for i in range(1, levels)]
    # the anchors sit under an unknown key so that the rest is a plausible case
    text = "anchors:\n" + "".join(f"  {r}\n" for r in rows)
    bomb = f"*a{levels - 1}"
    return text + {
        "title": f"title: {bomb}\n" + DEMO.split("title:", 1)[1].split("\n", 1)[1],
        "reactions": DEMO.replace("reactions: complete", f"reactions: {bomb}"),
        "feed": DEMO.replace("H2O: 3.0,", f"H2O: {bomb},"),
        "phases": DEMO.replace("graphite: [C(gr)]", f"graphite: {bomb}"),
        "claims": DEMO.replace("phases-present: [gas]", f"phases-present: {bomb}"),
        "restrictions": DEMO.replace("claims:", f"restrictions: {bomb}\nclaims:"),
    }[key]


@pytest.fixture
def warm(capsys, tmp_path):
    """Import everything the CLI needs once, so that timings measure the refusal alone."""
    p = tmp_path / "warm.yaml"
    p.write_text("title: [x\n", encoding="utf-8")
    main(["check", str(p)])
    capsys.readouterr()


def timed(argv, capsys):
    t0 = time.perf_counter()
    rc = main([str(a) for a in argv])
    elapsed = time.perf_counter() - t0
    out, err = capsys.readouterr()
    return rc, err, elapsed


@pytest.mark.parametrize("key", ["title", "reactions", "feed", "phases", "claims", "restrictions"])
def test_billion_laughs_refused_quickly(key, warm, tmp_path, capsys):
    p = tmp_path / "bomb.yaml"
    p.write_text(alias_bomb(key=key), encoding="utf-8")
    assert p.stat().st_size < 3000                          # 10**9 leaves from under 3 kB
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2, err
    assert elapsed < 1.0, elapsed
    assert f"more than {settings.MAX_YAML_NODES} YAML nodes" in err and str(p) in err
    assert len(err) < 2000 and "Traceback" not in err


@pytest.mark.parametrize("key", ["title", "reactions", "feed", "phases", "claims", "restrictions"])
def test_billion_laughs_of_mappings_refused_quickly(key, warm, tmp_path, capsys):
    """Mapping values are never expanded, so the bomb must cost nothing -- and no message may print the
    node graph (it once did: 10**5 nodes -> a 12 MB message, 10**6 -> 8 s and 0.5 GB)."""
    p = tmp_path / "bomb.yaml"
    p.write_text(alias_bomb(levels=5, key=key, mapping=True), encoding="utf-8")   # 10**5 leaves: safe to run
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2
    assert elapsed < 1.0, elapsed
    assert len(err) < 5000, len(err)
    assert "Node(" not in err and "Traceback" not in err


def test_over_large_file_refused(warm, tmp_path, capsys):
    p = tmp_path / "big.yaml"
    p.write_text(DEMO + "#" + "x" * settings.MAX_CASE_FILE_BYTES + "\n", encoding="utf-8")
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2 and elapsed < 1.0
    assert re.search(rf"^auditor: error: {re.escape(str(p))}: .*limit of {settings.MAX_CASE_FILE_BYTES}\b", err), err


def test_over_large_file_refused_when_stat_does_not_tell_the_size(warm, tmp_path, capsys, monkeypatch):
    p = tmp_path / "big.yaml"
    p.write_text(DEMO + "#" + "x" * settings.MAX_CASE_FILE_BYTES + "\n", encoding="utf-8")
    real_stat = Path.stat

    def stat(self, *args, **kwargs):          # what stat says of a character device or a pipe
        st = real_stat(self, *args, **kwargs)
        if self == p:
            return os.stat_result((st.st_mode, st.st_ino, st.st_dev, st.st_nlink, st.st_uid, st.st_gid, 0,
                                   st.st_atime, st.st_mtime, st.st_ctime))
        return st

    monkeypatch.setattr(Path, "stat", stat)
    rc, err, elapsed = timed(["check", "--no-confirm", p], capsys)
    monkeypatch.undo()
    assert rc == 2
    assert f"limit of {settings.MAX_CASE_FILE_BYTES}" in err, err


@pytest.mark.parametrize("where", ["title", "reactions", "phases"])
def test_deep_list_nesting_refused(where, warm, tmp_path, capsys):
    deep = "[" * 40 + "x" + "]" * 40
    text = {"title": DEMO.replace("title: Kestrel", f"title: {deep}\n#"),
            "reactions": DEMO.replace("reactions: complete", f"reactions: {deep}"),
            "phases": DEMO.replace("graphite: [C(gr)]", f"graphite: {deep}")}[where]
    p = tmp_path / "deep.yaml"
    p.write_text(text, encoding="utf-8")
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2 and elapsed < 1.0
    assert f"nests deeper than {settings.MAX_YAML_DEPTH} levels" in err and str(p) in err


def test_deep_mapping_nesting_refused(warm, tmp_path, capsys):
    p = tmp_path / "deep.yaml"
    p.write_text(DEMO.replace("title: Kestrel", "title: " + "{a: " * 60 + "1" + "}" * 60 + "\n#"), encoding="utf-8")
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2
    assert f"nests deeper than {settings.MAX_YAML_DEPTH} levels" in err, err[:300]


@pytest.mark.parametrize("opening, closing", [("[", "]"), ("{a: ", "}")], ids=["lists", "mappings"])
def test_very_deep_nesting_refused(opening, closing, warm, tmp_path, capsys):
    p = tmp_path / "deep.yaml"
    p.write_text("title: " + opening * 3000 + "x" + closing * 3000 + "\n", encoding="utf-8")
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2, err
    assert f"nests deeper than {settings.MAX_YAML_DEPTH} levels" in err


def test_too_many_reactions_refused(warm, tmp_path, capsys):
    n = settings.MAX_CASE_REACTIONS + 1
    p = tmp_path / "many.yaml"
    p.write_text(DEMO.replace("reactions: complete", "reactions:\n" + "  - CO + H2O <=> CO2 + H2\n" * n),
                 encoding="utf-8")
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2 and elapsed < 2.0
    assert f"{n} reactions is more than the limit of {settings.MAX_CASE_REACTIONS}" in err


def test_too_many_species_and_phases_refused(warm, tmp_path, capsys):
    phases = "".join(f"    p{i}: [S{i}]\n" for i in range(settings.MAX_CASE_PHASES + 1))
    species = "    big: [" + ", ".join(f"X{i}" for i in range(settings.MAX_CASE_SPECIES)) + "]\n"
    p = tmp_path / "wide.yaml"
    p.write_text(DEMO.replace("    graphite: [C(gr)]\n", "    graphite: [C(gr)]\n" + phases + species),
                 encoding="utf-8")
    rc, err, elapsed = timed(["check", p], capsys)
    assert rc == 2 and elapsed < 2.0
    assert f"phases is more than the limit of {settings.MAX_CASE_PHASES}" in err
    assert f"species is more than the limit of {settings.MAX_CASE_SPECIES}" in err


@pytest.mark.parametrize("name", ['"mech\\0.yaml"', "x" * 5000 + ".yaml"], ids=["nul-byte", "too-long"])
def test_hostile_mechanism_path_is_an_input_error(name, tmp_path, capsys):
    p = tmp_path / "case.yaml"
    p.write_text(MECHANISM_CASE.replace("mech.yaml", name), encoding="utf-8")
    rc, out, err = run_main(["check", p], capsys)
    assert rc == 2, err
    assert f"{p}:3:" in err and "system.mechanism" in err
