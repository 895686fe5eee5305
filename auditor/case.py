"""Case files: YAML -> validated, frozen :class:`Case` in SI units (design §5).

The loader works on the YAML *node* tree (:mod:`auditor.yaml_nodes`) so that every problem
carries its line, and it collects every problem in a file before raising one
:class:`CaseError`.  It reads each top-level key with its own reader (``_read_system``,
``_read_feed``, ...); binding the names to a chemical system is
:func:`auditor.system.check_names`.

Units are parsed by :mod:`auditor.units` (pint's definitions: K, degC, degF, Pa, kPa, bar, atm,
psi; mol, kmol, lbmol; feed amounts also in mass units, kg, t, lb, converted to moles with
each species' molar mass once the species are known: :func:`feed_moles`).  The text of every
feed amount and specification is kept as written (``Case.as_written``) for reports.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any, Mapping

from . import settings, units
from .errors import CaseError, InputError
from .system import shipped_data_file
from .yaml_nodes import NodeMapping, NodeReader, kind_of, load_nodes, suggest

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


TOP_KEYS = ("title", "system", "reactions", "feed", "coexisting", "specified", "restrictions", "claims")
SYSTEM_KEYS = ("source", "mechanism", "phases")
SPECIFIED_KEYS = ("temperature", "pressure", "mole-fractions", "ratios", "phase-fractions", "adiabatic")
RATIO_KEYS = ("phase", "numerator", "denominator", "value")
CLAIM_KEYS = ("independent-reactions", "degrees-of-freedom", "components", "phases-present", "verdict")
VERDICTS = ("well-posed", "under-specified", "over-specified", "inconsistent", "not-confirmed")


def load_case(path: str | Path) -> Case:
    """Read and validate a case file's structure and units.

    Raises
    ------
    CaseError
        With every problem found in the file (key path and line each).
    """
    from .system import build_system, check_names
    path = Path(path)
    root = load_nodes(path)
    rd = NodeReader(str(path))
    top = rd.plain(root, "")
    rd.check_keys(top, TOP_KEYS, "")
    # read in the order of the keys above (problems on one line keep that order)
    title = _read_title(rd, top, path)
    system_spec = _read_system(rd, top, root, path)
    reactions = _read_reactions(rd, rd.get(top, "reactions"), system_spec)
    feed, feed_mass = _read_feed(rd, rd.get(top, "feed"))
    coexisting = _read_coexisting(rd, rd.get(top, "coexisting"))
    specified = _read_specified(rd, rd.get(top, "specified"))
    restrictions = _read_restrictions(rd, rd.get(top, "restrictions"))
    claims = _read_claims(rd, rd.get(top, "claims"))
    case = Case(path=path, title=title, system=system_spec, reactions=reactions, feed=feed, coexisting=coexisting,
                specified=specified, restrictions=restrictions, claims=claims, lines=dict(rd.lines),
                feed_mass=feed_mass,
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


def _read_title(rd: NodeReader, top: NodeMapping, path: Path) -> str:
    if "title" in top:
        return rd.want_str(rd.get(top, "title"), "title", "a title text") or path.stem
    return path.stem


def _read_ratio(rd: NodeReader, node, kp: str) -> RatioSpec | None:
    m = rd.want_mapping(node, kp)
    if m is None:
        return None
    rd.check_keys(m, RATIO_KEYS, kp)
    missing = [k for k in RATIO_KEYS if k not in m]
    if missing:
        rd.problem(node, kp, f"missing key(s) {', '.join(missing)} (a ratio needs phase, numerator, denominator, value)")
        return None
    phase = rd.want_str(m["phase"][1], f"{kp}.phase", "a phase name")
    num = rd.want_str(m["numerator"][1], f"{kp}.numerator", "a species name")
    den = rd.want_str(m["denominator"][1], f"{kp}.denominator", "a species name")
    val = rd.want_fraction(m["value"][1], f"{kp}.value", "the ratio value")
    if val is not None and val <= 0:
        rd.problem(m["value"][1], f"{kp}.value", f"a ratio of mole fractions must be positive, got {val:g}")
        return None
    if num is not None and num == den:
        rd.problem(node, kp, "numerator and denominator are the same species")
        return None
    if None in (phase, num, den, val):
        return None
    return RatioSpec(phase, num, den, val, kp)


def _read_source(rd: NodeReader, sm: NodeMapping, snode, path: Path) -> tuple[str, Path | None]:
    """Where the species come from: ("packaged", None) or ("mechanism", the file)."""
    mech = None
    source = "packaged"
    if "mechanism" in sm:
        m = rd.want_str(rd.get(sm, "mechanism"), "system.mechanism", "a mechanism file path")
        if m:
            try:
                mech = (path.parent / m).resolve()
                if not mech.is_file():
                    mech = shipped_data_file(m) or mech
                found = mech.is_file()
            except (ValueError, OSError):   # a NUL byte, a name too long for the system
                mech, found = None, False
            if not found:
                rd.problem(rd.get(sm, "mechanism"), "system.mechanism", f"mechanism file {kind_of(m)} not found "
                           "(looked beside the case file and among cantera's data files)")
            source = "mechanism"
        if "source" in sm:
            rd.problem(rd.get(sm, "source"), "system.source", "give either 'source: packaged' or 'mechanism:', not both")
    elif "source" in sm:
        s = rd.value_of(rd.get(sm, "source"), "system.source")
        if s != "packaged":
            rd.problem(rd.get(sm, "source"), "system.source",
                       f"expected 'packaged' (the thermo databases that ship with cantera), got {kind_of(s)}; "
                       "for a mechanism file write 'mechanism: FILE'")
    else:
        rd.problem(snode, "system", "say where species come from: 'source: packaged' or 'mechanism: FILE'")
    return source, mech


def _read_phase_species(rd: NodeReader, name: str, vn, source: str) -> tuple[str, tuple[str, ...] | None] | None:
    """One entry ``phase: [species, ...]`` (or ``phase: all`` in a mechanism)."""
    kp = f"system.phases.{name}"
    v = rd.plain(vn, kp, names=True)
    if v == "all" and source == "mechanism":
        return name, None
    if isinstance(v, list) and v:
        names = []
        for i, (n, s) in enumerate(v):
            if isinstance(s, str) and s.strip():
                names.append(s.strip())
            else:
                rd.problem(n, f"{kp}[{i}]", f"expected a species name, got {kind_of(s)}")
        dup = {s for s in names if names.count(s) > 1}
        if dup:
            rd.problem(vn, kp, f"species listed twice in phase {name!r}: {', '.join(sorted(dup))}")
        return name, tuple(names)
    rd.problem(vn, kp, "expected a list of species names"
               + (" or 'all'" if source == "mechanism" else "") + f", got {kind_of(v)}")
    return None


def _read_phases(rd: NodeReader, pnode, source: str) -> list[tuple[str, tuple[str, ...] | None]]:
    phases: list[tuple[str, tuple[str, ...] | None]] = []
    pv = rd.value_of(pnode, "system.phases")
    if isinstance(pv, list) and source == "mechanism":
        for i, (n, v) in enumerate(rd.plain(pnode, "system.phases", names=True)):
            if isinstance(v, str):
                phases.append((v, None))
            else:
                rd.problem(n, f"system.phases[{i}]", f"expected a phase name, got {kind_of(v)}")
    elif isinstance(pv, NodeMapping):
        for name, (kn, vn) in pv.items():
            entry = _read_phase_species(rd, name, vn, source)
            if entry is not None:
                phases.append(entry)
    else:
        rd.problem(pnode, "system.phases", "expected phase name: [species, ...]"
                   + (" or a list of phase names" if source == "mechanism" else ""))
    return phases


def _read_system(rd: NodeReader, top: NodeMapping, root, path: Path) -> SystemSpec | None:
    snode = rd.get(top, "system")
    if snode is None:
        rd.problem(root, "system", "missing key 'system' (source: packaged with phases, or mechanism: FILE)")
        return None
    sm = rd.want_mapping(snode, "system")
    if sm is None:
        return None
    rd.check_keys(sm, SYSTEM_KEYS, "system")
    source, mech = _read_source(rd, sm, snode, path)
    phases: list[tuple[str, tuple[str, ...] | None]] = []
    pnode = rd.get(sm, "phases")
    if pnode is None:
        if source == "packaged":
            rd.problem(snode, "system.phases", "missing key 'phases' (phase name: [species, ...])")
    else:
        phases = _read_phases(rd, pnode, source)
    if len(phases) > settings.MAX_CASE_PHASES:
        rd.problem(pnode, "system.phases", f"{len(phases)} phases is more than the limit of {settings.MAX_CASE_PHASES}")
    n_sp = sum(len(s or ()) for _, s in phases)
    if n_sp > settings.MAX_CASE_SPECIES:
        rd.problem(pnode, "system.phases", f"{n_sp} species is more than the limit of {settings.MAX_CASE_SPECIES}")
    return SystemSpec(source, mech, tuple(phases))


def _read_reactions(rd: NodeReader, rnode, system_spec: SystemSpec | None) -> str | tuple[tuple[str, str], ...]:
    if rnode is None:
        return "complete"
    rv = rd.value_of(rnode, "reactions")
    if isinstance(rv, str):
        if rv not in ("complete", "from-mechanism"):
            rd.problem(rnode, "reactions", f"expected 'complete', 'from-mechanism' or a list of equations, got {rv!r}"
                       + suggest(rv, ("complete", "from-mechanism")))
        elif rv == "from-mechanism" and system_spec is not None and system_spec.source != "mechanism":
            rd.problem(rnode, "reactions", "'from-mechanism' needs 'system: mechanism: FILE'")
        else:
            return rv
        return "complete"
    if isinstance(rv, list):
        eqs = []
        for i, (n, e) in enumerate(rv):
            if isinstance(e, str) and e.strip():
                eqs.append((e, f"reactions[{i}]"))
            else:
                rd.problem(n, f"reactions[{i}]", f"expected an equation such as 'CO + H2O <=> CO2 + H2', got {kind_of(e)}")
        if len(eqs) > settings.MAX_CASE_REACTIONS:
            rd.problem(rnode, "reactions", f"{len(eqs)} reactions is more than the limit of {settings.MAX_CASE_REACTIONS}")
        return tuple(eqs)
    rd.problem(rnode, "reactions", f"expected 'complete', 'from-mechanism' or a list of equations, got {kind_of(rv)}")
    return "complete"


def _read_feed(rd: NodeReader, fnode) -> tuple[tuple[tuple[str, Fraction], ...] | None, frozenset[str]]:
    """The feed amounts, exact as written (mol, or kg for the species given in a mass unit),
    and the species given in a mass unit."""
    if fnode is None:
        return None, frozenset()
    fm = rd.want_mapping(fnode, "feed")
    if fm is None:
        return None, frozenset()
    items, feed_mass = [], set()
    for sp, (kn, vn) in fm.items():
        kp = f"feed.{sp}"
        v = rd.value_of(vn, kp)
        try:
            q = units.parse(v, ("amount", "mass"))
        except ValueError as exc:
            rd.problem(vn, kp, str(exc))
            continue
        amount = _exact(q)
        if amount < 0:
            rd.problem(vn, kp, f"feed amount must not be negative, got {kind_of(v)}")
            continue
        items.append((sp, amount))
        if q.kind == "mass":
            feed_mass.add(sp)
    if fm and items and all(a == 0 for _, a in items):
        rd.problem(fnode, "feed", "the feed is empty (every amount is zero)")
    return tuple(items), frozenset(feed_mass)


def _read_coexisting(rd: NodeReader, cnode) -> tuple[str, ...] | None:
    if cnode is None:
        return None
    cl = rd.plain(cnode, "coexisting", names=True)
    if not isinstance(cl, list):
        rd.problem(cnode, "coexisting", f"expected a list of phase names, got {kind_of(cl)}")
        return None
    names = []
    for i, (n, v) in enumerate(cl):
        if isinstance(v, str) and v in names:
            rd.problem(n, f"coexisting[{i}]", f"phase {v!r} is listed twice; keep one")
        elif isinstance(v, str):
            names.append(v)
        else:
            rd.problem(n, f"coexisting[{i}]", f"expected a phase name, got {kind_of(v)}")
    if not names and not cl:
        rd.problem(cnode, "coexisting", "at least one phase must be assumed present")
    return tuple(names)


def _read_positive(rd: NodeReader, sm: NodeMapping, key: str, kind: str, unit: str, what: str) -> float | None:
    """A temperature or pressure above zero, or None with the problem recorded."""
    if key not in sm:
        return None
    vn, kp = rd.get(sm, key), f"specified.{key}"
    try:
        value = parse_quantity(rd.value_of(vn, kp), kind)
    except ValueError as exc:
        rd.problem(vn, kp, str(exc))
        return None
    if value <= 0:
        rd.problem(vn, kp, f"{what}, got {value:g} {unit}")
        return None
    return value


def _read_mole_fractions(rd: NodeReader, node) -> tuple[MoleFractionSpec, ...]:
    mfs = []
    mm = rd.want_mapping(node, "specified.mole-fractions")
    for ph, (kn, vn) in (mm or {}).items():
        inner = rd.want_mapping(vn, f"specified.mole-fractions.{ph}")
        for sp, (kn2, vn2) in (inner or {}).items():
            kp = f"specified.mole-fractions.{ph}.{sp}"
            x = rd.open_fraction(vn2, kp, "a mole fraction")
            if x is not None:
                mfs.append(MoleFractionSpec(ph, sp, x, kp))
    return tuple(mfs)


def _read_phase_fractions(rd: NodeReader, node) -> tuple[PhaseFractionSpec, ...]:
    pfs = []
    pm = rd.want_mapping(node, "specified.phase-fractions")
    for ph, (kn, vn) in (pm or {}).items():
        kp = f"specified.phase-fractions.{ph}"
        x = rd.open_fraction(vn, kp, "a phase fraction (moles of phase / all moles)")
        if x is not None:
            pfs.append(PhaseFractionSpec(ph, x, kp))
    return tuple(pfs)


def _read_adiabatic(rd: NodeReader, node) -> float | None:
    """The feed temperature of an adiabatic enthalpy balance, K."""
    am = rd.want_mapping(node, "specified.adiabatic")
    if am is None:
        return None
    rd.check_keys(am, ("feed-temperature",), "specified.adiabatic")
    if "feed-temperature" not in am:
        rd.problem(node, "specified.adiabatic", "missing key 'feed-temperature'")
        return None
    vn = rd.get(am, "feed-temperature")
    kp = "specified.adiabatic.feed-temperature"
    try:
        adiabatic = parse_quantity(rd.value_of(vn, kp), "temperature")
    except ValueError as exc:
        rd.problem(vn, kp, str(exc))
        return None
    if adiabatic <= 0:
        rd.problem(vn, kp, "temperature must be above absolute zero")
        return None
    return adiabatic


def _read_specified(rd: NodeReader, spnode) -> Specified:
    if spnode is None:
        return Specified()
    sm = rd.want_mapping(spnode, "specified")
    if sm is None:
        return Specified()
    rd.check_keys(sm, SPECIFIED_KEYS, "specified")
    temperature = _read_positive(rd, sm, "temperature", "temperature", "K", "temperature must be above absolute zero")
    pressure = _read_positive(rd, sm, "pressure", "pressure", "Pa", "pressure must be positive")
    mfs = _read_mole_fractions(rd, rd.get(sm, "mole-fractions")) if "mole-fractions" in sm else ()
    ratios = []
    if "ratios" in sm:
        rl = rd.want_list(rd.get(sm, "ratios"), "specified.ratios")
        for i, (n, _) in enumerate(rl or []):
            r = _read_ratio(rd, n, f"specified.ratios[{i}]")
            if r:
                ratios.append(r)
    pfs = _read_phase_fractions(rd, rd.get(sm, "phase-fractions")) if "phase-fractions" in sm else ()
    adiabatic = _read_adiabatic(rd, rd.get(sm, "adiabatic")) if "adiabatic" in sm else None
    return Specified(temperature_K=temperature, pressure_Pa=pressure, mole_fractions=mfs, ratios=tuple(ratios),
                     phase_fractions=pfs, adiabatic_feed_temperature_K=adiabatic)


def _read_restrictions(rd: NodeReader, rsnode) -> tuple[DeclaredRestriction, ...]:
    restrictions = []
    rl = rd.want_list(rsnode, "restrictions") if rsnode is not None else None
    for i, (n, v) in enumerate(rl or []):
        kp = f"restrictions[{i}]"
        if not isinstance(v, NodeMapping) or len(v) != 1:
            rd.problem(n, kp, "expected one of '- ratio: {...}' or '- same-composition: [phase, phase]'")
            continue
        (kind, (kn, vn)), = v.items()
        if kind == "ratio":
            r = _read_ratio(rd, vn, f"{kp}.ratio")
            if r:
                restrictions.append(DeclaredRestriction("ratio", kp, ratio=r))
        elif kind == "same-composition":
            pl = rd.want_list(vn, f"{kp}.same-composition")
            names = [p for _, p in (pl or []) if isinstance(p, str)]
            if pl is not None and (len(names) != len(pl) or len(names) < 2 or len(set(names)) != len(names)):
                rd.problem(vn, f"{kp}.same-composition", "expected a list of two or more different phase names")
            elif pl is not None:
                restrictions.append(DeclaredRestriction("same-composition", kp, phases=tuple(names)))
        else:
            rd.problem(kn, f"{kp}.{kind}", f"unknown restriction {kind!r}{suggest(kind, ('ratio', 'same-composition'))}")
    return tuple(restrictions)


def _read_claims(rd: NodeReader, clnode) -> tuple[tuple[str, Any], ...]:
    claims = []
    cm = rd.want_mapping(clnode, "claims") if clnode is not None else None
    if cm is None:
        return ()
    rd.check_keys(cm, CLAIM_KEYS, "claims")
    for key, (kn, vn) in cm.items():
        kp = f"claims.{key}"
        v = rd.value_of(vn, kp)
        if key in ("independent-reactions", "degrees-of-freedom", "components"):
            if isinstance(v, bool) or not isinstance(v, int):
                rd.problem(vn, kp, f"expected a whole number, got {kind_of(v)}")
                continue
        elif key == "phases-present":
            if not isinstance(v, list) or not all(isinstance(p, str) for _, p in v):
                rd.problem(vn, kp, "expected a list of phase names")
                continue
            v = tuple(sorted(p for _, p in v))
        elif key == "verdict":
            if v not in VERDICTS:
                rd.problem(vn, kp, f"expected one of {', '.join(VERDICTS)}, got {kind_of(v)}")
                continue
        else:
            continue
        claims.append((key, v))
    return tuple(claims)
