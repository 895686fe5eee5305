"""Quantities of a case file read as the engineer meant them: no silent units, no impossible values.

* A temperature or pressure must carry its unit (``850 degC``, ``25 bar``).  A bare number is
  refused, unless the case states the unit of its bare numbers once, in a top-level
  ``units:`` mapping (``units: {temperature: K, pressure: bar, feed: kmol}``).
* A feed with no unit anywhere is in mol (as documented).  A feed that mixes amounts with and
  without a unit is refused, unless ``units: {feed: ...}`` says what the bare ones mean.  A bare
  zero needs no unit.
* Values that no physical case holds (a pressure above 1e4 bar, a temperature outside 1 K to
  1e5 K, a feed amount outside 1e-30 to 1e30 in its unit) are refused with the range;
  the limits are named in :mod:`auditor.settings`.

The text kept for reports (``NodeReader.texts``) gains the declared unit when one applied, so
that ``1.6`` under ``units: {pressure: bar}`` is shown, and converted, as ``1.6 bar``.
"""
from __future__ import annotations

from fractions import Fraction

from .. import settings, units
from ..yaml_nodes import NodeReader, kind_of

# key of the units: mapping -> the kinds of quantity its unit may be
UNIT_KEYS = {"temperature": ("temperature",), "pressure": ("pressure",), "feed": ("amount", "mass")}
HOW_TO_DECLARE = "units: {temperature: K, pressure: bar, feed: kmol}"


def read_units(rd: NodeReader, node) -> dict[str, str]:
    """The declared unit of bare numbers, by key of ``units:`` (temperature, pressure, feed)."""
    if node is None:
        return {}
    um = rd.want_mapping(node, "units")
    if um is None:
        return {}
    rd.check_keys(um, tuple(UNIT_KEYS), "units")
    out = {}
    for key, (kn, vn) in um.items():
        if key not in UNIT_KEYS:
            continue
        kp = f"units.{key}"
        text = rd.want_str(vn, kp, f"a unit of {' or '.join(UNIT_KEYS[key])}, e.g. {_example_unit(key)}")
        if text is None:
            continue
        try:
            units.parse(f"1 {text}", UNIT_KEYS[key])
        except ValueError as exc:
            rd.problem(vn, kp, f"{exc}; write a unit alone, e.g. '{key}: {_example_unit(key)}'")
            continue
        out[key] = text
    return out


def _example_unit(key: str) -> str:
    return {"temperature": "K", "pressure": "bar", "feed": "kmol"}[key]


def _number(x) -> str:
    """A decimal for a message, without float noise (Fraction('1.6') * 100 -> 160)."""
    return format(float(x), ".12g")


def _unit_needed(kind: str, number: str) -> str:
    """The refusal of a bare temperature or pressure, with the spellings to write instead."""
    n = Fraction(number)
    if kind == "pressure":
        if abs(n) >= 10_000:     # reads like pascals
            spell = f"{_number(n)} Pa or {_number(n / 1000)} kPa"
        else:
            spell = f"{_number(n)} bar or {_number(n * 100)} kPa"
    elif n <= 0:
        spell = f"{_number(n)} degC or {_number(n)} degF"
    else:
        spell = f"{_number(n)} K or {_number(n)} degC"
    return (f"a {kind} needs a unit: write {spell} (a bare number is not read in any unit; to give "
            f"every bare {kind} in this file one unit, add a top-level 'units: {{{kind}: "
            f"{_example_unit(kind)}}}')")


def read_condition(rd: NodeReader, node, kp: str, kind: str, declared: dict[str, str]) -> float | None:
    """A temperature or pressure in SI, with its unit as written or declared and within the
    physical limits; None with the problem recorded."""
    value = rd.value_of(node, kp)
    try:
        q = units.parse(value, kind)
        if units.is_bare(value):
            if kind not in declared:
                rd.problem(node, kp, _unit_needed(kind, q.number))
                return None
            q = units.parse(f"{q.number} {declared[kind]}", kind)
            rd.texts[kp] = q.text
    except ValueError as exc:
        rd.problem(node, kp, str(exc))
        return None
    problem = outside_limits(kind, q.si, q.text)
    if problem:
        rd.problem(node, kp, problem)
        return None
    return q.si


