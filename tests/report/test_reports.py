"""Filed reports of ``auditor check --report`` (.html, .md, .json) and ``check --json``.

Every demo case in ``cases/`` is rendered through the real CLI (``auditor.cli.main``) into
real files under a temporary directory, and each file is parsed back with an independent
reader: the HTML with the standard library's ``html.parser``, the JSON against the JSON
Schema shipped in the package (``auditor/data/check.schema.json``, Draft 2020-12), the
Markdown with a small table/heading reader written here (GFM pipe tables).

The refusals of ``--report`` (existing file, the case file itself, unknown suffix,
unwritable directory) and the determinism of the outputs are tested on one case each.
"""
from __future__ import annotations

import errno
import hashlib
import html
import json
import os
import re
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from importlib import resources
from pathlib import Path

import jsonschema
import pytest

from clitools import run

REPO = Path(__file__).resolve().parents[2]
CASES = sorted((REPO / "cases").glob("*.yaml"))
CASE_IDS = [p.stem for p in CASES]
DESIGN = REPO / "cases" / "reformer_design_point.yaml"       # well posed, solved equilibrium
OVERSPEC = REPO / "cases" / "lime_kiln_overspecified.yaml"   # exit status 1

# Section titles of a filed report and the ids the HTML gives them (title, lower case, '-').
SECTIONS = ("Verdict", "Case as entered", "Provenance", "System", "Reactions", "Phase rule", "Specification audit",
            "Equilibrium and certificate", "Claims", "Assumptions", "Findings", "Cautions", "Sign-off")
SECTION_IDS = ("verdict", "case-as-entered", "provenance", "system", "reactions", "phase-rule", "specification-audit",
               "equilibrium-and-certificate", "claims", "assumptions", "findings", "cautions", "sign-off")
# the Markdown report moves the embedded case file to an appendix just before the sign-off
MD_HEADINGS = SECTIONS[:-1] + ("Appendix: case file", "Sign-off")
CONTEXT_KEYS = ("inputs", "versions", "generated")   # only in filed reports (check_document with_context)

# HTML void elements (WHATWG HTML, "void elements"): never closed.
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}
ANSI = re.compile(r"\x1b\[")


def schema_validator() -> jsonschema.Draft202012Validator:
    text = (resources.files("auditor") / "data" / "check.schema.json").read_text(encoding="utf-8")
    schema = json.loads(text)
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


VALIDATOR = schema_validator()


