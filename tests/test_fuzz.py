"""Property-based fuzzing of the input side: case loader, equation parser, unit parser.

Properties (design §4-§5: unusable input is an ``InputError`` naming the file, never a crash):

* ``auditor.case.load_case`` on random YAML structures (mappings, lists and scalars, biased
  towards the real keys, species and quantities, dumped with ``yaml.safe_dump``), on random
  text and bytes, and on random mutations of the demo cases in ``cases/`` (delete, duplicate
  or swap lines, replace a value with a random scalar, insert random bytes) either returns a
  ``Case`` -- and then ``auditor.audit.run(case, confirm=False)`` returns a result or raises
  ``InputError`` -- or raises an ``InputError`` whose text names the file.
* ``auditor.stoichiometry.parse_equation`` on random text against a small packaged system
  returns a ``Reaction`` (which survives a format/parse round trip) or raises
  ``EquationError`` naming the file, key path and line.
* ``auditor.case.parse_quantity`` on random text and numbers, for each kind, returns a
  finite float or raises ``ValueError``.

Each test counts the examples it ran and the outcomes, and prints them (``pytest -s``).

Profiles (settings: ``derandomize=True``, ``database=None``, ``deadline=None``):

* default ``fuzz``: a few thousand examples in all, well under a minute on two cores;
* ``fuzz-long``: 20000 examples per test, e.g.
  ``HYPOTHESIS_PROFILE=fuzz-long python -m pytest tests/test_fuzz.py -s``.

Known bugs (each with a deterministic ``xfail(strict=True)`` reproduction, here or in
``test_failures.py``) are recognised by ``known_bug`` and counted instead of failing the run,
so that the fuzzers keep guarding everything else; ``AUDITOR_FUZZ_STRICT=1`` turns them into
failures.  When such a bug is fixed its strict xfail starts to pass (XPASS fails the run):
then delete the xfail and its entry in ``known_bug``.  The ``test_found_*`` tests at the end
reproduce what the fuzzers found while they were written.
"""
from __future__ import annotations

import math
import os
import re
import traceback
from collections import Counter
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings, strategies as st

from auditor import audit
from auditor.case import (CLAIM_KEYS, RATIO_KEYS, SPECIFIED_KEYS, SYSTEM_KEYS, TOP_KEYS, VERDICTS, Case, load_case,
                          parse_quantity)
from auditor.errors import EquationError, InputError
from auditor.stoichiometry import Reaction, format_equation, parse_equation
from auditor.system import from_packaged

REPO = Path(__file__).resolve().parents[1]
DEMO_CASES = {p.name: p.read_bytes() for p in sorted((REPO / "cases").glob("*.yaml"))}

# ------------------------------------------------------------------ profiles

settings.register_profile("fuzz", derandomize=True, database=None, deadline=None, print_blob=False,
                          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                                 HealthCheck.filter_too_much])
settings.register_profile("fuzz-long", parent=settings.get_profile("fuzz"), max_examples=20000)
PROFILE = os.environ.get("HYPOTHESIS_PROFILE", "fuzz")
if PROFILE not in ("fuzz", "fuzz-long"):
    PROFILE = "fuzz"
STRICT = os.environ.get("AUDITOR_FUZZ_STRICT") == "1"


def fuzz(n: int):
    """Settings for one fuzzer: ``n`` examples in the default profile, the profile's count otherwise."""
    base = settings.get_profile(PROFILE)
    return settings(base, max_examples=n if PROFILE == "fuzz" else base.max_examples)


TOTALS: Counter = Counter()


@pytest.fixture(scope="module", autouse=True)
def _print_totals():
    yield
    print(f"\n[fuzz] profile {PROFILE}: {sum(TOTALS.values())} examples in all: "
          + ", ".join(f"{k} {v}" for k, v in TOTALS.items()))


