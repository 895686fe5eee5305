"""What a filed report says, checked by content on the demo cases (issue: a report an engineer can file).

Each test names the demo case it reads and where its expected values come from: by hand from
the case file, an identity (element balance, mole fractions summing to one), or a published
method. The reports are produced through the real CLI into real files.
"""
from __future__ import annotations

import hashlib
import html
import json
import os
import re
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from fractions import Fraction
from pathlib import Path

import pytest

import clitools
from clitools import run

REPO = Path(__file__).resolve().parents[2]
CASES = REPO / "cases"
ALL_CASES = sorted(CASES.glob("*.yaml"))
KMOL = CASES / "reformer_kmol_feed.yaml"                 # feed written in kmol
CARBON = CASES / "reformer_carbon_risk.yaml"             # graphite forms although gas-only is assumed
HINDERED = CASES / "methanol_loop_complete_set.yaml"     # methanol loop, reactions: complete
UNBALANCED = CASES / "methanol_loop_inconsistent.yaml"   # reaction 4 drops an O
SHIFT = CASES / "shift_reactor_overspecified_mole_fraction.yaml"
DESIGN = CASES / "reformer_design_point.yaml"
SVG = "{http://www.w3.org/2000/svg}"


def md_table(text: str, caption: str) -> list[list[str]]:
    """The pipe table that follows the bold caption ``caption`` (cells unescaped)."""
    lines = text.split("\n")
    i = lines.index(f"**{caption}**")
    rows = []
    for ln in lines[i + 2:]:
        if not ln.startswith("|"):
            break
        cells = [html.unescape(c.strip().replace("\\|", "|")) for c in re.split(r"(?<!\\)\|", ln)[1:-1]]
        rows.append(cells)
    return [rows[0]] + rows[2:]     # header, then body (separator dropped)


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    """Markdown and HTML reports of the demo cases used here, and their JSON documents."""
    out = tmp_path_factory.mktemp("content")
    got = {}
    for case in (KMOL, CARBON, HINDERED, UNBALANCED, SHIFT, DESIGN):
        entry = {}
        for suffix in (".md", ".html", ".json"):
            target = out / f"{case.stem}{suffix}"
            rc, _, err = run(["check", case, "--report", target])
            assert rc in (0, 1), err
            entry[suffix] = target.read_text(encoding="utf-8")
        entry["doc"] = json.loads(entry[".json"])
        got[case.stem] = entry
    return got


# ------------------------------------------------------------------ the case as entered

def test_feed_in_kmol_appears_as_entered_and_results_in_kmol(reports):
    md = reports[KMOL.stem][".md"]
    feed = md_table(md, "Feed (entered in kmol; results are given in kmol)")
    assert feed[0] == ["species", "amount as entered", "amount, mol (SI)"]
    # by hand from the case file: 120 kmol CH4, 360 kmol H2O, 2.4 kmol N2
    assert feed[1:] == [["CH4", "120 kmol", "120000"], ["H2O", "360 kmol", "360000"], ["N2", "2.4 kmol", "2400"]]
    comp = md_table(md, "Equilibrium composition (amounts in kmol, the unit of the feed)")
    assert comp[0] == ["species", "gas (present, assumed): amount, kmol", "gas: mole fraction"]
    amounts = {row[0]: float(row[1]) for row in comp[1:]}
    # identity (element balance): carbon fed as 120 kmol CH4 leaves as CH4 + CO + CO2, in kmol
    assert amounts["CH4"] + amounts["CO"] + amounts["CO2"] == pytest.approx(120, rel=1e-5)
    assert amounts["N2"] == pytest.approx(2.4, rel=1e-9)            # N2 is inert here
    # the same total as the JSON's (which keeps mol)
    gas = reports[KMOL.stem]["doc"]["equilibrium"]["phases"][0]
    assert amounts["phase total"] == pytest.approx(gas["moles"] / 1000, rel=1e-5)


