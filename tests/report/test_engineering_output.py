"""Issue 19, items 4, 5, 8 and 9: species look-up that reads chemistry, a filed report that
states a mass feed truthfully, a terminal that says which species it leaves out, and a
signed report that reads as engineering.

Each test is what a new user meets: a case file on disk (the sulphur-recovery furnace demo
``cases/sulphur_furnace_demo.yaml``, or one written here) run through the real CLI.
"""
from __future__ import annotations

import hashlib
import json
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest

from clitools import run

REPO = Path(__file__).resolve().parents[2]
SULPHUR = REPO / "cases" / "sulphur_furnace_demo.yaml"      # invented SRU reaction furnace, 1300 degC, 1.6 bar
CARBON = REPO / "cases" / "reformer_carbon_risk.yaml"      # graphite forms although gas-only is assumed
DESIGN = REPO / "cases" / "reformer_design_point.yaml"     # CH4/H2O/N2 reformer, well posed
MAP_CASE = REPO / "cases" / "carbon_map_cho.yaml"


def species_json(query: str) -> tuple[int, list[dict]]:
    rc, out, err = run(["species", query, "--json"])
    return rc, json.loads(out)


# ------------------------------------------------------------------ 4. species look-up and suggestions

def test_formula_search_is_case_sensitive_first():
    # CS2 is carbon disulphide; Cs2, Cs2O ... are caesium compounds (the letter case is the chemistry)
    rc, hits = species_json("CS2")
    assert rc == 0 and hits[0]["name"] == "CS2" and hits[0]["formula"] == "CS2"
    assert not [h["name"] for h in hits if h["name"].startswith("Cs")]
    # written in lower case, nothing matches as written: then any letter case is shown
    rc, hits = species_json("ch3oh")
    assert rc == 0 and hits[0]["name"] == "CH3OH"


def test_a_phase_suffix_finds_the_condensed_forms():
    # S(cr): the sulphur solids of nasa_condensed.yaml (rhombic S(cr1), monoclinic S(cr2)), then the liquid
    rc, hits = species_json("S(cr)")
    assert rc == 0
    assert [h["name"] for h in hits[:2]] == ["S(cr1)", "S(cr2)"]
    assert all(h["kind"] == "condensed" and h["formula"] == "S" for h in hits)


@pytest.mark.parametrize("word, symbol, pure", [("sulfur", "S", "S"), ("sulphur", "S", "S"), ("nickel", "Ni", "Ni")])
def test_an_element_name_lists_that_elements_species(word, symbol, pure):
    rc, hits = species_json(word)
    assert rc == 0 and len(hits) >= 5
    assert hits[0]["formula"] == pure                         # the element itself first
    assert all(re.search(rf"{symbol}(?![a-z])", h["formula"]) for h in hits)
    rc, out, _ = run(["species", word])
    assert rc == 0 and out.splitlines()[1].split()[0] == hits[0]["name"]


def test_a_digit_for_a_letter_is_suggested_first_by_species():
    rc, out, _ = run(["species", "H20"])
    assert rc == 1
    assert "no species in the packaged databases matches 'H20'; did you mean H2O?" in out