def report(name: str, tally: Counter) -> None:
    n = tally.pop("examples")
    TOTALS[name] = n
    print(f"\n[fuzz] {name}: {n} examples: " + ", ".join(f"{k} {v}" for k, v in sorted(tally.items())))
    assert n > 0


# ------------------------------------------------------------------ known bugs

def known_bug(exc: BaseException | None = None, message: str | None = None) -> str | None:
    """The id of a known, reported bug that this outcome shows, or None."""
    if STRICT or exc is None:
        return None
    if isinstance(exc, (yaml.YAMLError, ValueError)) and not isinstance(exc, InputError) and any(
            f.filename.endswith(os.path.join("yaml", "constructor.py")) for f in traceback.extract_tb(exc.__traceback__)):
        return "J: a scalar PyYAML cannot construct escapes the loader"
    return None


# ------------------------------------------------------------------ strategies

GAS = ["CH4", "H2O", "CO", "CO2", "H2", "N2", "O2", "NO", "Ar", "Ar+", "Electron"]
SPECIES = GAS + ["C(gr)", "CaCO3(caL)", "CaO(s)", "H2O(L)", "XYZ", "NO", "true", "1", ""]
PHASES = ["gas", "graphite", "liquid", "gaz"]
QUANTITIES = ["850 degC", "25 bar", "1 kmol", "0 K", "-300 degC", "1 atm", "2 lbmol", "300", "nan mol", "1e400 K",
              "1e308 psi", "3 furlong", "25 K", "-1 bar", "1/2 mol", "5 degF", ".5 kPa", "inf", "1e-320 Pa"]
WORDS = list(dict.fromkeys([*TOP_KEYS, *SYSTEM_KEYS, *SPECIFIED_KEYS, *RATIO_KEYS, *CLAIM_KEYS, *VERDICTS, *PHASES,
                            *SPECIES, "packaged", "complete", "from-mechanism", "all", "ratio", "same-composition",
                            "feed-temperature", "mole-fractions"]))
HUGE = [10 ** 309, -(10 ** 309), 2 ** 1100]
# written into a line as they are (unquoted): YAML types, tags and aliases
RAW_SCALARS = ["2024-02-30", "2024-02-03", "!!python/object:os.system x", "!custom 1", "!!float abc", "!!int 1.5",
               "1" + "0" * 5000, "*undefined", "&a 1", "!!binary AAAA", "0x1F", "0o17", "1_000", "~", ".NaN", "-.inf",
               "!!set {a, b}", "!!omap [a: 1]", "'unclosed", "{a: 1", "[1, 2", "|", ">-", "? a", "@", "`", "%TAG"]
HOSTILE_PATHS = ["mech.yaml", "mech\x00.yaml", "x" * 300, "../" * 40, "/dev/zero", "/dev/null", "/proc/self/status",
                 "/", ".", "~/m.yaml", "C:\\m.yaml", "\u00e9.yaml", " "]

scalars = st.one_of(st.none(), st.booleans(), st.integers(-10, 10), st.integers(), st.sampled_from(HUGE),
                    st.floats(), st.sampled_from(WORDS), st.sampled_from(QUANTITIES), st.text(max_size=10))
keys = st.one_of(st.sampled_from(WORDS), st.text(max_size=6), st.integers(-3, 3))
trees = st.recursive(scalars, lambda kids: st.one_of(st.lists(kids, max_size=4),
                                                     st.dictionaries(keys, kids, max_size=4)), max_leaves=8)
coefficients = st.sampled_from(["", "", "2 ", "1/2 ", "0.5 ", "3/2 ", "0 ", "2", "1/0 ", "-1 "])
arrows = st.sampled_from([" <=> ", " => ", " = ", " <= ", " -> ", "<=>", " <=> <=> "])
equations = st.builds(lambda l, a, r: " + ".join(l) + a + " + ".join(r),
                      st.lists(st.builds(str.__add__, coefficients, st.sampled_from(SPECIES)), max_size=3), arrows,
                      st.lists(st.builds(str.__add__, coefficients, st.sampled_from(SPECIES)), max_size=3))