def schema_errors(doc) -> list[str]:
    return [f"{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in VALIDATOR.iter_errors(doc)]


def expected_status(doc: dict) -> int:
    """Design §4: 0 when well posed and every claim holds, else 1."""
    return 0 if doc["verdict"] == "well-posed" and all(c["held"] is not False for c in doc["claims"]) else 1


def solved(doc: dict) -> bool:
    eq = doc["equilibrium"]
    return eq is not None and bool(eq.get("solved")) and any(p["moles"] > 0 for p in eq["phases"])


# ------------------------------------------------------------------ readers

class HTMLChecker(HTMLParser):
    """Collects structure errors, ids, scripts, external references and where each <svg> sits."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.tags: dict[str, int] = {}
        self.ids: list[str] = []
        self.external: list[str] = []
        self.script_like: list[str] = []
        self.section: str | None = None
        self.svg_labels: dict[str, list[str]] = {}   # section id -> aria-labels of top-level <svg>
        self.style_text: list[str] = []
        self.text: dict[str, list[str]] = {}          # tag -> text directly inside it
        self.doctype = None

    def handle_decl(self, decl):
        self.doctype = decl

    def _attrs(self, tag, attrs):
        self.tags[tag] = self.tags.get(tag, 0) + 1
        d = dict(attrs)
        if "id" in d:
            self.ids.append(d["id"])
        for k, v in attrs:
            v = (v or "").strip().lower()
            if k in ("src", "href", "xlink:href", "action", "data", "srcset", "poster", "background") and \
                    (v.startswith(("http:", "https:", "//", "ftp:")) or "://" in v):
                self.external.append(f"<{tag} {k}={v}>")
            if k.startswith("on") or v.startswith("javascript:"):
                self.script_like.append(f"<{tag} {k}={v}>")
        if tag == "section":
            self.section = d.get("id")
        if tag == "svg" and "svg" not in self.stack:
            self.svg_labels.setdefault(self.section, []).append(d.get("aria-label", ""))

    def handle_starttag(self, tag, attrs):
        self._attrs(tag, attrs)
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        # <rect .../> inside SVG (foreign content), or <meta/>: opened and closed at once
        self._attrs(tag, attrs)

    def handle_endtag(self, tag):
        if tag in VOID:
            self.errors.append(f"end tag </{tag}> for a void element")
            return
        if not self.stack:
            self.errors.append(f"</{tag}> with nothing open")
        elif self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes <{self.stack[-1]}> (open: {self.stack})")
        else:
            self.stack.pop()
            if tag == "section":
                self.section = None

    def handle_data(self, data):
        if self.stack:
            self.text.setdefault(self.stack[-1], []).append(data)
            if self.stack[-1] == "style":
                self.style_text.append(data)

    def close(self):
        super().close()
        if self.stack:
            self.errors.append(f"left open at the end: {self.stack}")


def parse_html(text: str) -> HTMLChecker:
    p = HTMLChecker()
    p.feed(text)
    p.close()
    return p


def md_cells(line: str) -> list[str]:
    """Cells of a GFM table row: split on '|' not escaped by a backslash; outer pipes required."""
    assert line.startswith("|") and line.endswith("|"), f"table row without outer pipes: {line!r}"
    cells, cur, i = [], "", 0
    while i < len(line):
        ch = line[i]
        if ch == "\\" and i + 1 < len(line):
            cur += line[i:i + 2]
            i += 2
            continue
        if ch == "|":
            cells.append(cur)
            cur = ""
        else:
            cur += ch
        i += 1
    assert cur == "", f"text after the last pipe: {line!r}"
    return [c.strip() for c in cells[1:]]


SEPARATOR_CELL = re.compile(r"^:?-{3,}:?$")


def md_tables(text: str) -> list[list[list[str]]]:
    """Every pipe table as rows of cells (separator row dropped); asserts each is well formed."""
    lines = text.split("\n")
    tables, i = [], 0
    while i < len(lines):
        if not lines[i].startswith("|"):
            i += 1
            continue
        assert i == 0 or lines[i - 1] == "", f"line {i + 1}: table not preceded by a blank line"
        block = []
        while i < len(lines) and lines[i].startswith("|"):
            block.append(lines[i])
            i += 1
        assert len(block) >= 2, f"line {i}: a table needs a header and a separator row: {block}"
        header = md_cells(block[0])
        sep = md_cells(block[1])
        assert all(SEPARATOR_CELL.match(c) for c in sep), f"line {i - len(block) + 2}: not a separator row: {block[1]!r}"
        assert len(sep) == len(header), f"separator has {len(sep)} cells, header {len(header)}: {block[:2]}"
        rows = [header]
        for row in block[2:]:
            cells = md_cells(row)
            assert len(cells) == len(header), f"row has {len(cells)} cells, header {len(header)}: {row!r}"
            rows.append(cells)
        tables.append(rows)
    return tables


def md_unescape(cell: str) -> str:
    """The text a Markdown cell shows: escaped pipes and HTML character references decoded."""
    return html.unescape(cell.replace("\\|", "|"))


# ------------------------------------------------------------------ every demo case, three formats

@pytest.fixture(scope="module", params=CASES, ids=CASE_IDS)
def rendered(request, tmp_path_factory):
    """Each demo case: ``check --json`` once, and ``check CASE --report`` into .html, .md and .json."""
    case: Path = request.param
    out = tmp_path_factory.mktemp(case.stem)
    rc, stdout, stderr = run(["check", case, "--json"])
    assert rc in (0, 1), stderr
    files, codes, errs = {}, {}, {}
    for suffix in (".html", ".md", ".json"):
        target = out / f"report{suffix}"
        target.write_text("stale", encoding="utf-8")       # an existing file: --force replaces it
        codes[suffix], _, errs[suffix] = run(["check", case, "--report", target, "--force"])
        files[suffix] = target
    return {"case": case, "dir": out, "json_rc": rc, "json_out": stdout, "doc": json.loads(stdout),
            "files": files, "codes": codes, "stderr": errs}


def _no_nan(token):
    raise ValueError(f"{token} is not JSON (RFC 8259)")


def test_check_json_validates_against_packaged_schema(rendered):
    doc = json.loads(rendered["json_out"], parse_constant=_no_nan)
    assert schema_errors(doc) == []
    assert rendered["json_rc"] == expected_status(doc)
    assert not any(k in doc for k in CONTEXT_KEYS), "check --json must not carry the filed-report context"


@pytest.mark.parametrize("suffix", [".html", ".md", ".json"])
def test_report_exit_status_and_message(rendered, suffix):
    assert rendered["codes"][suffix] == rendered["json_rc"] == expected_status(rendered["doc"])
    assert f"report written to {rendered['files'][suffix]}" in rendered["stderr"][suffix]
    assert not list(rendered["dir"].glob("*.part")), "a temporary file was left beside the report"


def test_html_report_parses_and_is_self_contained(rendered):
    text = rendered["files"][".html"].read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    p = parse_html(text)
    assert p.errors == []
    assert p.doctype is not None and p.doctype.lower() == "doctype html"
    assert p.tags.get("html") == 1 and p.tags.get("head") == 1 and p.tags.get("body") == 1
    assert "script" not in p.tags and "<script" not in text.lower()
    assert p.script_like == []
    assert p.external == []
    for tag in ("link", "img", "iframe", "object", "embed"):
        assert tag not in p.tags, f"<{tag}> would load or embed another resource"
    css = "".join(p.style_text).lower()
    assert "url(" not in css and "@import" not in css
    for sid in SECTION_IDS:
        assert p.ids.count(sid) == 1, f"section id {sid!r} present {p.ids.count(sid)} times"
    assert [i for i in p.ids if i in SECTION_IDS] == list(SECTION_IDS), "sections out of order"
    doc = rendered["doc"]
    assert f"Verdict: {doc['verdict']}" in "".join(p.text.get("span", []))
    for picture in re.findall(r"<svg\b.*?</svg>", text, flags=re.S):   # inline SVG is well-formed XML too
        assert ET.fromstring(picture).tag == "{http://www.w3.org/2000/svg}svg"
    # the composition is a table (one row per species), not a picture: no list printed twice
    assert "equilibrium-and-certificate" not in p.svg_labels
    if solved(doc):
        assert "Equilibrium composition" in "".join(p.text.get("caption", []))


def test_json_report_validates_and_hashes_the_case(rendered):
    case = rendered["case"]
    text = rendered["files"][".json"].read_text(encoding="utf-8")
    doc = json.loads(text, parse_constant=_no_nan)    # strict JSON: no NaN / Infinity tokens
    assert schema_errors(doc) == []
    assert doc["inputs"][0]["path"] == str(case)
    assert doc["inputs"][0]["sha256"] == hashlib.sha256(case.read_bytes()).hexdigest()
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\+00:00", doc["generated"]), doc["generated"]
    assert doc["versions"]["python"] == ".".join(map(str, sys.version_info[:3]))
    # a filed report is check --json plus its context, nothing else differs
    plain = {k: v for k, v in doc.items() if k not in CONTEXT_KEYS}
    # the same document: floats to the golden files' tolerances (a solve that ends in a least-squares
    # refinement, such as a rigid vessel on a transition, may differ in its last bits between runs)
    from test_golden import differences
    assert differences(plain, rendered["doc"]) == []


def test_markdown_report_tables_and_headings(rendered):
    text = rendered["files"][".md"].read_text(encoding="utf-8")
    doc = rendered["doc"]
    lines = text.split("\n")
    assert md_unescape(lines[0]) == f"# Equilibrium-problem audit: {doc['title']}"
    headings = [ln[3:] for ln in lines if ln.startswith("## ")]
    expected = list(MD_HEADINGS)
    if "margins" in doc:        # a case with a 'margins:' key has a Margins section after the equilibrium
        expected.insert(expected.index("Equilibrium and certificate") + 1, "Margins")
    assert headings == expected
    tables = md_tables(text)     # asserts every table is well formed
    assert tables, "a filed report has at least the inputs and tolerances tables"
    inputs = next(t for t in tables if t[0] == ["role", "path as given", "SHA-256"])
    assert [md_unescape(c) for c in inputs[1]] == ["case file", str(rendered["case"]),
                                                    hashlib.sha256(rendered["case"].read_bytes()).hexdigest()]
    assert f"Verdict: {doc['verdict']}" in [md_unescape(ln) for ln in lines]
    assert "<svg" not in text, "pictures belong to the HTML report only"


# ------------------------------------------------------------------ awkward text is escaped

ODD_TITLE = 'Odd <script>alert("x")</script> & | pipes | <b>bold</b>'


def test_awkward_names_are_escaped_in_every_format(tmp_path):
    """A title with markup and a case file whose name holds '|', '<' and '&'."""
    src = DESIGN.read_text(encoding="utf-8")
    case = tmp_path / "odd |<name>& case.yaml"
    case.write_text(re.sub(r"(?m)^title:.*$", "title: " + json.dumps(ODD_TITLE), src), encoding="utf-8")
    for suffix in (".html", ".md", ".json"):
        rc, _, err = run(["check", case, "--report", tmp_path / f"odd{suffix}"])
        assert rc == 0, err
    html_text = (tmp_path / "odd.html").read_text(encoding="utf-8")
    p = parse_html(html_text)
    assert p.errors == [] and "script" not in p.tags and "b" not in p.tags
    assert "".join(p.text["h1"]) == f"Equilibrium-problem audit: {ODD_TITLE}"
    assert str(case) in p.text["td"]
    md = (tmp_path / "odd.md").read_text(encoding="utf-8")
    inputs = next(t for t in md_tables(md) if t[0] == ["role", "path as given", "SHA-256"])
    assert md_unescape(inputs[1][1]) == str(case)
    doc = json.loads((tmp_path / "odd.json").read_text(encoding="utf-8"))
    assert doc["title"] == ODD_TITLE and schema_errors(doc) == []


def test_markdown_report_escapes_inline_html(tmp_path):
    """Regression: the Markdown report once wrote the title and cell text raw, so '<script>' in a title
    became live HTML in rendered Markdown (the HTML report always escaped it)."""
    src = DESIGN.read_text(encoding="utf-8")
    case = tmp_path / "case.yaml"
    case.write_text(re.sub(r"(?m)^title:.*$", "title: " + json.dumps(ODD_TITLE), src), encoding="utf-8")
    assert run(["check", case, "--report", tmp_path / "r.md"])[0] == 0
    md = (tmp_path / "r.md").read_text(encoding="utf-8")
    assert md.startswith("# Equilibrium-problem audit: Odd ")
    # a CommonMark renderer passes raw '<tag' through as HTML; '&lt;' or '\\<' would show the text instead.
    # The case file is embedded verbatim in a fenced code block (CommonMark: contents are literal text).
    outside = re.sub(r"(?ms)^(`{3,})yaml\n.*?^\1$", "", md)
    assert outside.count("```") == 0, "every fence closed"
    assert "<script" not in outside and "<b>" not in outside


def test_check_json_for_several_cases_is_a_list_of_valid_documents():
    rc, out, err = run(["check", *CASES, "--json"])
    docs = json.loads(out)
    assert isinstance(docs, list) and len(docs) == len(CASES)
    for path, doc in zip(CASES, docs):
        assert schema_errors(doc) == [], path
        assert doc["case"] == str(path)
    assert rc == max(expected_status(d) for d in docs)


@pytest.mark.parametrize("suffix", [".md", ".html"])
def test_no_confirm_report_says_the_minimisation_was_skipped(tmp_path, suffix):
    """Regression: with --no-confirm the equilibrium section said 'the case gives no feed' for a case with one."""
    target = tmp_path / f"r{suffix}"
    rc, _, err = run(["check", DESIGN, "--no-confirm", "--report", target])
    assert rc in (0, 1), err
    text = target.read_text(encoding="utf-8")
    section = text.split("Equilibrium and certificate", 1)[1].split("Claims", 1)[0]
    assert "no feed" not in section
    assert "no-confirm" in section or "skipped" in section


def test_check_json_stdout_is_pure_json_when_the_solver_logs(tmp_path):
    """Regression: the aromatics flash moved to 800 K makes cantera's vcs solver log 'ERROR: FAILURE its =
    2000!' (then converge); that line went to stdout ahead of the JSON document."""
    src = (REPO / "cases" / "aromatics_flash_phase_fraction.yaml").read_text(encoding="utf-8")
    case = tmp_path / "hot_flash.yaml"
    case.write_text(src.replace("temperature: 100 degC", "temperature: 800 K"), encoding="utf-8")
    rc, out, err = run(["check", case, "--json"])
    assert rc in (0, 1), err
    doc = json.loads(out)
    assert schema_errors(doc) == []


# ------------------------------------------------------------------ refusals of --report

def _sentinel(path: Path) -> bytes:
    path.write_bytes(b"do not touch\n")
    return path.read_bytes()


REFUSALS = {
    # name: (how to build the target from (tmp_path, case copy), extra args, expected words in stderr)
    "existing-html": (lambda d, c: d / "out.html", [], "--force"),
    "existing-md": (lambda d, c: d / "out.md", [], "--force"),
    "existing-json": (lambda d, c: d / "out.json", [], "--force"),
    "case-itself": (lambda d, c: c, [], "input"),
    "case-itself-with-force": (lambda d, c: c, ["--force"], "input"),
    "case-by-another-spelling": (lambda d, c: d / "sub" / ".." / c.name, ["--force"], "input"),
    "symlink-to-case": (lambda d, c: d / "link.html", ["--force"], "input"),
    # a case file whose suffix is also a report format: refused as an input, not by its suffix
    "case-named-like-a-report": (lambda d, c: c, ["--force"], "input"),
}


@pytest.mark.parametrize("name", list(REFUSALS))
def test_report_refuses_to_overwrite(tmp_path, name):
    make, extra, words = REFUSALS[name]
    case = tmp_path / ("case.md" if name == "case-named-like-a-report" else "case.yaml")
    shutil.copy(DESIGN, case)
    (tmp_path / "sub").mkdir()
    target = make(tmp_path, case)
    if name == "symlink-to-case":
        target.symlink_to(case)
    elif target.resolve() != case.resolve():
        _sentinel(target)
    before = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file() and not p.is_symlink()}
    rc, out, err = run(["check", case, "--report", target, *extra])
    assert rc == 2
    assert words in err and str(target) in err
    assert "Traceback" not in err and out == ""
    after = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file() and not p.is_symlink()}
    assert after == before