def outside_limits(kind: str, si: float, text: str) -> str | None:
    """Why a temperature (K) or pressure (Pa) cannot be physical, or None when it can."""
    if kind == "temperature":
        if si <= 0:
            return f"temperature must be above absolute zero, got {si:g} K"
        if not settings.MIN_TEMPERATURE_K <= si <= settings.MAX_TEMPERATURE_K:
            return (f"temperature {text} ({si:g} K) cannot be physical: a case may hold {settings.MIN_TEMPERATURE_K:g} K "
                    f"to {settings.MAX_TEMPERATURE_K:g} K; check the number and its unit")
    elif kind == "pressure":
        if si <= 0:
            return f"pressure must be positive, got {si:g} Pa"
        if si > settings.MAX_PRESSURE_PA:
            return (f"pressure {text} ({si / 1e5:g} bar) cannot be physical: a case may hold up to "
                    f"{settings.MAX_PRESSURE_PA / 1e5:g} bar ({settings.MAX_PRESSURE_PA:g} Pa); "
                    "check the number and its unit")
    return None


def feed_quantities(rd: NodeReader, fm, declared: dict[str, str]) -> list[tuple[str, units.Quantity]]:
    """(species, quantity) of each feed entry that reads, in file order; bare numbers in the
    declared feed unit, or in mol when no entry has a unit; problems recorded."""
    unit, before = declared.get("feed"), len(rd.problems)
    out, bare = [], []
    for sp, (kn, vn) in fm.items():
        kp = f"feed.{sp}"
        v = rd.value_of(vn, kp)
        if v is None and any(c.isspace() for c in sp):
            word, rest = sp.split(None, 1)
            rd.problem(kn, f"feed.{word}", f"a colon is missing after {word!r}: write '{word}: {rest}'")
            continue
        text = f"{v} {unit}" if unit is not None and units.is_bare(v) else v
        try:
            q = units.parse(text, ("amount", "mass"))
        except ValueError as exc:
            rd.problem(vn, kp, str(exc))
            continue
        if text is not v:
            rd.texts[kp] = q.text
        problem = _amount_outside_limits(q, v)
        if problem:
            rd.problem(vn, kp, problem)
            continue
        out.append((sp, q))
        if units.is_bare(v) and q.si != 0:
            bare.append((sp, vn, kp, v))
    with_unit = [(sp, q) for sp, q in out if not units.is_bare(q.text)]
    if unit is None and with_unit and bare and len(rd.problems) == before:
        _mixed_feed(rd, bare, with_unit)
        return []
    if len(rd.problems) == before and not _same_basis(rd, fm, out):
        return []
    return out


def rate_time(quantities) -> str | None:
    """The time unit of a feed written as rates ('h' for kmol/h and kg/h), or None for amounts."""
    return next((q.per for _, q in quantities if q.per is not None), None)


def _same_basis(rd: NodeReader, fm, out) -> bool:
    """A feed is all amounts or all rates per one time unit (a zero may be written either way)."""
    per = rate_time(out)
    if per is None:
        return True
    word = units.time_word(per)
    for sp, q in out:
        if q.si == 0 or (q.per is not None and units.time_word(q.per) == word):
            continue
        kp = f"feed.{sp}"
        if q.per is None:
            rsp, rq = next((x, y) for x, y in out if y.per is not None)
            why = (f"this feed mixes a rate ({rsp}: {rq.text}) with an amount ({sp}: {q.text}): write every feed entry "
                   f"as a rate per {word} (e.g. {sp}: {_number(q.number)} {q.unit}/{per}) or every one as an amount")
        else:
            why = (f"this feed mixes rates per {word} and per {units.time_word(q.per)} ({sp}: {q.text}): write "
                   f"every feed rate per the same time unit")
        rd.problem(fm[sp][1], kp, why)
        return False
    return True


def _mixed_feed(rd: NodeReader, bare, with_unit) -> None:
    """One refusal for a feed that mixes amounts with and without a unit, at the first bare one."""
    sp, vn, kp, v = bare[0]
    written_units = {q.unit for _, q in with_unit}
    unit = written_units.pop() if len(written_units) == 1 else "kmol"
    named = ", ".join(s for s, *_ in bare)
    example_sp, example_q = with_unit[0]
    rd.problem(vn, kp, f"this feed mixes amounts with a unit ({example_sp}: {example_q.text}) and without one "
                       f"({named}): write {sp}: {_number(v)} {unit} (or mol), giving each amount its unit; "
                       "a feed with no unit anywhere is read in mol")


def _amount_outside_limits(q: units.Quantity, v) -> str | None:
    number = abs(float(q.number))
    if q.si < 0:
        return f"feed amount must not be negative, got {kind_of(v)}"
    if number and not settings.MIN_FEED_AMOUNT <= number <= settings.MAX_FEED_AMOUNT:
        return (f"feed amount {q.text} cannot be physical: an amount lies between {settings.MIN_FEED_AMOUNT:g} "
                f"and {settings.MAX_FEED_AMOUNT:g} in its unit ({q.unit}), or is 0; check the number and its unit")
    return None