def either(plausible, *more):
    """Mostly (6 in 8) a plausible value, else one of ``more`` or a random structure."""
    options = [plausible] * 6 + list(more or [plausible]) + [trees]
    return st.integers(0, len(options) - 1).flatmap(options.__getitem__)


quantity = either(st.sampled_from(QUANTITIES), st.floats(), st.integers())
ratio = st.fixed_dictionaries({"phase": either(st.sampled_from(PHASES)), "numerator": either(st.sampled_from(GAS)),
                               "denominator": either(st.sampled_from(GAS)),
                               "value": either(st.floats(min_value=-1, max_value=10))})
phase_lists = either(st.fixed_dictionaries(
    {"gas": either(st.lists(st.sampled_from(GAS), min_size=1, max_size=6, unique=True))},
    optional={"graphite": either(st.just(["C(gr)"])), "liquid": either(st.just(["H2O(L)"]))}))
packaged_system = st.fixed_dictionaries({"source": either(st.just("packaged")), "phases": phase_lists})
mechanism_system = st.fixed_dictionaries({"mechanism": st.one_of(st.text(max_size=12), st.sampled_from(HOSTILE_PATHS), trees)},
                                         optional={"phases": phase_lists, "source": scalars})
case_like = st.fixed_dictionaries(
    {"system": either(packaged_system, mechanism_system, mechanism_system)},
    optional={
        "title": scalars,
        "reactions": either(st.sampled_from(["complete", "from-mechanism"]), st.lists(equations, max_size=3)),
        "feed": either(st.dictionaries(st.sampled_from(SPECIES), quantity, max_size=4)),
        "coexisting": either(st.lists(st.sampled_from(PHASES), max_size=3)),
        "specified": either(st.fixed_dictionaries({}, optional={
            "temperature": quantity, "pressure": quantity,
            "mole-fractions": either(st.dictionaries(st.sampled_from(PHASES), st.dictionaries(
                st.sampled_from(GAS), either(st.floats(min_value=-1, max_value=2)), max_size=2), max_size=2)),
            "ratios": either(st.lists(ratio, max_size=2)),
            "phase-fractions": either(st.dictionaries(st.sampled_from(PHASES), st.floats(), max_size=2)),
            "adiabatic": either(st.fixed_dictionaries({"feed-temperature": quantity}))})),
        "restrictions": either(st.lists(st.one_of(
            st.fixed_dictionaries({"ratio": ratio}),
            st.fixed_dictionaries({"same-composition": st.lists(st.sampled_from(PHASES), max_size=3)})), max_size=2)),
        "claims": either(st.fixed_dictionaries({}, optional={
            "independent-reactions": either(st.integers(-1, 5)), "degrees-of-freedom": either(st.integers(-1, 5)),
            "components": either(st.integers(0, 5)), "phases-present": either(st.lists(st.sampled_from(PHASES))),
            "verdict": either(st.sampled_from(VERDICTS))})),
    })


def dump(doc, flow: bool, unicode: bool) -> bytes:
    return yaml.safe_dump(doc, default_flow_style=flow, allow_unicode=unicode, sort_keys=False).encode("utf-8")


def dump_scalar(v) -> str:
    text = yaml.safe_dump(v, default_flow_style=True, width=10 ** 6)
    return text.removesuffix("\n").removesuffix("\n...").replace("\n", " ")


mutations = st.one_of(
    st.tuples(st.just("delete"), st.integers(0, 10 ** 6)),
    st.tuples(st.just("duplicate"), st.integers(0, 10 ** 6)),
    st.tuples(st.just("swap"), st.integers(0, 10 ** 6), st.integers(0, 10 ** 6)),
    st.tuples(st.just("value"), st.integers(0, 10 ** 6), st.integers(0, 3).flatmap(
        [st.sampled_from(RAW_SCALARS), st.sampled_from(RAW_SCALARS), scalars.map(dump_scalar),
         st.text(max_size=10)].__getitem__)),
    st.tuples(st.just("bytes"), st.integers(0, 10 ** 6), st.binary(min_size=1, max_size=6)),
)