@pytest.mark.parametrize("name", ["out.txt", "out.pdf", "out", "out.html.bak", "out.yaml"])
def test_report_refuses_unknown_suffix(tmp_path, name):
    rc, out, err = run(["check", DESIGN, "--report", tmp_path / name])
    assert rc == 2
    assert ".html" in err and ".md" in err and ".json" in err
    assert list(tmp_path.iterdir()) == []


def test_several_cases_make_one_comparison_report(tmp_path):
    # issue 24: several cases give one report, the comparison first (tests/test_comparison.py)
    rc, _, err = run(["check", DESIGN, OVERSPEC, "--report", tmp_path / "x.html"])
    assert rc == 1, err
    assert list(tmp_path.iterdir()) == [tmp_path / "x.html"]
    assert "Comparison of 2 operating cases" in (tmp_path / "x.html").read_text(encoding="utf-8")


@pytest.mark.skipif(os.geteuid() == 0, reason="running as root: chmod does not stop root from writing "
                                              "(test_report_write_failure_leaves_nothing covers the failure)")
def test_report_into_read_only_directory(tmp_path):
    out = tmp_path / "ro"
    out.mkdir()
    out.chmod(0o500)
    try:
        rc, _, err = run(["check", DESIGN, "--report", out / "r.html"])
        assert rc == 2
        assert str(out / "r.html") in err and "cannot write" in err
        assert list(out.iterdir()) == []
    finally:
        out.chmod(0o700)


