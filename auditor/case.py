"""Case files: YAML -> validated, frozen :class:`Case` in SI units (design §5).

The loader works on the YAML *node* tree so that every problem carries its line, and
it collects every problem in a file before raising one :class:`CaseError`.  Only safe
YAML is read; file size, nesting depth and node count (alias expansion included) are
capped by the named limits in :mod:`auditor.settings`.

Units are parsed by :mod:`auditor.units` (pint's definitions: K, degC, degF, Pa, kPa, bar, atm,
psi; mol, kmol, lbmol; feed amounts also in mass units, kg, t, lb, converted to moles with
each species' molar mass once the species are known: :func:`feed_moles`).  The text of every
feed amount and specification is kept as written (``Case.as_written``) for reports.
"""
from __future__ import annotations

import difflib
import functools
import math
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any, Mapping

from . import settings, units
from .errors import CaseError, InputError, LimitError, Problem
from .system import shipped_data_file

# ------------------------------------------------------------------ records


@dataclass(frozen=True)
class RatioSpec:
    """x(numerator) / x(denominator) = value in one phase."""

    phase: str
    numerator: str
    denominator: str
    value: float
    key_path: str


@dataclass(frozen=True)
class MoleFractionSpec:
    phase: str
    species: str
    value: float
    key_path: str


@dataclass(frozen=True)
class PhaseFractionSpec:
    """Moles of a phase over all moles: an extensive specification."""

    phase: str
    value: float
    key_path: str


@dataclass(frozen=True)
class Specified:
    temperature_K: float | None = None
    pressure_Pa: float | None = None
    mole_fractions: tuple[MoleFractionSpec, ...] = ()
    ratios: tuple[RatioSpec, ...] = ()
    phase_fractions: tuple[PhaseFractionSpec, ...] = ()
    adiabatic_feed_temperature_K: float | None = None

    def names(self) -> list[str]:
        out = []
        if self.temperature_K is not None:
            out.append("temperature")
        if self.pressure_Pa is not None:
            out.append("pressure")
        out += [f"mole fraction x({m.species}) in {m.phase}" for m in self.mole_fractions]
        out += [f"ratio x({r.numerator})/x({r.denominator}) in {r.phase}" for r in self.ratios]
        out += [f"phase fraction of {p.phase}" for p in self.phase_fractions]
        if self.adiabatic_feed_temperature_K is not None:
            out.append("adiabatic enthalpy balance")
        return out


@dataclass(frozen=True)
class DeclaredRestriction:
    kind: str                       # "ratio" or "same-composition"
    key_path: str
    ratio: RatioSpec | None = None
    phases: tuple[str, ...] = ()


@dataclass(frozen=True)
class SystemSpec:
    source: str                                 # "packaged" or "mechanism"
    mechanism: Path | None
    phases: tuple[tuple[str, tuple[str, ...] | None], ...]  # (phase, species or None = all)


@dataclass(frozen=True)
class Case:
    path: Path
    title: str
    system: SystemSpec
    reactions: str | tuple[tuple[str, str], ...]   # "complete", "from-mechanism", or (equation, key path)
    # species label -> amount, exact as written: mol, or kg for the species in feed_mass
    # (moles need the molar mass: use feed_moles(case, system))
    feed: tuple[tuple[str, Fraction], ...] | None
    coexisting: tuple[str, ...] | None
    specified: Specified
    restrictions: tuple[DeclaredRestriction, ...]
    claims: tuple[tuple[str, Any], ...]
    lines: Mapping[str, int] = field(default_factory=dict, compare=False)  # key path -> line (1-based)
    feed_mass: frozenset[str] = frozenset()     # feed species given in a mass unit (amount in kg)
    # key path -> the text exactly as the user wrote it, for every feed amount and specification
    # ("feed.CH4": "2 kmol", "specified.temperature": "850 degC"), so reports can show inputs as entered
    as_written: Mapping[str, str] = field(default_factory=dict, compare=False)

    def line(self, key_path: str) -> int | None:
        return self.lines.get(key_path)


# ------------------------------------------------------------------ units

def parse_quantity(value: Any, kind: str) -> float:
    """SI value of ``value`` (a number in the default unit, or ``"850 degC"``); see :mod:`auditor.units`.

    Raises ValueError with a message naming what was expected.
    """
    return units.parse(value, kind).si


def parse_amount(value: Any) -> Fraction:
    """Exact amount in mol: the decimal as written times the exact unit factor
    (``0.1 lbmol`` is exactly 45.359237 mol, so ratios of feed amounts survive conversion)."""
    q = units.parse(value, "amount")
    return _exact(q)


def _exact(q: units.Quantity) -> Fraction:
    return q.exact if q.exact is not None else Fraction(repr(q.si))