def mutate(data: bytes, ops) -> bytes:
    lines = data.split(b"\n")
    for op in ops:
        i = op[1] % len(lines)
        if op[0] == "delete" and len(lines) > 1:
            del lines[i]
        elif op[0] == "duplicate":
            lines.insert(i, lines[i])
        elif op[0] == "swap":
            j = op[2] % len(lines)
            lines[i], lines[j] = lines[j], lines[i]
        elif op[0] == "value":
            # the value of the i-th (or next) line with a key; "k: v" -> "k: RANDOM"
            for k in range(len(lines)):
                line = lines[(i + k) % len(lines)]
                m = re.match(rb"^(\s*-?\s*[^#:\s][^:#]*:)\s*(\S.*)?$", line)
                if m:
                    lines[(i + k) % len(lines)] = m.group(1) + b" " + op[2].encode("utf-8")
                    break
        elif op[0] == "bytes":
            flat = b"\n".join(lines)
            at = op[1] % (len(flat) + 1)
            lines = (flat[:at] + op[2] + flat[at:]).split(b"\n")
    return b"\n".join(lines)


# ------------------------------------------------------------------ the loader property

def check_loader(path: Path, tally: Counter) -> None:
    """load_case -> Case (then audit.run -> result or InputError) or InputError naming the file."""
    tally["examples"] += 1
    try:
        case = load_case(path)
    except InputError as exc:
        msg = str(exc)
        assert str(path) in msg, msg
        assert "Node(" not in msg and "_Mapping" not in msg, msg     # never the loader's own structures
        tally["InputError from load_case"] += 1
        return
    except Exception as exc:
        bug = known_bug(exc)
        if bug is None:
            raise
        tally[f"known bug {bug}"] += 1
        return
    assert isinstance(case, Case)
    try:
        result = audit.run(case, confirm=False)
    except InputError as exc:
        # the case file, or for a problem inside a mechanism file that file
        msg = str(exc)
        mechanism = case.system.mechanism if case.system else None
        assert str(path) in msg or (mechanism is not None and str(mechanism) in msg), msg
        tally["Case, then InputError from audit.run"] += 1
        return
    except Exception as exc:
        bug = known_bug(exc)
        if bug is None:
            raise
        tally[f"known bug {bug}"] += 1
        return
    assert result.verdict in VERDICTS
    tally["Case, audited"] += 1


def test_loader_random_structures(tmp_path):
    tally = Counter()
    path = tmp_path / "random.yaml"

    @fuzz(200)
    @given(doc=st.one_of(trees, st.dictionaries(keys, trees, max_size=6)), flow=st.booleans(), uni=st.booleans())
    def prop(doc, flow, uni):
        path.write_bytes(dump(doc, flow, uni))
        check_loader(path, tally)

    prop()
    report("loader: random structures", tally)


def test_loader_case_like_structures(tmp_path):
    tally = Counter()
    path = tmp_path / "case_like.yaml"

    @fuzz(350)
    @given(doc=case_like, flow=st.booleans(), uni=st.booleans())
    def prop(doc, flow, uni):
        path.write_bytes(dump(doc, flow, uni))
        check_loader(path, tally)

    prop()
    report("loader: case-like structures", tally)


def test_loader_random_text_and_bytes(tmp_path):
    tally = Counter()
    path = tmp_path / "text.yaml"

    @fuzz(250)
    @given(data=st.one_of(st.text(max_size=200).map(lambda s: s.encode("utf-8")), st.binary(max_size=200),
                          st.lists(st.sampled_from(WORDS + [": ", "\n", "  ", "- ", "[", "]", "{", "}", ", ", "&a ",
                                                            "*a ", "!!python/object ", "? ", "---\n", "#"]),
                                   max_size=30).map(lambda w: "".join(w).encode("utf-8"))))
    def prop(data):
        path.write_bytes(data)
        check_loader(path, tally)

    prop()
    report("loader: random text and bytes", tally)