def test_specifications_as_written_beside_their_si_values(reports):
    spec = md_table(reports[KMOL.stem][".md"], "Specifications")
    # 850 degC = 1123.15 K and 25 bar = 2.5 MPa (SI brochure, BIPM 2019: degC offset 273.15; 1 bar = 1e5 Pa)
    assert spec[1:] == [["temperature", "850 degC", "1123.15 K"], ["pressure", "25 bar", "2500000 Pa"]]


def test_case_file_embedded_with_its_sha256(reports):
    for case in (KMOL, CARBON):
        digest = hashlib.sha256(case.read_bytes()).hexdigest()
        text = case.read_text(encoding="utf-8")
        page = reports[case.stem][".html"]
        m = re.search(r"<details><summary>(.*?)</summary><pre>(.*?)</pre></details>", page, re.S)
        assert m, "the HTML embeds the case file in a collapsible block"
        assert digest in m.group(1) and html.unescape(m.group(2)) == text
        md = reports[case.stem][".md"]
        appendix = md.split("## Appendix: case file", 1)[1].split("## Sign-off", 1)[0]
        assert digest in appendix
        assert f"```yaml\n{text.rstrip()}\n```" in appendix


def test_provenance_hashes_every_thermo_file_and_names_versions(reports):
    import cantera as ct
    md = reports[CARBON.stem][".md"]
    files = md_table(md, "Files read")
    rows = {r[1]: r for r in files[1:]}
    assert rows[str(CARBON)][0] == "case file"
    for name in ("nasa_gas.yaml", "nasa_condensed.yaml"):   # gas and graphite: both databases are read
        path = next(Path(d) / name for d in ct.get_data_directories() if (Path(d) / name).is_file())
        assert rows[name][2] == hashlib.sha256(path.read_bytes()).hexdigest()
    software = {r[0]: r[1] for r in md_table(md, "Software")[1:]}
    assert software["cantera"] == ct.__version__
    assert software["auditor (this tool)"] == reports[CARBON.stem]["doc"]["tool"]["version"]


def test_path_is_shown_as_given_not_resolved(tmp_path):
    shutil.copy(DESIGN, tmp_path / "design.yaml")
    rc, _, err = run(["check", "design.yaml", "--report", "r.md"], cwd=tmp_path)
    assert rc == 0, err
    files = md_table((tmp_path / "r.md").read_text(encoding="utf-8"), "Files read")
    assert files[1][:2] == ["case file", "design.yaml"]


def test_sign_off_block_closes_the_report(reports):
    for suffix in (".md", ".html"):
        text = reports[DESIGN.stem][suffix]
        tail = text[text.rindex("Sign-off"):]
        for words in ("prepared by", "checked by", "Revision"):
            assert words in tail
    md = reports[DESIGN.stem][".md"]
    assert md.rstrip().endswith("________________________________")


# ------------------------------------------------------------------ results as tables, words not Python

def test_composition_table_one_row_per_species_and_columns_per_phase(reports):
    md = reports[CARBON.stem][".md"]
    comp = md_table(md, "Equilibrium composition (amounts in mol, the unit of the feed)")
    assert comp[0] == ["species", "gas (present, assumed): amount, mol", "gas: mole fraction",
                       "graphite (present, not assumed): amount, mol", "graphite: mole fraction"]
    species = [r[0] for r in comp[1:-1]]
    assert species == ["CH4", "H2O", "CO", "CO2", "H2", "C(gr)"]      # each once, in the case's order
    gas_x = [float(r[2]) for r in comp[1:-1] if r[2]]
    assert sum(gas_x) == pytest.approx(1, abs=1e-5)                   # identity: mole fractions sum to 1
    n = {r[0]: float(r[1] or r[3]) for r in comp[1:]}
    # identity (element balance, feed CH4 1 + H2O 0.5 mol): C = 1, H = 5, O = 0.5
    assert n["CH4"] + n["CO"] + n["CO2"] + n["C(gr)"] == pytest.approx(1, rel=1e-5)
    assert 4 * n["CH4"] + 2 * n["H2O"] + 2 * n["H2"] == pytest.approx(5, rel=1e-5)
    assert n["H2O"] + n["CO"] + 2 * n["CO2"] == pytest.approx(0.5, rel=1e-5)
    assert "mole fractions in" not in reports[CARBON.stem][".html"], "the composition is not drawn a second time"