def write_case(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_unknown_feed_species_suggest_the_same_chemistry_first(tmp_path):
    # OCS is COS written in another order (the same element counts); H20 has a zero for the O
    case = write_case(tmp_path, "claus.yaml", """title: typed by hand
system:
  source: packaged
  phases:
    gas: [H2S, SO2, H2O, COS, CO2, N2]
reactions: complete
feed: {H2S: 2 kmol, OCS: 0.1 kmol, H20: 1 kmol, N2: 4 kmol}
specified: {temperature: 1300 degC, pressure: 1.6 bar}
""")
    rc, out, err = run(["check", case])
    assert rc == 2 and not out
    assert "feed.OCS: unknown species 'OCS' in any phase; did you mean 'COS'?" in err
    assert "feed.H20: unknown species 'H20' in any phase; did you mean 'H2O'?" in err


def test_unknown_packaged_species_suggests_the_same_formula_first(tmp_path):
    case = write_case(tmp_path, "claus.yaml", """title: typed by hand
system:
  source: packaged
  phases:
    gas: [H2S, SO2, H20, OCS, N2]
reactions: complete
feed: {H2S: 2 kmol, N2: 4 kmol}
specified: {temperature: 1300 degC, pressure: 1.6 bar}
""")
    rc, _, err = run(["check", case])
    assert rc == 2
    assert "unknown species 'H20' in nasa_gas.yaml or nasa_condensed.yaml; closest names: H2O," in err
    assert "unknown species 'OCS' in nasa_gas.yaml or nasa_condensed.yaml; closest names: COS," in err


# ------------------------------------------------------------------ 5. a feed in mass units, truthfully

MASS_CASE = """title: reformer feed weighed, not counted
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2]
reactions: complete
feed: {CH4: 1600 kg, H2O: 5400 kg}
specified:
  temperature: 850 degC
  pressure: 25 bar
"""


def md_table(text: str, caption: str) -> list[list[str]]:
    lines = text.split("\n")
    start = lines.index(f"**{caption}**")
    rows = []
    for line in lines[start + 2:]:
        if not line.startswith("|"):
            break
        rows.append([c.strip() for c in line.strip("|").split("|")])
    return rows


def test_a_mass_feed_is_converted_with_the_molar_mass_in_the_report(tmp_path):
    case = write_case(tmp_path, "weighed.yaml", MASS_CASE)
    report = tmp_path / "weighed.md"
    rc, _, err = run(["check", case, "--report", report])
    assert rc in (0, 1), err
    text = report.read_text(encoding="utf-8")
    caption = next(line.strip("*") for line in text.split("\n") if line.startswith("**Feed ("))
    assert caption == "Feed (entered in kg; results are given in mol)"
    header, _, *rows = md_table(text, caption)
    assert header == ["species", "amount as entered", "molar mass, g/mol", "amount, mol (SI)"]
    by_species = {r[0]: r for r in rows}
    # CH4 16.043 g/mol, H2O 18.015 g/mol (cantera's nasa_gas.yaml; CRC Handbook gives 16.043 and 18.015)
    assert by_species["CH4"][1:3] == ["1600 kg", "16.043"]
    assert float(by_species["CH4"][3]) == pytest.approx(1600e3 / 16.043, rel=1e-9)
    assert float(by_species["H2O"][3]) == pytest.approx(5400e3 / 18.015, rel=1e-9)
    comp = next(line for line in text.split("\n") if line.startswith("**Equilibrium composition"))
    assert "the unit of the feed" not in comp and "written in kg" in comp


def test_a_feed_in_one_molar_unit_keeps_its_caption(tmp_path):
    report = tmp_path / "sulphur.md"
    rc, _, err = run(["check", SULPHUR, "--report", report])
    assert rc == 0, err
    text = report.read_text(encoding="utf-8")
    assert "**Equilibrium composition (amounts in kmol, the unit of the feed)**" in text
    assert "**Feed (entered in kmol; results are given in kmol)**" in text


# ------------------------------------------------------------------ 8. the terminal names what it leaves out

def test_terminal_shows_every_species_above_one_ppm_and_counts_the_rest():
    rc, out, err = run(["check", SULPHUR])
    assert rc == 0, err
    rc, doc, _ = run(["check", SULPHUR, "--json"])
    x = json.loads(doc)["equilibrium"]["phases"][0]["mole_fractions"]
    shown = {k for k, v in x.items() if v >= 1e-6}
    below = len(x) - len(shown)
    block = out.split("  gas: ", 1)[1].split("  certificate:", 1)[0]
    listed = set(re.findall(r"([A-Z][A-Za-z0-9]*) \d", block))
    assert listed == shown
    assert {"COS", "CS2"} <= listed                         # the minor sulphur-carbon species the converters care about
    assert below > 0 and f"{below} species below 1 ppm not shown" in block


# ------------------------------------------------------------------ 9. a signed report reads as engineering

@pytest.fixture(scope="module")
def sulphur_md(tmp_path_factory) -> str:
    report = tmp_path_factory.mktemp("sulphur") / "sulphur.md"
    rc, _, err = run(["check", SULPHUR, "--report", report])
    assert rc == 0, err
    return report.read_text(encoding="utf-8")


def test_tolerances_are_in_words_and_units(sulphur_md):
    header, _, *rows = md_table(sulphur_md, "Named tolerances")
    assert header == ["tolerance", "value", "unit"]
    assert not [r for r in rows if "_" in r[0]]              # no Python identifiers
    affinity = next(r for r in rows if "affinity" in r[0])
    assert affinity[1:] == ["1e-06", "RT"]


def test_the_caution_names_the_hazardous_species_of_the_case(sulphur_md):
    caution = next(line for line in sulphur_md.split("\n") if "Hazardous species in this case" in line)
    assert "H2S: highly toxic" in caution and "SO2: toxic" in caution
    assert caution.index("H2S") < caution.index("CO2")        # the most dangerous first
    assert "NH3" not in caution and "HCl" not in caution
    rc, out, _ = run(["check", DESIGN])
    caution = " ".join(out.split()).split("Hazardous species in this case (common practice): ", 1)[1]
    assert caution.startswith("CO: toxic") and "H2S" not in caution


def test_a_not_confirmed_report_suggests_a_remedy(tmp_path):
    report = tmp_path / "carbon.md"
    rc, _, err = run(["check", CARBON, "--report", report])
    assert rc == 1, err
    text = report.read_text(encoding="utf-8")
    assert "none needed" not in text
    fixes = [line for line in text.split("\n") if line.startswith("Suggested fix:")]
    assert len(fixes) == 2                                     # under the verdict and under the specification
    assert all("add graphite to 'coexisting'" in f and "change what makes graphite form" in f for f in fixes)


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_sweep_pictures_carry_the_version_and_the_case_hash(tmp_path):
    from auditor import __version__
    rc, _, err = run(["sweep", SULPHUR, "--vary", "temperature=1100:1300:100 degC", "--jobs", "1", "--quiet",
                      "--out", tmp_path / "furnace"])
    assert rc == 0, err
    stamp = f"auditor {__version__}; case file sulphur_furnace_demo.yaml, SHA-256 {sha256(SULPHUR)}"
    assert (tmp_path / "furnace.svg").read_text(encoding="utf-8").count(stamp) >= 2   # each picture
    rc, _, err = run(["sweep", MAP_CASE, "--ternary", "C,H,O", "--divisions", "4", "--jobs", "1", "--quiet",
                      "--out", tmp_path / "map"])
    assert rc in (0, 1), err
    assert f"SHA-256 {sha256(MAP_CASE)}" in (tmp_path / "map.svg").read_text(encoding="utf-8")


class _Tables(HTMLParser):
    """(caption, header cells, first body cell) of every table of a report."""

    def __init__(self):
        super().__init__()
        self.tables, self._cell, self._where, self._text = [], None, None, ""

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self.tables.append(["", [], None])
        elif tag in ("caption", "th", "td"):
            self._where, self._text = tag, ""

    def handle_data(self, data):
        if self._where:
            self._text += data

    def handle_endtag(self, tag):
        if tag == self._where and self.tables:
            t = self.tables[-1]
            if tag == "caption":
                t[0] = self._text.strip()
            elif tag == "th" and t[2] is None:
                t[1].append(self._text.strip())
            elif tag == "td" and t[2] is None:
                t[2] = self._text.strip()
            self._where = None


CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")
PDFTOTEXT = shutil.which("pdftotext")


@pytest.mark.skipif(not (CHROMIUM and PDFTOTEXT), reason="needs headless Chromium and pdftotext (poppler-utils)")
@pytest.mark.parametrize("case", [SULPHUR, CARBON], ids=lambda p: p.stem)
def test_no_table_header_stands_alone_at_the_foot_of_a_page(tmp_path, case):
    page = tmp_path / "report.html"
    rc, _, err = run(["check", case, "--report", page])
    assert rc in (0, 1), err
    pdf = tmp_path / "report.pdf"
    proc = subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                           "--disable-background-networking", "--disable-component-update", "--disable-sync",
                           f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer",
                           f"--print-to-pdf={pdf}", page.as_uri()], capture_output=True, text=True, timeout=180)
    if not pdf.exists():
        pytest.skip(f"Chromium could not print here: {proc.stderr[-300:]}")
    pages = subprocess.run([PDFTOTEXT, "-layout", str(pdf), "-"], capture_output=True, text=True).stdout.split("\f")
    parser = _Tables()
    parser.feed(page.read_text(encoding="utf-8"))
    checked = 0
    for caption, headers, first in parser.tables:
        where = [p for p in pages if caption and caption in p]
        heads = [" ".join(h.split()[:2]) for h in headers if h]
        if len(where) != 1 or not heads or not first:
            continue                                            # a caption printed twice cannot be placed
        lines = where[0].split(caption, 1)[1].split("\n")
        assert any(ln.strip().startswith(heads[0]) for ln in lines), \
            f"table {caption!r}: its caption and header row are on different pages"
        # a line that starts with the first row's first word, and is not a wrapped header line
        word = first.split()[0]
        rows = [ln for ln in lines if ln.strip().startswith(word) and not any(ln.strip().startswith(h) for h in heads)]
        assert rows, f"table {caption!r}: its header row is not followed by its first row on the same page"
        checked += 1
    assert checked >= 8