def test_loader_mutated_demo_cases(tmp_path):
    tally = Counter()
    path = tmp_path / "mutated.yaml"

    @fuzz(500)
    @given(name=st.sampled_from(sorted(DEMO_CASES)), ops=st.lists(mutations, min_size=1, max_size=3))
    def prop(name, ops):
        path.write_bytes(mutate(DEMO_CASES[name], ops))
        check_loader(path, tally)

    prop()
    report("loader: mutated demo cases", tally)


def test_demo_cases_load_unmutated():
    """The mutation fuzzer starts from cases that are valid."""
    for name in DEMO_CASES:
        assert isinstance(load_case(REPO / "cases" / name), Case)


# ------------------------------------------------------------------ the equation parser

@pytest.fixture(scope="module")
def small_system():
    return from_packaged({"gas": ["CH4", "H2O", "CO", "CO2", "H2", "O2", "H", "OH"], "graphite": ["C(gr)"],
                          "liquid": ["H2O(L)"]})


EQ_TOKENS = ["CH4", "H2O", "CO", "CO2", "H2", "O2", "H", "OH", "C(gr)", "H2O(L)", "H2O[gas]", "H2O[liquid]",
             "XYZ", "2CO", " + ", "+", " <=> ", "=>", " = ", "<=", " ", "\t", "1/2 ", "2 ", "0 ", "0.5 ", ".5 ",
             "1e3 ", "-1 ", "3/0 ", "(", ")"]


SYSTEM_SPECIES = ["CH4", "H2O", "CO", "CO2", "H2", "O2", "H", "OH", "C(gr)", "H2O(L)"]
system_equations = st.builds(
    lambda l, a, r: " + ".join(l) + a + " + ".join(r),
    st.lists(st.builds(str.__add__, coefficients, st.sampled_from(SYSTEM_SPECIES)), min_size=1, max_size=3), arrows,
    st.lists(st.builds(str.__add__, coefficients, st.sampled_from(SYSTEM_SPECIES)), min_size=1, max_size=3))


def test_parse_equation_random_text(small_system):
    tally = Counter()
    n_species = small_system.n_species

    @fuzz(700)
    @given(text=st.one_of(st.text(max_size=40), equations, system_equations, system_equations,
                          st.lists(st.one_of(st.sampled_from(EQ_TOKENS), st.text(max_size=3)), max_size=12)
                          .map("".join)))
    def prop(text):
        tally["examples"] += 1
        try:
            r = parse_equation(text, small_system, "fuzz.yaml", "reactions[0]", 7)
        except EquationError as exc:
            assert str(exc).startswith("fuzz.yaml:7: reactions[0]: "), str(exc)
            tally["EquationError"] += 1
            return
        assert isinstance(r, Reaction)
        ks = [k for k, _ in r.stoich]
        assert ks == sorted(set(ks)) and all(0 <= k < n_species for k in ks)
        assert all(c != 0 for _, c in r.stoich)
        tally["Reaction"] += 1
        if any(c < 0 for _, c in r.stoich) and any(c > 0 for _, c in r.stoich):
            again = parse_equation(format_equation(dict(r.stoich), small_system.labels), small_system)
            assert again.stoich == r.stoich
            tally["round trip"] += 1

    prop()
    report("parse_equation", tally)


# ------------------------------------------------------------------ the unit parser

UNITS = ["K", "degC", "degF", "degR", "Pa", "kPa", "MPa", "bar", "mbar", "atm", "psi", "torr", "mol", "kmol", "mmol",
         "lbmol", "", "m", "J", "K**2", "1/K", "delta_degC", "kelvin", "%", "dimensionless", "K*K/K", "bar*0",
         "mol**1e308", "degC/s"]