@pytest.mark.parametrize("case", [KMOL, CARBON, HINDERED, UNBALANCED, SHIFT])
def test_no_python_literals_and_every_na_says_why(reports, case):
    for suffix in (".md", ".html"):
        text = re.sub(r"(?s)<details>.*?</details>|```yaml.*?```", "", reports[case.stem][suffix])
        for word in ("True", "False", "None"):
            assert not re.search(rf"\b{word}\b", text), f"{word} in the {suffix} report of {case.stem}"
        assert not re.search(r"\bn/a\b(?! \()", text), "an n/a without its reason"


def test_certificate_in_words(reports):
    cert = {r[0]: r[1] for r in md_table(reports[DESIGN.stem][".md"], "Certificate of the Gibbs minimisation")[1:]}
    assert cert["converged"] == "yes" and cert["confirmed (every check below passes and the assumed phases are found)"] == "yes"
    assert cert["unique"].startswith("yes (proved: ideal phases")
    assert cert["ln K additivity error of dependent reactions"] == "n/a (no dependent reaction among the listed ones)"


# ------------------------------------------------------------------ plain-language reasons

def html_reason(page: str) -> str:
    m = re.search(r'<p class="reason">Why: (.*?)</p>', page)
    return html.unescape(m.group(1))


def test_carbon_forming_case_says_why_in_plain_words(reports):
    # Low steam-to-carbon (0.5) at 650 degC favours carbon deposition (common practice: reformers run
    # at steam-to-carbon near 3 to stay clear of it); the minimisation finds graphite.
    entry = reports[CARBON.stem]
    reason = "graphite forms at equilibrium: carbon deposition expected, not the gas-only state assumed"
    assert entry["doc"]["reason"] == reason
    assert html_reason(entry[".html"]) == reason
    assert f"Why: {reason}" in entry[".md"]
    graphite = next(p for p in entry["doc"]["equilibrium"]["phases"] if p["name"] == "graphite")
    assert graphite["moles"] > 0


def test_over_specified_reason_names_what_to_drop(reports):
    # shift reactor: T, P and x(CO) fixed for F = 2 (by hand: N 5, pi 1, m 1, r 2 from the feed)
    assert html_reason(reports[SHIFT.stem][".html"]) == "over-specified: drop one of T, P, x(CO) (F = 2 allows 2 intensive)"


def test_feed_relations_explained_as_element_ratios(reports):
    # by hand from the feed CH4 1 + H2O 0.5 mol: H = 4 + 1 = 5, O = 0.5, C = 1
    assert "the feed fixes H:C = 5 and O:C = 0.5 in the gas" in reports[CARBON.stem][".md"]
    # the design point: CH4 1 + H2O 3 + N2 0.02 -> H:C = 10, O:C = 3, N:C = 0.04
    assert "the feed fixes H:C = 10, O:C = 3 and N:C = 0.04 in the gas" in reports[DESIGN.stem][".md"]


def test_reactions_numbered_from_one_for_people_and_errors_stated_once(reports):
    entry = reports[UNBALANCED.stem]
    table = md_table(entry[".md"], "Unbalanced reactions")
    assert table[1] == ["4", "O -1"]         # by hand: CO + 3 H2 -> CH4 + H2 loses one O; 4th in the list
    message = next(f["message"] for f in entry["doc"]["findings"] if f["severity"] == "error")
    assert message.startswith("reaction 4 ")
    assert html.unescape(entry[".md"]).count(message) == 1, "an error is stated once, in its section"
    findings = md_table(entry[".md"], "Findings")
    assert ["error", "reactions", "stated under Reactions"] in findings
    rd = entry["doc"]["reactions"]
    assert rd["unbalanced"][0]["equation"] == "CO + 3 H2 <=> CH4 + H2"


# ------------------------------------------------------------------ the hindered-product warning