@pytest.mark.parametrize("existing", [False, True], ids=["new-file", "over-existing-with-force"])
def test_report_write_failure_leaves_nothing(tmp_path, monkeypatch, existing):
    """os.replace fails (disk full): exit 2, one clear message, no .part file, an old report intact."""
    out = tmp_path / "out"
    out.mkdir()
    target = out / "r.html"
    before = _sentinel(target) if existing else None

    def full(src, dst, *a, **k):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, "replace", full)
    rc, _, err = run(["check", DESIGN, "--report", target, "--force"])
    monkeypatch.undo()
    assert rc == 2
    assert f"{target}: cannot write the file: {os.strerror(errno.ENOSPC)}" in err
    assert "Traceback" not in err and err.count("\n") == 1
    assert [p.name for p in out.iterdir()] == (["r.html"] if existing else [])
    if existing:
        assert target.read_bytes() == before


def test_report_into_missing_directory(tmp_path):
    rc, _, err = run(["check", DESIGN, "--report", tmp_path / "missing" / "r.md"])
    assert rc == 2 and "cannot write" in err and "missing" in err


# ------------------------------------------------------------------ determinism

def test_check_json_is_byte_identical_between_runs(rendered):
    rc, out, _ = run(["check", rendered["case"], "--json"])
    assert rc == rendered["json_rc"]
    assert out == rendered["json_out"]