numbers = st.one_of(st.floats(), st.integers(), st.sampled_from(HUGE + [0, -0.0, 1e308, 5e-324]))


def test_parse_quantity_random_input():
    tally = Counter()

    @fuzz(1000)
    @given(value=st.one_of(st.text(max_size=20), numbers, st.none(), st.booleans(),
                           st.builds(lambda n, sep, u: f"{n}{sep}{u}", numbers, st.sampled_from(["", " ", "  "]),
                                     st.one_of(st.sampled_from(UNITS), st.text(max_size=5))),
                           st.lists(st.integers(), max_size=2)),
           kind=st.sampled_from(["temperature", "pressure", "amount"]))
    def prop(value, kind):
        tally["examples"] += 1
        try:
            x = parse_quantity(value, kind)
        except ValueError:
            tally["ValueError"] += 1
            return
        except Exception as exc:
            bug = known_bug(exc)
            if bug is None:
                raise
            tally[f"known bug {bug}"] += 1
            return
        assert isinstance(x, float)
        assert math.isfinite(x), f"parse_quantity({value!r}, {kind!r}) = {x!r}"
        tally["finite value"] += 1

    prop()
    report("parse_quantity", tally)


@fuzz(300)
@given(x=st.floats(allow_nan=False, allow_infinity=False, min_value=-1e300, max_value=1e300))
def test_parse_quantity_oracle(x):
    """Against plain arithmetic: K and mol as given, bar = 1e5 Pa, degC = K - 273.15."""
    assert parse_quantity(x, "temperature") == x
    assert parse_quantity(f"{x!r} mol", "amount") == x
    assert parse_quantity(f"{x!r} bar", "pressure") == pytest.approx(x * 1e5, rel=1e-12, abs=1e-300)
    assert parse_quantity(f"{x!r} degC", "temperature") == pytest.approx(x + 273.15, rel=1e-12, abs=1e-9)


# ------------------------------------------------------------------ what the fuzzers found
# Deterministic reproductions of bugs the fuzzers found while these tests were written (all fixed
# since, except J: see known_bug() and the 'BUG_SCALAR_CONSTRUCTION' rows of test_failures.py).

@pytest.mark.parametrize("value, kind", [("1e308 psi", "pressure"), ("1.8e305 bar", "pressure"),
                                         ("1e308 kmol", "amount"), ("1e308 lbmol", "amount")])
def test_found_parse_quantity_overflow_after_conversion(value, kind):
    """Once returned inf: the number is finite but its SI value overflows."""
    try:
        x = parse_quantity(value, kind)
    except ValueError:
        return
    assert math.isfinite(x), x


@pytest.mark.parametrize("where", ["parse_quantity", "feed amount", "mole fraction", "ratio value"])
def test_found_huge_integer(where, tmp_path):
    """Once an OverflowError (exit 3): an integer too large for a float."""
    huge = "1" + "0" * 400
    if where == "parse_quantity":
        with pytest.raises(ValueError):
            parse_quantity(int(huge), "amount")
        return
    demo = DEMO_CASES["reformer_design_point.yaml"].decode("utf-8")
    text = {"feed amount": demo.replace("CH4: 1.0,", f"CH4: {huge},"),
            "mole fraction": demo.replace("pressure: 25 bar", "pressure: 25 bar\n  mole-fractions: {gas: {CO: "
                                          + huge + "}}"),
            "ratio value": demo.replace("claims:", "restrictions:\n  - ratio: {phase: gas, numerator: H2, "
                                        f"denominator: N2, value: {huge}}}\nclaims:")}[where]
    path = tmp_path / "huge.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError, match=re.escape(str(path))):
        load_case(path)


@pytest.mark.parametrize("old, new", [("title: Kestrel Bay", "title: [Kestrel Bay]\n#"),
                                      ("coexisting: [gas]", "coexisting: [[gas]]"),
                                      ("independent-reactions: 2", "independent-reactions: [2]"),
                                      ("pressure: 25 bar", "pressure: {value: 25, unit: bar}")])
