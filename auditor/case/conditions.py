"""Reading what a case fixes and claims: ``specified``, ``restrictions`` and ``claims``."""
from __future__ import annotations

from typing import Any

from ..verdicts import CASE_VERDICTS, Verdict
from ..yaml_nodes import NodeMapping, NodeReader, kind_of, suggest
from .. import units
from .quantities import read_condition
from .records import ApproachSpec, DeclaredRestriction, MoleFractionSpec, PhaseFractionSpec, RatioSpec, Specified

SPECIFIED_KEYS = ("temperature", "pressure", "mole-fractions", "ratios", "phase-fractions", "adiabatic", "volume",
                  "heat-added", "isentropic")
RATIO_KEYS = ("phase", "numerator", "denominator", "value")
CLAIM_KEYS = ("independent-reactions", "degrees-of-freedom", "components", "phases-present", "verdict")
VERDICTS = tuple(v.value for v in CASE_VERDICTS)    # the words a case file may claim


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
        # 0 is allowed: the phase is incipient (present in zero amount: a bubble, dew or onset point)
        x = rd.want_fraction(vn, kp, "a phase fraction (moles of phase / all moles)")
        if x is not None and not 0 <= x < 1:
            rd.problem(vn, kp, f"a specified phase fraction must be at least 0 (0: the phase is incipient) and "
                       f"below 1, got {x:g}")
            x = None
        if x is not None:
            pfs.append(PhaseFractionSpec(ph, x, kp))
    return tuple(pfs)


def _read_adiabatic(rd: NodeReader, node, declared: dict[str, str]) -> float | None:
    """The feed temperature of an adiabatic enthalpy balance, K."""
    am = rd.want_mapping(node, "specified.adiabatic")
    if am is None:
        return None
    rd.check_keys(am, ("feed-temperature",), "specified.adiabatic")
    if "feed-temperature" not in am:
        rd.problem(node, "specified.adiabatic", "missing key 'feed-temperature'")
        return None
    return read_condition(rd, rd.get(am, "feed-temperature"), "specified.adiabatic.feed-temperature", "temperature",
                          declared)


def _read_amount_of(rd: NodeReader, node, kp: str, kind: str, positive: bool) -> float | None:
    """A volume or an energy in SI (m3, J): its unit must be written; a volume must be positive."""
    value = rd.value_of(node, kp)
    if units.is_bare(value):
        rd.problem(node, kp, f"a {kind} needs a unit: write e.g. {units.example(kind)}")
        return None
    try:
        q = units.parse(value, kind)
    except ValueError as exc:
        rd.problem(node, kp, str(exc))
        return None
    if positive and not q.si > 0:
        rd.problem(node, kp, f"a {kind} must be positive, got {q.text}")
        return None
    return q.si


def _read_state(rd: NodeReader, node, kp: str, keys: tuple[str, str], declared: dict[str, str]
                ) -> tuple[float, float] | None:
    """A (temperature K, pressure Pa) pair written as a mapping with the two ``keys``."""
    m = rd.want_mapping(node, kp)
    if m is None:
        return None
    rd.check_keys(m, keys, kp)
    missing = [k for k in keys if k not in m]
    if missing:
        rd.problem(node, kp, f"missing key(s) {', '.join(repr(k) for k in missing)} (write {{{keys[0]}: 300 K, "
                   f"{keys[1]}: 1 atm}})")
        return None
    t, p = (read_condition(rd, rd.get(m, k), f"{kp}.{k}", kind, declared)
            for k, kind in zip(keys, ("temperature", "pressure")))
    return None if t is None or p is None else (t, p)


def _read_volume(rd: NodeReader, node, declared: dict[str, str]) -> tuple[float | None, tuple | None]:
    """(volume m3, None) or (None, the feed's (T, P)) from ``volume: 24.5 L`` or ``volume: {feed-at: {...}}``."""
    kp = "specified.volume"
    if getattr(node, "id", None) == "mapping":
        m = rd.want_mapping(node, kp)
        rd.check_keys(m, ("feed-at",), kp)
        if "feed-at" not in m:
            rd.problem(node, kp, "write a volume ('24.5 L') or the state the feed fills it at "
                       "({feed-at: {temperature: 300 K, pressure: 1 atm}})")
            return None, None
        return None, _read_state(rd, rd.get(m, "feed-at"), f"{kp}.feed-at", ("temperature", "pressure"), declared)
    return _read_amount_of(rd, node, kp, "volume", True), None


def _read_heat_added(rd: NodeReader, node, declared: dict[str, str]) -> tuple[float, float] | None:
    """(feed temperature K, heat added J) of ``heat-added: {feed-temperature: ..., amount: ...}``."""
    kp = "specified.heat-added"
    m = rd.want_mapping(node, kp)
    if m is None:
        return None
    rd.check_keys(m, ("feed-temperature", "amount"), kp)
    missing = [k for k in ("feed-temperature", "amount") if k not in m]
    if missing:
        rd.problem(node, kp, f"missing key(s) {', '.join(repr(k) for k in missing)} "
                   "(write {feed-temperature: 450 degC, amount: -200 kJ})")
        return None
    t = read_condition(rd, rd.get(m, "feed-temperature"), f"{kp}.feed-temperature", "temperature", declared)
    q = _read_amount_of(rd, rd.get(m, "amount"), f"{kp}.amount", "energy", False)
    return None if t is None or q is None else (t, q)