# ------------------------------------------------------------------ YAML with lines

class _Reader:
    """Validates a YAML node tree, collecting problems with key paths and lines."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []
        self.lines: dict[str, int] = {}
        self.texts: dict[str, str] = {}     # key path -> scalar text as written
        self.count = 0

    def problem(self, node, key_path: str, message: str):
        line = node.start_mark.line + 1 if node is not None else None
        col = node.start_mark.column + 1 if node is not None else None
        self.problems.append(Problem(self.file, message, key_path, line, col))

    def note(self, node, key_path: str):
        self.lines[key_path] = node.start_mark.line + 1
        if node.id == "scalar":
            self.texts[key_path] = node.value

    def plain(self, node, key_path: str, depth: int = 0, names: bool = False):
        """Python value of a node (aliases expanded, with the node budget enforced)."""
        import yaml
        self.count += 1
        if self.count > settings.MAX_YAML_NODES:
            raise LimitError(Problem(self.file, f"case file expands to more than {settings.MAX_YAML_NODES} YAML "
                                     "nodes (alias expansion?); refused", key_path, node.start_mark.line + 1))
        if depth > settings.MAX_YAML_DEPTH:
            raise LimitError(Problem(self.file, f"case file nests deeper than {settings.MAX_YAML_DEPTH} levels; refused",
                                     key_path, node.start_mark.line + 1))
        self.note(node, key_path)
        if isinstance(node, yaml.MappingNode):
            out = {}
            for k, v in node.value:
                # keys are names: keep the text as written (YAML 1.1 would turn NO into False)
                key = k.value if isinstance(k, yaml.ScalarNode) else self.plain(k, key_path, depth + 1)
                if not isinstance(key, (str, int, float)):
                    self.problem(k, key_path, "mapping keys must be plain names")
                    continue
                if str(key) in out:
                    self.problem(k, f"{key_path}.{key}".lstrip("."), f"key {key!r} appears twice; keep one")
                    continue
                out[str(key)] = (k, v)
            return _Mapping(out)
        if isinstance(node, yaml.SequenceNode):
            return [(v, self.plain(v, f"{key_path}[{i}]", depth + 1, names)) for i, v in enumerate(node.value)]
        if names and isinstance(node, yaml.ScalarNode) and node.style is None and node.tag.endswith(":bool"):
            return node.value  # a species called NO, not the YAML 1.1 boolean
        try:
            return _scalar_loader().construct_object(node)
        except (ValueError, OverflowError, yaml.YAMLError) as exc:
            # an impossible date, an unknown or python tag, '!!float abc', an integer over 4300 digits
            what = " ".join((getattr(exc, "problem", None) or str(exc).split(";")[0]).split())
            raise CaseError(Problem(self.file, f"cannot read this value: {what[:200]}", key_path,
                                    node.start_mark.line + 1, node.start_mark.column + 1)) from None


class _Mapping(dict):
    """key -> (key node, value node)"""


@functools.lru_cache(maxsize=1)
def _scalar_loader():
    import yaml
    return yaml.SafeLoader("")


def _check_budget(root, file: str) -> None:
    """Refuse a node tree that expands (through aliases) beyond the node budget or nests
    beyond the depth limit, before anything walks it; stops as soon as a limit is hit."""
    import yaml
    stack = [(root, 0)]
    seen = 0
    while stack:
        node, depth = stack.pop()
        seen += 1
        if seen > settings.MAX_YAML_NODES:
            raise LimitError(Problem(file, f"case file expands to more than {settings.MAX_YAML_NODES} YAML nodes "
                                     "(alias expansion?); refused", "", node.start_mark.line + 1))
        if depth > settings.MAX_YAML_DEPTH:
            raise LimitError(Problem(file, f"case file nests deeper than {settings.MAX_YAML_DEPTH} levels; refused",
                                     "", node.start_mark.line + 1))
        if isinstance(node, yaml.MappingNode):
            for k, v in node.value:
                stack.append((k, depth + 1))
                stack.append((v, depth + 1))
        elif isinstance(node, yaml.SequenceNode):
            stack.extend((v, depth + 1) for v in node.value)


def _load_nodes(path: Path):
    import yaml
    if path.is_dir():
        raise CaseError(Problem(str(path), "is a directory, not a case file"))
    try:
        # read at most one byte past the limit, whatever stat says (pipes report size 0)
        with open(path, "rb") as fh:
            raw = fh.read(settings.MAX_CASE_FILE_BYTES + 1)
    except OSError as exc:
        raise CaseError(Problem(str(path), f"cannot read case file: {exc.strerror or exc}")) from None
    if len(raw) > settings.MAX_CASE_FILE_BYTES:
        raise LimitError(Problem(str(path), f"case file is larger than the limit of "
                                 f"{settings.MAX_CASE_FILE_BYTES} bytes; refused"))
    if b"\x00" in raw:
        raise CaseError(Problem(str(path), "this is a binary file, not a YAML case file"))
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError(Problem(str(path), f"case file is not UTF-8 text (byte {exc.start}): save it as UTF-8")) from None
    if not text.strip():
        raise CaseError(Problem(str(path), "case file is empty; start from 'auditor new PATH'"))
    try:
        docs = list(yaml.compose_all(text, Loader=yaml.SafeLoader))
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = mark.line + 1 if mark else None
        col = mark.column + 1 if mark else None
        what = getattr(exc, "problem", None) or str(exc)
        raise CaseError(Problem(str(path), f"YAML syntax error: {what}", "", line, col)) from None
    except RecursionError:
        raise LimitError(Problem(str(path), f"case file nests deeper than {settings.MAX_YAML_DEPTH} levels; "
                                 "refused")) from None
    docs = [d for d in docs if d is not None]
    if not docs:
        raise CaseError(Problem(str(path), "case file is empty (only comments); start from 'auditor new PATH'"))
    if len(docs) != 1:
        raise CaseError(Problem(str(path), f"expected one YAML document, found {len(docs)}"))
    _check_budget(docs[0], str(path))
    if not isinstance(docs[0], yaml.MappingNode):
        raise CaseError(Problem(str(path), "a case file is a mapping of keys such as title, system, feed, specified",
                                "", docs[0].start_mark.line + 1))
    return docs[0]


TOP_KEYS = ("title", "system", "reactions", "feed", "coexisting", "specified", "restrictions", "claims")
SYSTEM_KEYS = ("source", "mechanism", "phases")
SPECIFIED_KEYS = ("temperature", "pressure", "mole-fractions", "ratios", "phase-fractions", "adiabatic")
RATIO_KEYS = ("phase", "numerator", "denominator", "value")
CLAIM_KEYS = ("independent-reactions", "degrees-of-freedom", "components", "phases-present", "verdict")
VERDICTS = ("well-posed", "under-specified", "over-specified", "inconsistent", "not-confirmed")


def _suggest(word: str, options) -> str:
    hit = _ranked(word, options, n=1, cutoff=0.5)
    return f"; did you mean {hit[0]!r}?" if hit else f"; expected one of: {', '.join(options)}"


def _ranked(word: str, options, n: int = 4, cutoff: float = 0.6) -> list[str]:
    """Names closest to ``word``, best first (difflib's similarity ratio; letter case counts
    only to break ties, so 'h2o' finds 'H2O' before 'H2')."""
    scored = []
    for o in dict.fromkeys(options):
        folded = difflib.SequenceMatcher(None, word.upper(), o.upper()).ratio()
        if folded >= cutoff:
            scored.append((-folded, -difflib.SequenceMatcher(None, word, o).ratio(), o))
    return [o for *_, o in sorted(scored)[:n]]


def load_case(path: str | Path) -> Case:
    """Read and validate a case file's structure and units.

    Raises
    ------
    CaseError
        With every problem found in the file (key path and line each).
    """
    path = Path(path)
    root = _load_nodes(path)
    rd = _Reader(str(path))
    top = rd.plain(root, "")

    def check_keys(mapping: _Mapping, allowed, where: str):
        for key, (knode, _) in mapping.items():
            if key not in allowed:
                rd.problem(knode, f"{where}.{key}".lstrip("."), f"unknown key {key!r}{_suggest(key, allowed)}")

    check_keys(top, TOP_KEYS, "")

    def get(mapping, key):
        return mapping[key][1] if key in mapping else None

    def value_of(node, kp):
        return rd.plain(node, kp) if node is not None else None

    def want_str(node, kp, what="a name") -> str | None:
        v = rd.plain(node, kp, names=True) if node is not None else None
        if (getattr(node, "id", None) == "scalar" and node.style is None and not isinstance(v, (str, bool))
                and v is not None):
            v = node.value  # text that YAML 1.1 reads as a number or a date: 'title: 2024-02-03'

        if not isinstance(v, str) or not v.strip():
            rd.problem(node, kp, f"expected {what}, got {_kind(v)}")
            return None
        return v.strip()

    def want_fraction(node, kp, what: str) -> float | None:
        v = value_of(node, kp)
        try:
            ok = not isinstance(v, bool) and isinstance(v, (int, float)) and math.isfinite(float(v))
        except OverflowError:
            ok = False
        if not ok:
            rd.problem(node, kp, f"expected {what} as a finite number, got {_kind(v)}")
            return None
        return float(v)

    def want(node, kp, kind: type, what: str):
        v = value_of(node, kp)
        if not isinstance(v, kind):
            rd.problem(node, kp, f"expected {what}, got {_kind(v)}")
            return None
        return v

    def want_mapping(node, kp) -> _Mapping | None:
        return want(node, kp, _Mapping, "a mapping (key: value lines)")

    def want_list(node, kp) -> list | None:
        return want(node, kp, list, "a list")

    def ratio(node, kp) -> RatioSpec | None:
        m = want_mapping(node, kp)
        if m is None:
            return None
        check_keys(m, RATIO_KEYS, kp)
        missing = [k for k in RATIO_KEYS if k not in m]
        if missing:
            rd.problem(node, kp, f"missing key(s) {', '.join(missing)} (a ratio needs phase, numerator, denominator, value)")
            return None
        phase = want_str(m["phase"][1], f"{kp}.phase", "a phase name")
        num = want_str(m["numerator"][1], f"{kp}.numerator", "a species name")
        den = want_str(m["denominator"][1], f"{kp}.denominator", "a species name")
        val = want_fraction(m["value"][1], f"{kp}.value", "the ratio value")
        if val is not None and val <= 0:
            rd.problem(m["value"][1], f"{kp}.value", f"a ratio of mole fractions must be positive, got {val:g}")
            return None
        if num is not None and num == den:
            rd.problem(node, kp, "numerator and denominator are the same species")
            return None
        if None in (phase, num, den, val):
            return None
        return RatioSpec(phase, num, den, val, kp)

    def open_fraction(node, kp, what: str) -> float | None:
        """A number strictly between 0 and 1 (a mole or phase fraction), or None with the problem recorded."""
        x = want_fraction(node, kp, what)
        if x is not None and not 0 < x < 1:
            rd.problem(node, kp, f"a specified {what.split(' (')[0].removeprefix('a ')} must lie strictly between "
                       f"0 and 1, got {x:g}")
            return None
        return x

    # title
    title = path.stem
    if "title" in top:
        t = want_str(get(top, "title"), "title", "a title text")
        title = t or title

    # system
    system_spec = None
    snode = get(top, "system")
    if snode is None:
        rd.problem(root, "system", "missing key 'system' (source: packaged with phases, or mechanism: FILE)")
    else:
        sm = want_mapping(snode, "system")
        if sm is not None:
            check_keys(sm, SYSTEM_KEYS, "system")
            mech = None
            source = "packaged"
            if "mechanism" in sm:
                m = want_str(get(sm, "mechanism"), "system.mechanism", "a mechanism file path")
                if m:
                    try:
                        mech = (path.parent / m).resolve()
                        if not mech.is_file():
                            mech = shipped_data_file(m) or mech
                        found = mech.is_file()
                    except (ValueError, OSError):   # a NUL byte, a name too long for the system
                        mech, found = None, False
                    if not found:
                        rd.problem(get(sm, "mechanism"), "system.mechanism", f"mechanism file {_kind(m)} not found "
                                   "(looked beside the case file and among cantera's data files)")
                    source = "mechanism"
                if "source" in sm:
                    rd.problem(get(sm, "source"), "system.source", "give either 'source: packaged' or 'mechanism:', not both")
            elif "source" in sm:
                s = value_of(get(sm, "source"), "system.source")
                if s != "packaged":
                    rd.problem(get(sm, "source"), "system.source",
                               f"expected 'packaged' (the thermo databases that ship with cantera), got {_kind(s)}; "
                               "for a mechanism file write 'mechanism: FILE'")
            else:
                rd.problem(snode, "system", "say where species come from: 'source: packaged' or 'mechanism: FILE'")
            phases: list[tuple[str, tuple[str, ...] | None]] = []
            pnode = get(sm, "phases")
            if pnode is None:
                if source == "packaged":
                    rd.problem(snode, "system.phases", "missing key 'phases' (phase name: [species, ...])")
            else:
                pv = value_of(pnode, "system.phases")
                if isinstance(pv, list) and source == "mechanism":
                    for i, (n, v) in enumerate(rd.plain(pnode, "system.phases", names=True)):
                        if isinstance(v, str):
                            phases.append((v, None))
                        else:
                            rd.problem(n, f"system.phases[{i}]", f"expected a phase name, got {_kind(v)}")
                elif isinstance(pv, _Mapping):
                    for name, (kn, vn) in pv.items():
                        kp = f"system.phases.{name}"
                        v = rd.plain(vn, kp, names=True)
                        if v == "all" and source == "mechanism":
                            phases.append((name, None))
                        elif isinstance(v, list) and v:
                            names = []
                            for i, (n, s) in enumerate(v):
                                if isinstance(s, str) and s.strip():
                                    names.append(s.strip())
                                else:
                                    rd.problem(n, f"{kp}[{i}]", f"expected a species name, got {_kind(s)}")
                            dup = {s for s in names if names.count(s) > 1}
                            if dup:
                                rd.problem(vn, kp, f"species listed twice in phase {name!r}: {', '.join(sorted(dup))}")
                            phases.append((name, tuple(names)))
                        else:
                            rd.problem(vn, kp, "expected a list of species names"
                                       + (" or 'all'" if source == "mechanism" else "") + f", got {_kind(v)}")
                else:
                    rd.problem(pnode, "system.phases", "expected phase name: [species, ...]"
                               + (" or a list of phase names" if source == "mechanism" else ""))
            if len(phases) > settings.MAX_CASE_PHASES:
                rd.problem(pnode, "system.phases", f"{len(phases)} phases is more than the limit of {settings.MAX_CASE_PHASES}")
            n_sp = sum(len(s or ()) for _, s in phases)
            if n_sp > settings.MAX_CASE_SPECIES:
                rd.problem(pnode, "system.phases", f"{n_sp} species is more than the limit of {settings.MAX_CASE_SPECIES}")
            system_spec = SystemSpec(source, mech, tuple(phases))

    # reactions
    reactions: str | tuple = "complete"
    rnode = get(top, "reactions")
    if rnode is not None:
        rv = value_of(rnode, "reactions")
        if isinstance(rv, str):
            if rv not in ("complete", "from-mechanism"):
                rd.problem(rnode, "reactions", f"expected 'complete', 'from-mechanism' or a list of equations, got {rv!r}"
                           + _suggest(rv, ("complete", "from-mechanism")))
            elif rv == "from-mechanism" and system_spec is not None and system_spec.source != "mechanism":
                rd.problem(rnode, "reactions", "'from-mechanism' needs 'system: mechanism: FILE'")
            else:
                reactions = rv
        elif isinstance(rv, list):
            eqs = []
            for i, (n, e) in enumerate(rv):
                if isinstance(e, str) and e.strip():
                    eqs.append((e, f"reactions[{i}]"))
                else:
                    rd.problem(n, f"reactions[{i}]", f"expected an equation such as 'CO + H2O <=> CO2 + H2', got {_kind(e)}")
            if len(eqs) > settings.MAX_CASE_REACTIONS:
                rd.problem(rnode, "reactions", f"{len(eqs)} reactions is more than the limit of {settings.MAX_CASE_REACTIONS}")
            reactions = tuple(eqs)
        else:
            rd.problem(rnode, "reactions", f"expected 'complete', 'from-mechanism' or a list of equations, got {_kind(rv)}")

    # feed
    feed = None
    feed_mass: set[str] = set()
    fnode = get(top, "feed")
    if fnode is not None:
        fm = want_mapping(fnode, "feed")
        if fm is not None:
            items = []
            for sp, (kn, vn) in fm.items():
                kp = f"feed.{sp}"
                v = value_of(vn, kp)
                try:
                    q = units.parse(v, ("amount", "mass"))
                except ValueError as exc:
                    rd.problem(vn, kp, str(exc))
                    continue
                amount = _exact(q)
                if amount < 0:
                    rd.problem(vn, kp, f"feed amount must not be negative, got {_kind(v)}")
                    continue
                items.append((sp, amount))
                if q.kind == "mass":
                    feed_mass.add(sp)
            if fm and items and all(a == 0 for _, a in items):
                rd.problem(fnode, "feed", "the feed is empty (every amount is zero)")
            feed = tuple(items)

    # coexisting
    coexisting = None
    cnode = get(top, "coexisting")
    if cnode is not None:
        cl = rd.plain(cnode, "coexisting", names=True)
        if not isinstance(cl, list):
            rd.problem(cnode, "coexisting", f"expected a list of phase names, got {_kind(cl)}")
            cl = None
        if cl is not None:
            names = []
            for i, (n, v) in enumerate(cl):
                if isinstance(v, str) and v in names:
                    rd.problem(n, f"coexisting[{i}]", f"phase {v!r} is listed twice; keep one")
                elif isinstance(v, str):
                    names.append(v)
                else:
                    rd.problem(n, f"coexisting[{i}]", f"expected a phase name, got {_kind(v)}")
            if not names and not cl:
                rd.problem(cnode, "coexisting", "at least one phase must be assumed present")
            coexisting = tuple(names)

    # specified
    spec = Specified()
    spnode = get(top, "specified")
    if spnode is not None:
        sm = want_mapping(spnode, "specified")
        if sm is not None:
            check_keys(sm, SPECIFIED_KEYS, "specified")
            temperature = pressure = adiabatic = None
            def positive(key: str, kind: str, unit: str, what: str):
                """A temperature or pressure above zero, or None with the problem recorded."""
                if key not in sm:
                    return None
                vn, kp = get(sm, key), f"specified.{key}"
                try:
                    value = parse_quantity(value_of(vn, kp), kind)
                except ValueError as exc:
                    rd.problem(vn, kp, str(exc))
                    return None
                if value <= 0:
                    rd.problem(vn, kp, f"{what}, got {value:g} {unit}")
                    return None
                return value
            temperature = positive("temperature", "temperature", "K", "temperature must be above absolute zero")
            pressure = positive("pressure", "pressure", "Pa", "pressure must be positive")
            mfs = []
            if "mole-fractions" in sm:
                mm = want_mapping(get(sm, "mole-fractions"), "specified.mole-fractions")
                for ph, (kn, vn) in (mm or {}).items():
                    inner = want_mapping(vn, f"specified.mole-fractions.{ph}")
                    for sp, (kn2, vn2) in (inner or {}).items():
                        kp = f"specified.mole-fractions.{ph}.{sp}"
                        x = open_fraction(vn2, kp, "a mole fraction")
                        if x is not None:
                            mfs.append(MoleFractionSpec(ph, sp, x, kp))
            ratios = []
            if "ratios" in sm:
                rl = want_list(get(sm, "ratios"), "specified.ratios")
                for i, (n, _) in enumerate(rl or []):
                    r = ratio(n, f"specified.ratios[{i}]")
                    if r:
                        ratios.append(r)
            pfs = []
            if "phase-fractions" in sm:
                pm = want_mapping(get(sm, "phase-fractions"), "specified.phase-fractions")
                for ph, (kn, vn) in (pm or {}).items():
                    kp = f"specified.phase-fractions.{ph}"
                    x = open_fraction(vn, kp, "a phase fraction (moles of phase / all moles)")
                    if x is not None:
                        pfs.append(PhaseFractionSpec(ph, x, kp))
            if "adiabatic" in sm:
                am = want_mapping(get(sm, "adiabatic"), "specified.adiabatic")
                if am is not None:
                    check_keys(am, ("feed-temperature",), "specified.adiabatic")
                    if "feed-temperature" not in am:
                        rd.problem(get(sm, "adiabatic"), "specified.adiabatic", "missing key 'feed-temperature'")
                    else:
                        vn = get(am, "feed-temperature")
                        kp = "specified.adiabatic.feed-temperature"
                        try:
                            adiabatic = parse_quantity(value_of(vn, kp), "temperature")
                            if adiabatic <= 0:
                                rd.problem(vn, kp, "temperature must be above absolute zero")
                                adiabatic = None
                        except ValueError as exc:
                            rd.problem(vn, kp, str(exc))
            spec = Specified(temperature, pressure, tuple(mfs), tuple(ratios), tuple(pfs), adiabatic)

    # restrictions
    restrictions = []
    rsnode = get(top, "restrictions")
    if rsnode is not None:
        rl = want_list(rsnode, "restrictions")
        for i, (n, v) in enumerate(rl or []):
            kp = f"restrictions[{i}]"
            if not isinstance(v, _Mapping) or len(v) != 1:
                rd.problem(n, kp, "expected one of '- ratio: {...}' or '- same-composition: [phase, phase]'")
                continue
            (kind, (kn, vn)), = v.items()
            if kind == "ratio":
                r = ratio(vn, f"{kp}.ratio")
                if r:
                    restrictions.append(DeclaredRestriction("ratio", kp, ratio=r))
            elif kind == "same-composition":
                pl = want_list(vn, f"{kp}.same-composition")
                names = [p for _, p in (pl or []) if isinstance(p, str)]
                if pl is not None and (len(names) != len(pl) or len(names) < 2 or len(set(names)) != len(names)):
                    rd.problem(vn, f"{kp}.same-composition", "expected a list of two or more different phase names")
                elif pl is not None:
                    restrictions.append(DeclaredRestriction("same-composition", kp, phases=tuple(names)))
            else:
                rd.problem(kn, f"{kp}.{kind}", f"unknown restriction {kind!r}{_suggest(kind, ('ratio', 'same-composition'))}")

    # claims
    claims = []
    clnode = get(top, "claims")
    if clnode is not None:
        cm = want_mapping(clnode, "claims")
        if cm is not None:
            check_keys(cm, CLAIM_KEYS, "claims")
            for key, (kn, vn) in cm.items():
                kp = f"claims.{key}"
                v = value_of(vn, kp)
                if key in ("independent-reactions", "degrees-of-freedom", "components"):
                    if isinstance(v, bool) or not isinstance(v, int):
                        rd.problem(vn, kp, f"expected a whole number, got {_kind(v)}")
                        continue
                elif key == "phases-present":
                    if not isinstance(v, list) or not all(isinstance(p, str) for _, p in v):
                        rd.problem(vn, kp, "expected a list of phase names")
                        continue
                    v = tuple(sorted(p for _, p in v))
                elif key == "verdict":
                    if v not in VERDICTS:
                        rd.problem(vn, kp, f"expected one of {', '.join(VERDICTS)}, got {_kind(v)}")
                        continue
                else:
                    continue
                claims.append((key, v))

    case = Case(path=path, title=title, system=system_spec, reactions=reactions, feed=feed,
                coexisting=coexisting, specified=spec, restrictions=tuple(restrictions),
                claims=tuple(claims), lines=dict(rd.lines), feed_mass=frozenset(feed_mass),
                as_written={kp: t for kp, t in rd.texts.items() if kp.startswith(("feed.", "specified."))})
    if rd.problems:
        # report the names that do not exist together with the structural problems, when the
        # system part itself is usable
        if system_spec is not None and not any(p.key_path.startswith("system") for p in rd.problems):
            try:
                check_names(case, build_system(case))
            except InputError as exc:
                rd.problems.extend(exc.problems)
        raise CaseError(sorted(rd.problems, key=lambda p: (p.line or 0, p.column or 0)))
    return case


def _kind(v) -> str:
    """How a value is shown in a message: never the YAML structure itself."""
    if isinstance(v, _Mapping):
        return "a mapping"
    if isinstance(v, list):
        return "a list" if v else "an empty list"
    text = repr(v)
    return text if len(text) <= 80 else text[:77] + "..."


# ------------------------------------------------------------------ binding to the system

def build_system(case: Case):
    """The :class:`~auditor.system.ChemicalSystem` a case describes (errors carry the case's lines)."""
    from .system import from_mechanism, from_packaged
    spec = case.system
    try:
        if spec.source == "packaged":
            return from_packaged(dict(spec.phases))
        names = [p for p, _ in spec.phases] or None
        subsets = {p: s for p, s in spec.phases if s is not None}
        if names:
            from .system import mechanism_phase_names, unknown_name_message
            available = mechanism_phase_names(spec.mechanism)
            listed_as_mapping = any(s is not None for _, s in spec.phases) or case.line("system.phases[0]") is None
            problems = []
            for i, n in enumerate(names):
                if n not in available:
                    kp = f"system.phases.{n}" if listed_as_mapping else f"system.phases[{i}]"
                    problems.append(Problem(str(case.path), unknown_name_message(
                        "phase", n, available, Path(spec.mechanism).name), kp, case.line(kp)))
            # two models of one mixture (an ideal gas and its real-gas twin) are not two phases
            from .system import alternative_pairs, alternatives_message
            for a, b in ([] if problems else alternative_pairs(spec.mechanism, names)):
                kp = f"system.phases.{b}" if listed_as_mapping else f"system.phases[{names.index(b)}]"
                problems.append(Problem(str(case.path), alternatives_message(spec.mechanism, a, b), kp, case.line(kp)))
            if problems:
                raise CaseError(problems)
        return from_mechanism(spec.mechanism, names, subsets or None, with_reactions=case.reactions == "from-mechanism")
    except InputError as exc:
        # problems with the case's own keys point at the case file; problems inside a
        # mechanism file keep that file and its line
        problems = []
        for p in exc.problems:
            if spec.source == "packaged" or p.key_path.startswith("system"):
                problems.append(Problem(str(case.path), p.message, p.key_path or "system",
                                        case.line(p.key_path) or case.line("system")))
            elif "mechanism file not found" in p.message or "cannot read mechanism file" in p.message:
                problems.append(Problem(str(case.path), f"{p.message}: {p.file}", "system.mechanism",
                                        case.line("system.mechanism")))
            else:
                problems.append(p)
        raise CaseError(problems) from None


def check_names(case: Case, system) -> None:
    """Every species and phase the case names must exist in the system; all problems together."""
    from .system import unknown_name_message
    problems: list[Problem] = []
    phases = [p.name for p in system.phases]
    file = str(case.path)

    def phase_ok(name, kp):
        if name not in phases:
            problems.append(Problem(file, unknown_name_message("phase", name, phases, "the system"), kp, case.line(kp)))
            return False
        return True

    def species_ok(name, kp, phase=None):
        hits = system.find(name)
        if phase is not None:
            hits = [h for h in hits if system.species[h].phase == phase]
            known = [system.labels[i] for i in system.phase_indices(phase)]
            where = f"phase {phase!r}"
        else:
            known, where = list(system.labels), "any phase"
        if not hits:
            problems.append(Problem(file, _unknown_species(name, known, where), kp, case.line(kp)))
        elif len(hits) > 1:
            problems.append(Problem(file, f"species {name!r} is in several phases; write one of "
                                    + ", ".join(system.labels[h] for h in hits), kp, case.line(kp)))

    for sp, _ in case.feed or ():
        species_ok(sp, f"feed.{sp}")
    for i, ph in enumerate(case.coexisting or ()):
        phase_ok(ph, f"coexisting[{i}]")
    s = case.specified
    for m in s.mole_fractions:
        if phase_ok(m.phase, m.key_path):
            species_ok(m.species, m.key_path, m.phase)
    ratios = list(s.ratios) + [r.ratio for r in case.restrictions if r.ratio]
    for r in ratios:
        if phase_ok(r.phase, f"{r.key_path}.phase"):
            species_ok(r.numerator, f"{r.key_path}.numerator", r.phase)
            species_ok(r.denominator, f"{r.key_path}.denominator", r.phase)
    for p in s.phase_fractions:
        phase_ok(p.phase, p.key_path)
    for r in case.restrictions:
        for i, ph in enumerate(r.phases):
            phase_ok(ph, f"{r.key_path}.same-composition[{i}]")
        if r.kind == "same-composition" and all(ph in phases for ph in r.phases):
            sets = {ph: sorted(_formula_key(system.species[k]) for k in system.phase_indices(ph)) for ph in r.phases}
            if len({tuple(v) for v in sets.values()}) > 1 or any(len(set(v)) != len(v) for v in sets.values()):
                listing = "; ".join(f"{ph}: {', '.join(system.labels[k] for k in system.phase_indices(ph))}"
                                    for ph in r.phases)
                problems.append(Problem(file, "same-composition needs phases whose species match one to one by "
                                        f"formula; {listing}", f"{r.key_path}.same-composition",
                                        case.line(f"{r.key_path}.same-composition")))
    for key, v in case.claims:
        if key == "phases-present":
            for ph in v:
                phase_ok(ph, "claims.phases-present")
    assumed = set(case.coexisting or phases)
    for kp, ph in ([(m.key_path, m.phase) for m in s.mole_fractions]
                   + [(f"{r.key_path}.phase", r.phase) for r in s.ratios]
                   + [(p.key_path, p.phase) for p in s.phase_fractions]
                   + [(f"{r.ratio.key_path}.phase", r.ratio.phase) for r in case.restrictions if r.ratio]):
        if ph in phases and ph not in assumed:
            problems.append(Problem(file, f"this concerns phase {ph!r}, which 'coexisting' assumes absent "
                                    f"(coexisting: {', '.join(sorted(assumed))})", kp, case.line(kp)))
    for r in case.restrictions:
        if r.kind == "same-composition" and any(ph in phases and ph not in assumed for ph in r.phases):
            kp = f"{r.key_path}.same-composition"
            problems.append(Problem(file, "same-composition names a phase that 'coexisting' assumes absent "
                                    f"(coexisting: {', '.join(sorted(assumed))})", kp, case.line(kp)))
    if case.feed and not problems:
        q = sum((system.species[system.find(sp)[0]].charge * a for sp, a in feed_moles(case, system)), Fraction(0))
        if q != 0:
            problems.append(Problem(file, f"the feed carries a net charge of {float(q):g} mol of elementary charge; "
                                    "every phase is electrically neutral: add counter-ions or electrons",
                                    "feed", case.line("feed")))
    if problems:
        raise CaseError(problems)


def _unknown_species(name: str, known, where: str) -> str:
    """'unknown species' with the closest name first, as a question, then the next closest."""
    ranked = _ranked(name, known)
    if not ranked:
        return f"unknown species {name!r} in {where}"
    more = f" (other close names: {', '.join(ranked[1:])})" if len(ranked) > 1 else ""
    return f"unknown species {name!r} in {where}; did you mean {ranked[0]!r}?{more}"


def feed_moles(case: Case, system) -> tuple[tuple[str, Fraction], ...] | None:
    """The feed in mol: amounts given in a mass unit divided by the species' molar mass
    (cantera's ``molecular_weight``, kg/kmol, taken as the exact decimal it prints)."""
    if case.feed is None or not case.feed_mass:
        return case.feed
    out = []
    for sp, amount in case.feed:
        if sp in case.feed_mass:
            molar_mass = system.species[system.find(sp)[0]].molar_mass   # kg/kmol = g/mol
            amount = amount * 1000 / Fraction(repr(molar_mass))          # kg -> g, / (g/mol)
        out.append((sp, amount))
    return tuple(out)


def _formula_key(species) -> tuple:
    return (tuple(sorted(species.formula.items())), species.charge)


def matching_species(system, first: str, other: str) -> list[tuple[int, int]]:
    """Pairs (k in first, k in other) of the same substance, matched by formula and charge."""
    by_key = {_formula_key(system.species[k]): k for k in system.phase_indices(other)}
    return [(k, by_key[_formula_key(system.species[k])]) for k in system.phase_indices(first)]