def test_hindered_product_warning_with_numbers(reports):
    entry = reports[HINDERED.stem]
    doc = entry["doc"]
    warnings = [f["message"] for f in doc["findings"] if f["severity"] == "warning" and "methane" in f["message"]]
    assert len(warnings) == 1
    gas = doc["equilibrium"]["phases"][0]
    n = {s: gas["moles"] * x for s, x in gas["mole_fractions"].items()}
    carbon = n["CO"] + n["CO2"] + n["CH3OH"] + n["CH4"]
    assert carbon == pytest.approx(1.2, rel=1e-6)        # identity: C fed as CO 1 + CO2 0.2 mol
    share = n["CH4"] / carbon
    assert share > 0.5
    assert f"CH4 (methane) holds {share:.0%} of the C" in warnings[0]
    assert "list the intended reactions instead of 'complete'" in warnings[0]
    assert warnings[0] in html.unescape(entry[".md"])


def test_no_hindered_warning_when_the_reactions_are_listed():
    """The same loop with its reactions listed lets no methane form: no warning (and none for a
    steam reformer, where methane is fed)."""
    from auditor.audit import audit_file
    for case in (DESIGN, KMOL):
        result = audit_file(case)
        assert not [f for f in result.findings if "kinetically hindered" in f.message]


# ------------------------------------------------------------------ pictures

def test_incidence_is_a_table_when_small(reports):
    table = md_table(reports[CARBON.stem][".md"],
                     "Reaction-species incidence: stoichiometric coefficients (products +, reactants -)")
    assert table[0] == ["reaction", "kind", "CH4", "H2O", "CO", "CO2", "H2", "C(gr)"]
    assert table[1] == ["1", "independent", "", "+1", "-1", "", "-1", "+1"]   # CO + H2 <=> H2O + C(gr)


def test_incidence_picture_of_a_large_mechanism_is_legible(tmp_path):
    from auditor.report import svg
    rows = [{j: (1 if (i + j) % 3 else -1) for j in range(i % 40, i % 40 + 4)} for i in range(120)]
    labels = [f"S{j}" for j in range(53)]
    root = ET.fromstring(svg.sparsity(rows, 53, set(range(50)), labels, [str(i + 1) for i in range(120)]))
    assert int(root.get("font-size")) >= 9
    cells = [r for r in root.iter(SVG + "rect") if r.get("stroke") and float(r.get("width")) > 5]
    assert min(float(r.get("width")) for r in cells) >= 9                # each cell at least 9 px
    texts = [t.text for t in root.iter(SVG + "text")]
    assert all(lab in texts for lab in labels)                           # every species labelled


def _ticks(root, anchor="middle"):
    return [float(t.text) for t in root.iter(SVG + "text")
            if t.get("text-anchor") == anchor and re.fullmatch(r"-?[0-9.]+", t.text or "")]


def is_round(values) -> bool:
    """Equal steps of 1, 2, 2.5 or 5 times a power of ten (Heckbert's nice numbers)."""
    steps = {round(b - a, 9) for a, b in zip(values, values[1:])}
    if len(steps) != 1:
        return False
    step = steps.pop()
    mantissa = step / 10 ** int(f"{step:e}".split("e")[1])
    return any(abs(mantissa - m) < 1e-9 for m in (1, 2, 2.5, 5)) and all(abs(v / step - round(v / step)) < 1e-6
                                                                        for v in values)


def test_sweep_plot_title_fixed_conditions_unit_and_round_ticks(tmp_path):
    prefix = tmp_path / "sw"
    rc, out, err = run(["sweep", DESIGN, "--vary", "temperature=500:1000:50 degC", "--jobs", "1", "--out", prefix])
    assert rc == 0, err
    root = ET.parse(f"{prefix}.svg").getroot()
    texts = [t.text or "" for t in root.iter(SVG + "text")]
    assert "Kestrel Bay H2 unit, reformer R-101 outlet, design point A (invented demo)" in texts
    assert "held fixed: pressure = 25 bar" in texts
    assert "temperature, degC" in texts and "temperature, K" not in texts
    assert sum(1 for ln in root.iter(SVG + "line") if ln.get("stroke") and ln.get("x1") == ln.get("x2")) >= 5
    x_ticks = _ticks(root)
    assert x_ticks[:6] == [500, 600, 700, 800, 900, 1000] and is_round(x_ticks[:6])
    charts = root.findall(SVG + "svg")
    assert len(charts) == 2                          # mole fractions, then phase amounts
    for chart in charts:
        y_ticks = [float(t.text) for t in chart.iter(SVG + "text") if t.get("text-anchor") == "end"
                   and re.fullmatch(r"-?[0-9.]+", t.text or "")]
        assert len(y_ticks) >= 4 and is_round(y_ticks), y_ticks
    assert "never present: graphite" in " ".join(texts)         # no empty series drawn