def test_found_messages_show_internal_nodes(old, new, tmp_path):
    """Type errors once printed the loader's internal structures ('got [(ScalarNode(tag=...), 'x')]');
    the fuzzers check every message for it."""
    demo = DEMO_CASES["reformer_design_point.yaml"].decode("utf-8")
    lines = demo.split("\n")
    i = next(i for i, ln in enumerate(lines) if ln.lstrip().startswith(old))
    lines[i] = lines[i].replace(old, new, 1)
    path = tmp_path / "types.yaml"
    path.write_text("\n".join(lines), encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_case(path)
    msg = str(info.value)
    assert "Node(" not in msg and "_Mapping" not in msg, msg


# ------------------------------------------------------------------ mechanism files (issue 20)

MECHANISMS = {p.name: p.read_bytes() for p in sorted((REPO / "tests" / "data").glob("*mech*.yaml"))}
MECHANISM_CASE = (REPO / "tests" / "data" / "invented_ammonia_case.yaml").read_text(encoding="utf-8")


def check_mechanism(path: Path, tally: Counter) -> None:
    """What ``auditor reactions`` does with a mechanism file: its system and exact analysis, or
    an InputError naming the file; never another exception."""
    from auditor.stoichiometry import analyse, mechanism_reactions
    from auditor.system import from_mechanism
    tally["examples"] += 1
    try:
        system = from_mechanism(path)
        analyse(system, mechanism_reactions(system))
    except InputError as exc:
        assert str(path) in str(exc) or path.name in str(exc), str(exc)
        tally["InputError"] += 1
        return
    tally["analysed"] += 1


def test_mechanism_mutated_files(tmp_path):
    """Mutated hand-written mechanisms (lines deleted, duplicated, swapped; values replaced by
    hostile scalars: aliases, anchors, tags, NaN, huge numbers; random bytes) read as the
    'reactions' command reads them, and as a case's mechanism (load, count, no minimisation)."""
    tally, case_tally = Counter(), Counter()
    path = tmp_path / "mech.yaml"
    case = tmp_path / "case.yaml"
    case.write_text(MECHANISM_CASE.replace("invented_ammonia_mech.yaml", "mech.yaml"), encoding="utf-8")

    @fuzz(150)
    @given(name=st.sampled_from(sorted(MECHANISMS)), ops=st.lists(mutations, min_size=1, max_size=3))
    def prop(name, ops):
        path.write_bytes(mutate(MECHANISMS[name], ops))
        check_mechanism(path, tally)
        if name == "invented_ammonia_mech.yaml":
            check_loader(case, case_tally)

    prop()
    report("mechanism: mutated files", tally)
    if case_tally["examples"]:
        report("mechanism: mutated files under a case", case_tally)


def test_mechanism_random_structures(tmp_path):
    """Random YAML structures biased to a mechanism's keys, as a mechanism file."""
    tally = Counter()
    path = tmp_path / "mech.yaml"
    words = st.sampled_from(["phases", "species", "reactions", "name", "thermo", "elements", "composition", "model",
                             "ideal-gas", "NASA7", "constant-cp", "equation", "rate-constant", "data",
                             "temperature-ranges", "state", "H2", "O2", "H2O", "H", "O", "units", "T0", "h0", "s0",
                             "cp0", "kinetics", "gas", "A", "b", "Ea"])
    leaves = st.one_of(scalars, words)
    mech_trees = st.recursive(leaves, lambda kids: st.one_of(st.lists(kids, max_size=4),
                                                             st.dictionaries(words, kids, max_size=4)), max_leaves=12)

    @fuzz(150)
    @given(doc=st.dictionaries(words, mech_trees, max_size=4), flow=st.booleans())
    def prop(doc, flow):
        path.write_bytes(dump(doc, flow, True))
        check_mechanism(path, tally)

    prop()
    report("mechanism: random structures", tally)