def read_specified(rd: NodeReader, spnode, declared: dict[str, str] | None = None) -> Specified:
    """What the case fixes; bare temperatures and pressures in the ``units:`` the case declares."""
    declared = declared or {}
    if spnode is None:
        return Specified()
    sm = rd.want_mapping(spnode, "specified")
    if sm is None:
        return Specified()
    rd.check_keys(sm, SPECIFIED_KEYS, "specified")
    temperature, pressure = (read_condition(rd, rd.get(sm, k), f"specified.{k}", k, declared) if k in sm else None
                             for k in ("temperature", "pressure"))
    mfs = _read_mole_fractions(rd, rd.get(sm, "mole-fractions")) if "mole-fractions" in sm else ()
    ratios = []
    if "ratios" in sm:
        rl = rd.want_list(rd.get(sm, "ratios"), "specified.ratios")
        for i, (n, _) in enumerate(rl or []):
            r = _read_ratio(rd, n, f"specified.ratios[{i}]")
            if r:
                ratios.append(r)
    pfs = _read_phase_fractions(rd, rd.get(sm, "phase-fractions")) if "phase-fractions" in sm else ()
    adiabatic = _read_adiabatic(rd, rd.get(sm, "adiabatic"), declared) if "adiabatic" in sm else None
    volume, feed_at = _read_volume(rd, rd.get(sm, "volume"), declared) if "volume" in sm else (None, None)
    heat = _read_heat_added(rd, rd.get(sm, "heat-added"), declared) if "heat-added" in sm else None
    if "heat-added" in sm and "adiabatic" in sm:
        rd.problem(rd.get(sm, "heat-added"), "specified.heat-added", "'adiabatic' is the energy balance with no heat "
                   "added: give one of 'adiabatic' and 'heat-added', not both")
        heat = None
    isentropic = _read_state(rd, rd.get(sm, "isentropic"), "specified.isentropic", ("from-temperature", "from-pressure"),
                             declared) if "isentropic" in sm else None
    return Specified(temperature_K=temperature, pressure_Pa=pressure, mole_fractions=mfs, ratios=tuple(ratios),
                     phase_fractions=pfs, adiabatic_feed_temperature_K=adiabatic, volume_m3=volume,
                     volume_feed_at=feed_at, heat_added=heat, isentropic_from=isentropic)


def read_restrictions(rd: NodeReader, rsnode) -> tuple[DeclaredRestriction, ...]:
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


def read_claims(rd: NodeReader, clnode) -> tuple[tuple[str, Any], ...]:
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
            v = Verdict(v)
        else:
            continue
        claims.append((key, v))
    return tuple(claims)


# a temperature difference: kelvin and degrees Celsius alike, Fahrenheit and Rankine 5/9 of one
_DIFFERENCE_UNITS = {"K": 1.0, "kelvin": 1.0, "degC": 1.0, "°C": 1.0, "C": 1.0, "delta_degC": 1.0, "celsius": 1.0,
                     "degF": 5 / 9, "°F": 5 / 9, "delta_degF": 5 / 9, "fahrenheit": 5 / 9, "degR": 5 / 9, "R": 5 / 9,
                     "rankine": 5 / 9}


def _read_difference(rd: NodeReader, node, kp: str) -> float | None:
    """A temperature difference in K from '10 K' (also degC, degF, R): zero or positive."""
    import math
    import re
    value = rd.value_of(node, kp)
    m = re.fullmatch(r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S+)\s*", value) \
        if isinstance(value, str) else None
    if m is None or m.group(2) not in _DIFFERENCE_UNITS:
        rd.problem(node, kp, f"expected a temperature difference with its unit, such as '10 K', got {kind_of(value)}")
        return None
    dt = float(m.group(1)) * _DIFFERENCE_UNITS[m.group(2)]
    if not math.isfinite(dt) or dt < 0:
        rd.problem(node, kp, f"an approach to equilibrium must be zero or positive (how far short the reaction "
                   f"stops), got {value}")
        return None
    return dt


def read_approach(rd: NodeReader, node) -> tuple[ApproachSpec, ...]:
    """The top-level ``approach:`` list: ``- {reaction: "CH4 + H2O <=> CO + 3 H2", temperature: 10 K}``."""
    out = []
    al = rd.want_list(node, "approach") if node is not None else None
    for i, (n, _) in enumerate(al or []):
        kp = f"approach[{i}]"
        m = rd.want_mapping(n, kp)
        if m is None:
            continue
        rd.check_keys(m, ("reaction", "temperature"), kp)
        missing = [k for k in ("reaction", "temperature") if k not in m]
        if missing:
            rd.problem(n, kp, f"missing key(s) {', '.join(repr(k) for k in missing)} "
                       "(write {reaction: 'CH4 + H2O <=> CO + 3 H2', temperature: 10 K})")
            continue
        eq = rd.want_str(rd.get(m, "reaction"), f"{kp}.reaction", "a reaction equation")
        dt = _read_difference(rd, rd.get(m, "temperature"), f"{kp}.temperature")
        if eq is not None and dt is not None:
            out.append(ApproachSpec(eq, dt, kp))
    return tuple(out)