def test_two_variable_sweep_is_a_labelled_phase_map(tmp_path):
    prefix = tmp_path / "map"
    rc, _, err = run(["sweep", CARBON, "--vary", "temperature=400:900:100 degC", "--vary", "pressure=1:25:6",
                      "--jobs", "1", "--out", prefix])
    assert rc in (0, 1), err
    root = ET.parse(f"{prefix}.svg").getroot()
    bold = [t.text for t in root.iter(SVG + "text") if t.get("font-weight") == "bold"]
    assert "Kestrel Bay pre-reformer R-100, low steam case (invented demo)" in bold
    assert "gas + graphite" in bold                   # a region labelled inside the map
    texts = [t.text for t in root.iter(SVG + "text")]
    assert "temperature, degC" in texts and "pressure, bar" in texts


def test_report_colours_come_only_from_the_style_module():
    from auditor.report import style
    palette = {c.lower() for c in style.SERIES} | {c.lower() for pair in style.VERDICT.values() for c in pair} | {
        v.lower() for k, v in vars(style).items() if isinstance(v, str) and v.startswith("#")}
    for path in (REPO / "auditor" / "report").glob("*.py"):
        if path.name == "style.py":
            continue
        found = set(re.findall(r"(?<!&)#[0-9a-fA-F]{6}\b|(?<!&)#[0-9a-fA-F]{3}\b", path.read_text(encoding="utf-8")))
        assert not found, f"{path.name} names colours {found}; take them from style.py"
    page = subprocess_report_html(DESIGN)
    used = {c.lower() for c in re.findall(r"#[0-9a-fA-F]{6}\b", page)}
    assert used <= palette, used - palette


def subprocess_report_html(case: Path) -> str:
    from auditor.audit import audit_file
    from auditor.report.html import render
    return render(audit_file(case))


# ------------------------------------------------------------------ progress on long work

def env() -> dict:
    e = dict(os.environ)
    e["PYTHONPATH"] = str(REPO) + os.pathsep + e.get("PYTHONPATH", "")
    return e


BAR = re.compile(r"\d+% \|.*\| \d+/\d+ (cases|points)")