def test_check_json_identical_in_a_fresh_process():
    """A new process (no warm caches) gives the same bytes as this one."""
    rc, here, _ = run(["check", DESIGN, "--json"])
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run([sys.executable, "-m", "auditor", "check", str(DESIGN), "--json"], capture_output=True,
                          text=True, env=env, timeout=300)
    assert proc.returncode == rc == 0, proc.stderr
    assert proc.stdout == here


def test_json_report_twice_differs_only_in_generated(tmp_path, monkeypatch):
    import datetime

    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert run(["check", DESIGN, "--report", a])[0] == 0

    class Later(datetime.datetime):          # make sure the two timestamps really differ
        @classmethod
        def now(cls, tz=None):
            return datetime.datetime(2031, 1, 2, 3, 4, 5, tzinfo=tz)

    monkeypatch.setattr(datetime, "datetime", Later)
    assert run(["check", DESIGN, "--report", b])[0] == 0
    monkeypatch.undo()
    da, db = json.loads(a.read_text()), json.loads(b.read_text())
    assert db["generated"] == "2031-01-02T03:04:05+00:00" != da["generated"]
    assert {k for k in da if da[k] != db[k]} == {"generated"}
    strip = re.compile(r'^ "generated": .*$', re.M)
    assert strip.sub("", a.read_text()) == strip.sub("", b.read_text())