def test_progress_bar_absent_when_piped(tmp_path):
    cases = [str(c) for c in (DESIGN, CARBON, KMOL)]
    proc = subprocess.run([sys.executable, "-m", "auditor", "check", *cases, "--jobs", "1"], capture_output=True,
                          text=True, env=env(), cwd=REPO, timeout=300)
    assert proc.returncode == 1
    assert proc.stderr == "" and "\r" not in proc.stdout and not BAR.search(proc.stdout)
    assert len(proc.stdout.splitlines()) == 3
    proc = subprocess.run([sys.executable, "-m", "auditor", "sweep", str(DESIGN), "--vary", "temperature=800:900:50",
                           "--jobs", "1", "--out", str(tmp_path / "s")], capture_output=True, text=True, env=env(),
                          cwd=REPO, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == "" and not BAR.search(proc.stdout)


def on_terminal(args: list[str]) -> str:
    """Run the CLI with stdout and stderr on a pseudo-terminal 120 columns wide; all it wrote."""
    return clitools.on_terminal(args, dict(env(), COLUMNS="120"), REPO, columns=120)[1]


def test_progress_bar_on_a_terminal_and_not_with_quiet(tmp_path):
    cases = [str(c) for c in (DESIGN, CARBON, KMOL)]
    shown = on_terminal(["check", *cases, "--jobs", "1"])
    assert BAR.search(shown), shown
    assert re.search(r"3/3 cases \[[0-9:]+ elapsed, [0-9:]+ left, +[0-9.]+case/s\]", shown)   # done, time left, rate
    quiet = on_terminal(["check", *cases, "--jobs", "1", "--quiet"])
    assert not BAR.search(quiet)
    sweep = on_terminal(["sweep", str(DESIGN), "--vary", "temperature=800:900:50", "--jobs", "1",
                         "--out", str(tmp_path / "s")])
    assert re.search(r"[0-3]/3 points", sweep), sweep


# ------------------------------------------------------------------ species by common name

@pytest.mark.parametrize("query, expected", [("methanol", "CH3OH"), ("steam", "H2O"), ("graphite", "C(gr)"),
                                             ("lime", "CaO(s)"), ("CaCO3", "CaCO3(caL)")])
def test_species_finds_common_names_and_formulae(query, expected):
    rc, out, _ = run(["species", query, "--json"])
    assert rc == 0
    assert json.loads(out)[0]["name"] == expected


def test_species_help_examples_all_work():
    from auditor.cli_parser import build_parser
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command").choices["species"]
    examples = [ln.strip() for ln in sub.epilog.splitlines() if ln.strip().startswith("auditor species")]
    assert len(examples) >= 5
    import shlex
    for line in examples:
        rc, out, err = run(shlex.split(line)[1:])
        assert rc == 0 and out.strip(), (line, err)


# ------------------------------------------------------------------ print

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")
PDFTOTEXT = shutil.which("pdftotext")


@pytest.mark.skipif(not (CHROMIUM and PDFTOTEXT), reason="needs headless Chromium and pdftotext (poppler-utils)")
def test_html_prints_to_pdf_with_header_footer_and_captions_kept(tmp_path):
    page = tmp_path / "carbon.html"
    rc, _, err = run(["check", CARBON, "--report", page])
    assert rc == 1, err
    version = subprocess.run([CHROMIUM, "--version"], capture_output=True, text=True, timeout=60).stdout
    major = re.search(r"(\d+)\.\d+\.\d+", version)
    if major and int(major.group(1)) < 131:
        pytest.skip(f"page margin boxes (header and footer) need Chromium 131 or later: {version.strip()}")
    pdf = tmp_path / "carbon.pdf"
    profile = tmp_path / "profile"
    proc = subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                           "--disable-background-networking", "--disable-component-update", "--disable-sync",
                           f"--user-data-dir={profile}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                           page.as_uri()], capture_output=True, text=True, timeout=180)
    if not pdf.exists():
        pytest.skip(f"Chromium could not print here: {proc.stderr[-300:]}")
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True).stdout if shutil.which("pdfinfo") else ""
    pages = subprocess.run([PDFTOTEXT, "-layout", str(pdf), "-"], capture_output=True, text=True).stdout.split("\f")
    pages = [p for p in pages if p.strip()]
    n = len(pages)
    assert 3 <= n <= 12, n
    if info:
        assert re.search(rf"Pages:\s+{n}\b", info)
    for i, text in enumerate(pages, 1):
        assert "Kestrel Bay pre-reformer R-100, low steam case (invented demo)" in text   # header: case title
        assert "Verdict: not-confirmed" in text                                           # header: verdict
        assert f"page {i} of {n}" in text                                                 # footer: page numbers
    everything = "\n".join(pages)
    assert "graphite forms at equilibrium: carbon deposition expected" in everything
    assert "title: Kestrel Bay pre-reformer R-100" in everything        # the embedded case file prints expanded
    assert "prepared by" in pages[-1] and "checked by" in pages[-1]
    # no caption left alone at the foot of a page: each caption shares its page with its table's header row
    for caption, header in (("Equilibrium composition", "species"), ("Certificate of the Gibbs minimisation",
                                                                      "certificate item"),
                            ("Phase-rule count", "term"), ("Files read", "role")):
        (where,) = [p for p in pages if caption in p]
        after = where.split(caption, 1)[1]
        assert header in after, f"caption {caption!r} split from its table"


# ------------------------------------------------------------------ the report's amount unit

@pytest.mark.parametrize("feed, unit, mol_per_unit", [
    ([("CH4", "120 kmol"), ("H2O", "360 kmol")], "kmol", 1000.0),      # one molar unit: kept
    ([("CH4", "1.0"), ("H2O", "3.0")], "mol", 1.0),                   # plain numbers are mol (design §5)
    ([("CH4", "2 lbmol")], "lbmol", 453.59237),                       # 1 lb = 0.45359237 kg exactly (NIST SP 811)
    ([("CH4", "2 kmol"), ("H2O", "500 mol")], "mol", 1.0),            # mixed units: SI
    ([("CH4", "10 kg"), ("H2O", "30 kg")], "mol", 1.0),               # a mass is no amount scale: SI
    ([("CH4", "2 mmol")], "mmol", 0.001),
])
def test_amount_unit_of_the_report(feed, unit, mol_per_unit):
    from auditor.report.entered import amount_unit
    found_unit, found_scale = amount_unit(feed)
    assert found_unit == unit and found_scale == pytest.approx(mol_per_unit, rel=1e-12)


def relation_value(text: str, x: dict) -> float:
    """Left-hand side of 'in phase P: - 3 x(CO) + x(H2) = 0' at mole fractions ``x``."""
    lhs = text.split(":", 1)[1].split("=")[0]
    total = 0.0
    for sign, coef, sp in re.findall(r"([+-]?)\s*([0-9/]*)\s*x\(([^)]+)\)", lhs):
        c = float(Fraction(coef)) if coef else 1.0
        total += (-c if sign == "-" else c) * x[sp]
    return total


def test_feed_relation_words_beside_the_equation(reports):
    rows = md_table(reports[CARBON.stem][".md"], "Restrictions counted in r")
    assert rows[1] == ["in phase gas: - 3 x(CO) - 4 x(CO2) + x(H2) = 0",
                       "these 2 relations together say: the feed fixes H:C = 5 and O:C = 0.5 in the gas"]
    # design point, gas only and confirmed: each relation holds at the equilibrium composition, and
    # the element ratios in the gas are the feed's (by hand: CH4 1 + H2O 3 + N2 0.02 mol)
    rows = md_table(reports[DESIGN.stem][".md"], "Restrictions counted in r")
    assert rows[1][1] == "these 3 relations together say: the feed fixes H:C = 10, O:C = 3 and N:C = 0.04 in the gas"
    assert rows[2][1] == rows[3][1] == "(part of the same statement)"
    x = reports[DESIGN.stem]["doc"]["equilibrium"]["phases"][0]["mole_fractions"]
    for text, _ in rows[1:]:
        assert relation_value(text, x) == pytest.approx(0, abs=1e-9), text
    carbon = x["CH4"] + x["CO"] + x["CO2"]
    assert (4 * x["CH4"] + 2 * x["H2O"] + 2 * x["H2"]) / carbon == pytest.approx(10, rel=1e-8)
    assert (x["H2O"] + x["CO"] + 2 * x["CO2"]) / carbon == pytest.approx(3, rel=1e-8)
    assert 2 * x["N2"] / carbon == pytest.approx(0.04, rel=1e-8)


def test_several_cases_one_line_each_saying_why():
    rc, out, _ = run(["check", DESIGN, CARBON, HINDERED, SHIFT, UNBALANCED, "--jobs", "1"])
    assert rc == 1
    lines = out.splitlines()
    assert len(lines) == 5
    assert lines[1].endswith(f"{CARBON}: graphite forms at equilibrium: carbon deposition expected, "
                             "not the gas-only state assumed")
    assert lines[2].startswith("well-posed") and ": warning: CH4 (methane) holds " in lines[2]
    assert lines[3].endswith(": over-specified: drop one of T, P, x(CO) (F = 2 allows 2 intensive)")
    assert lines[4].endswith(": reaction 4 'CO + 3 H2 <=> CH4 + H2' does not balance (O -1): correct the equation")
