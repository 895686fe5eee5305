"""Units of a case file: temperature, pressure, amount, mass, volume and energy, defined and converted by pint.

Pint (https://pint.readthedocs.io) is the unit library.  Its registry is built from a
small definitions file, ``auditor/data/units.txt``, that holds only the units a case may
use (SI prefixes; K, degC, degF, degR; Pa, bar, atm, torr, psi; mol, lbmol; g, t, lb; L, m^3, ft^3;
J, cal, Btu),
with pint's own definitions, so the factors are pint's.

Importing pint costs more than everything else a cold ``auditor check`` does apart from
cantera, so the spellings people write (``850 degC``, ``25 bar``, ``2 kmol``, ``10 kg``)
are converted with a table that pint computed once from that registry and that ships with
the package, ``auditor/data/units.json`` (``python -m auditor.units`` writes it again;
``tests/test_units.py`` checks it against pint's default registry).  Any other unit text
(``MPa*1``, ``delta_degC``, ``kilobar``) goes to the pint registry itself, imported then.

A unit that is almost right (``250 C``, ``bara``, ``kpa``) is answered with the likely
intended spelling instead of pint's "not defined".
"""
from __future__ import annotations

import functools
import json
import math
import re
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any

_DATA = Path(__file__).parent / "data"
DEFINITIONS = _DATA / "units.txt"
TABLE = _DATA / "units.json"

# kind -> (pint dimensionality, SI unit, default unit of a bare number, example for messages)
KINDS = {
    "temperature": ("[temperature]", "K", "K", "'850 degC' or '1123.15 K'"),
    "pressure": ("[mass] / [length] / [time] ** 2", "Pa", "Pa", "'25 bar' or '101325 Pa'"),
    "amount": ("[substance]", "mol", "mol", "'2 kmol' or 1.5 (mol)"),
    "mass": ("[mass]", "kg", "kg", "'10 kg' or '1 t'"),
    "volume": ("[length] ** 3", "m**3", "m**3", "'24.5 L' or '2 m^3'"),
    "energy": ("[mass] * [length] ** 2 / [time] ** 2", "J", "J", "'-200 kJ' or '1.5 MJ'"),
}

# the spellings the shipped table holds, by kind (everything else goes through pint)
TABLE_UNITS = {
    "temperature": ("K", "kelvin", "degC", "°C", "celsius", "degF", "°F", "fahrenheit", "degR", "rankine"),
    "pressure": ("Pa", "hPa", "kPa", "MPa", "GPa", "mbar", "bar", "kbar", "atm", "torr", "psi"),
    "amount": ("mol", "mmol", "kmol", "lbmol", "lb_mol"),
    "mass": ("mg", "g", "kg", "t", "tonne", "lb"),
    "volume": ("L", "l", "mL", "m^3", "m**3", "dm^3", "cm^3", "ft^3"),
    "energy": ("J", "kJ", "MJ", "GJ", "cal", "kcal", "Btu"),
}

# units that are almost right: what was written -> what was likely meant (per kind).
# Gauge pressures have no absolute equivalent without the local atmosphere: None.
NEAR_MISSES = {
    "temperature": {"C": "degC", "c": "degC", "deg C": "degC", "degc": "degC", "DegC": "degC", "oC": "degC",
                    "F": "degF", "f": "degF", "deg F": "degF", "degf": "degF", "DegF": "degF", "oF": "degF",
                    "k": "K", "R": "degR", "deg R": "degR", "degr": "degR", "Kelvin": "K", "Celsius": "degC",
                    "Fahrenheit": "degF"},
    "pressure": {"bara": "bar", "barA": "bar", "BarA": "bar", "Bar": "bar", "BAR": "bar", "bar(a)": "bar",
                 "pa": "Pa", "PA": "Pa", "kpa": "kPa", "KPa": "kPa", "Kpa": "kPa", "KPA": "kPa",
                 "kPaa": "kPa", "kPa(a)": "kPa", "mpa": "MPa", "Mpa": "MPa", "MPA": "MPa", "MPaa": "MPa",
                 "psia": "psi", "PSI": "psi", "PSIA": "psi", "Psi": "psi", "ATM": "atm", "Atm": "atm",
                 "atma": "atm", "Torr": "torr", "TORR": "torr",
                 "barg": None, "bar(g)": None, "psig": None, "PSIG": None, "kPag": None, "kPa(g)": None,
                 "MPag": None, "atmg": None},
    "amount": {"Mol": "mol", "MOL": "mol", "mole": "mol", "moles": "mol", "gmol": "mol", "g-mol": "mol",
               "gmole": "mol", "Kmol": "kmol", "KMOL": "kmol", "kgmol": "kmol", "kg-mol": "kmol", "kgmole": "kmol",
               "kmole": "kmol", "kmoles": "kmol", "lb-mol": "lbmol", "lbmole": "lbmol", "lb-mole": "lbmol",
               "lbmoles": "lbmol", "Lbmol": "lbmol", "LBMOL": "lbmol", "lb mol": "lbmol", "mmole": "mmol"},
    "mass": {"KG": "kg", "Kg": "kg", "kgs": "kg", "kilo": "kg", "kilos": "kg", "G": "g", "gm": "g", "gr": "g",
             "grams": "g", "T": "t", "ton": "t", "tons": "t", "mt": "t", "MT": "t", "te": "t", "tonnes": "t",
             "LB": "lb", "Lb": "lb", "lbm": "lb"},
    "volume": {"m3": "m^3", "M3": "m^3", "litre(s)": "L", "liters": "L", "litres": "L", "ltr": "L", "lt": "L",
               "cc": "cm^3", "ml": "mL", "dm3": "dm^3", "cm3": "cm^3", "ft3": "ft^3", "cuft": "ft^3"},
    "energy": {"j": "J", "kj": "kJ", "KJ": "kJ", "Kj": "kJ", "mj": "MJ", "Mj": "MJ", "KCAL": "kcal", "Kcal": "kcal",
               "BTU": "Btu", "btu": "Btu"},
}

_NUMBER_UNIT = re.compile(r"^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?|[-+]?(?:inf|nan))\s*(.*?)\s*$",
                          re.IGNORECASE)


@dataclass(frozen=True)
class Quantity:
    """A value as the user wrote it, and in SI units.

    ``exact`` is the SI value as a Fraction (the decimal as written times the unit's exact
    decimal factor) for units without an offset; ``None`` for temperature scales."""

    text: str           # the text as written, e.g. "2 kmol" or "1.5"
    number: str         # the number as written
    unit: str           # the unit as written, or the default unit of a bare number
    kind: str           # temperature, pressure, amount or mass
    si: float
    exact: Fraction | None
    per: str | None = None   # a rate's time unit as written ("h" for "2 kmol/h"): si and exact are per that time


def example(kind: str | tuple[str, ...]) -> str:
    """How a value of this kind (or of these kinds) is written, for messages."""
    if kind == ("amount", "mass"):
        return "'2 kmol', '10 kg' or 1.5 (mol)"
    return KINDS[kind if isinstance(kind, str) else kind[0]][3]


def _what(value) -> str:
    text = repr(value)
    return text if len(text) <= 80 else f"{text[:60]}... ({len(str(value))} characters)"


def split(value: Any, kind: str) -> tuple[str, str, str]:
    """(text as written, number text, unit text) of a number or ``"850 degC"``; ValueError
    naming what was expected when it is neither."""
    default = KINDS[kind][2]
    if isinstance(value, bool) or value is None:
        raise ValueError(f"expected a {kind} such as {example(kind)}, got {value!r}")
    if isinstance(value, int):
        text = str(value)
        return text, text, default
    if isinstance(value, float):
        text = repr(value)
        return text, text, default
    if isinstance(value, str):
        m = _NUMBER_UNIT.match(value)
        if not m:
            raise ValueError(f"expected a {kind} such as {example(kind)}, got {_what(value)}")
        return value.strip(), m.group(1), m.group(2) or default
    raise ValueError(f"expected a {kind} such as {example(kind)}, got {_kind_of(value)}")


def unit_written(value: Any) -> str | None:
    """The unit text written with a value: ``"bar"`` for ``"1.6 bar"``, ``""`` for a bare number
    (``1.6`` or ``"1.6"``), None for anything that is not a quantity at all."""
    if isinstance(value, bool) or value is None:
        return None
    if isinstance(value, (int, float)):
        return ""
    if isinstance(value, str):
        m = _NUMBER_UNIT.match(value)
        return m.group(2) if m else None
    return None


def is_bare(value: Any) -> bool:
    """A number written without a unit."""
    return unit_written(value) == ""


def _kind_of(v) -> str:
    if isinstance(v, dict):
        return "a mapping"
    if isinstance(v, list):
        return "a list" if v else "an empty list"
    return _what(v)


def parse(value: Any, kinds: tuple[str, ...] | str) -> Quantity:
    """Parse ``value`` as one of ``kinds`` (the first is the one a bare number has).

    Raises ValueError with one sentence naming what was expected (and, for a unit that is
    almost right, what was likely meant)."""
    kinds = (kinds,) if isinstance(kinds, str) else tuple(kinds)
    text, number_text, unit = split(value, kinds[0])
    try:
        number = float(number_text)
    except OverflowError:
        raise ValueError(f"{kinds[0]} {value!r} is too large a number") from None
    if not math.isfinite(number):
        raise ValueError(f"{kinds[0]} must be a finite number, got {value!r}")
    what = " or ".join(kinds)
    hit = _table().get(unit)
    if hit is not None:
        kind, scale, offset = hit
        if kind not in kinds:
            raise ValueError(f"unit {unit!r} is not a unit of {what} (expected e.g. {example(kinds)})")
        si = number * float(scale) + float(offset) if offset else number * float(scale)
        exact = None if offset else Fraction(number_text) * scale if _finite_text(number_text) else None
    else:
        rate = _rate(unit, kinds)
        if rate is not None:     # '2 kmol/h': the amount fed in one time unit, which is kept
            amount_unit, per = rate
            q = parse(f"{number_text} {amount_unit}", kinds)
            from dataclasses import replace
            return replace(q, text=text, unit=unit, per=per)
        _near_miss(number_text, unit, kinds)
        try:
            kind, si = _with_pint(number, unit, kinds, what)
        except ValueError:
            _other_case(number_text, unit, kinds)
            raise
        exact = None
    if not math.isfinite(si):
        raise ValueError(f"{kind} {value!r} is too large: it overflows when converted to {KINDS[kind][1]}")
    if exact is not None and float(exact) != si and abs(float(exact) - si) > 1e-12 * max(abs(si), 1.0):
        exact = None
    return Quantity(text, number_text, unit, kind, si, exact)


def _finite_text(number_text: str) -> bool:
    return not number_text.lstrip("+-").lower().startswith(("inf", "nan"))


def _near_miss(number_text: str, unit: str, kinds: tuple[str, ...]) -> None:
    """Raise with 'did you mean' when ``unit`` is a known near miss of one of ``kinds``.

    Checked before pint, because some near misses mean something else to pint and would be
    accepted silently: 'mt' is a millitonne (1 kg) there, 'gr' a grain."""
    for kind in kinds:
        misses = NEAR_MISSES[kind]
        if unit in misses:
            meant = misses[unit]
            if meant is None:
                raise ValueError(f"cannot read unit {unit!r} of {kind}: a gauge pressure; give the absolute "
                                 "pressure (gauge plus the local atmospheric pressure), e.g. in bar")
            raise ValueError(f"cannot read unit {unit!r} of {kind}; did you mean {number_text} {meant}?")


# a flow rate written where an amount is wanted: 'kg/h', 'kmol/hr', 't/d', 'lb per hour'
_TIMES = {"s": "second", "sec": "second", "min": "minute", "h": "hour", "hr": "hour", "hrs": "hour",
          "hour": "hour", "d": "day", "day": "day", "yr": "year", "y": "year", "a": "year", "year": "year"}
_RATE = re.compile(r"^\s*(.+?)\s*(?:/|\bper\s+)\s*([A-Za-z]+)\s*$")


def _rate(unit: str, kinds: tuple[str, ...]) -> tuple[str, str] | None:
    """(amount or mass unit, time unit as written) of a flow rate such as 'kg/h', 'kmol/hr',
    't/d' or 'lb per hour' written where an amount is wanted; None for anything else."""
    if "amount" not in kinds and "mass" not in kinds:
        return None
    m = _RATE.match(unit)
    key = m.group(2).lower() if m else ""
    if (_TIMES.get(key) or _TIMES.get(key.rstrip("s"))) is None:
        return None
    return m.group(1), m.group(2)


def time_word(per: str) -> str:
    """The time unit of a rate in words: 'h' -> 'hour'."""
    return _TIMES.get(per.lower()) or _TIMES.get(per.lower().rstrip("s")) or per


def _other_case(number_text: str, unit: str, kinds: tuple[str, ...]) -> None:
    """After pint failed: raise with 'did you mean' when ``unit`` is a spelling of the table in
    other letter case ('KPA', 'Degc') and only one fits.  (Not before pint: 'Mmol' is a
    megamole, not a misspelt 'mmol'.)"""
    for kind in kinds:
        folded = [u for u in TABLE_UNITS[kind] if u.lower() == unit.lower()]
        if len(folded) == 1 and folded[0] != unit:
            raise ValueError(f"cannot read unit {unit!r} of {kind}; did you mean {number_text} {folded[0]}?")


def _with_pint(number: float, unit: str, kinds: tuple[str, ...], what: str) -> tuple[str, float]:
    ureg = registry()
    try:
        q = ureg.Quantity(number, unit)
        for kind in kinds:
            if q.check(KINDS[kind][0]):
                return kind, float(q.to(KINDS[kind][1]).magnitude)
    except Exception as exc:  # pint's own errors: undefined unit, syntax, offset arithmetic
        raise ValueError(f"cannot read unit {unit!r} of {what}: {exc}") from None
    raise ValueError(f"unit {unit!r} is not a unit of {what} (expected e.g. {example(kinds)})")


def from_si(values, unit: str, kind: str) -> list[float]:
    """SI values expressed in ``unit`` (every accepted unit is linear in SI: scale and offset)."""
    zero = parse(f"0 {unit}", kind).si
    scale = parse(f"1 {unit}", kind).si - zero
    return [(float(v) - zero) / scale for v in values]


@functools.lru_cache(maxsize=1)
def registry():
    """Pint's registry of the units a case may use (built from ``data/units.txt``)."""
    import pint
    return pint.UnitRegistry(str(DEFINITIONS), autoconvert_offset_to_baseunit=False)


@functools.lru_cache(maxsize=1)
def _table() -> dict[str, tuple[str, Fraction, Fraction]]:
    """unit spelling -> (kind, exact scale to SI, exact offset to SI), from the shipped table."""
    raw = json.loads(TABLE.read_text(encoding="utf-8"))
    return {u: (k, Fraction(s), Fraction(o)) for u, (k, s, o) in raw["units"].items()}


def table_from_pint() -> dict:
    """The shipped table, computed by pint from ``data/units.txt``.  Scales and offsets are
    pint's floats rounded to 15 significant digits, which recovers the exact decimals the
    definitions state (1 lb = 0.45359237 kg; 1 atm = 101325 Pa) and is within one part in
    1e15 of pint's value otherwise (``tests/test_units.py``)."""
    import pint
    ureg = registry()
    units = {}
    for kind, names in TABLE_UNITS.items():
        dim, si = KINDS[kind][0], KINDS[kind][1]
        for name in names:
            zero = ureg.Quantity(0.0, name)
            assert zero.check(dim), (name, kind)
            offset = float(zero.to(si).magnitude)
            # the scale from a long difference: 1 unit minus the offset would lose digits
            scale = (float(ureg.Quantity(1e6, name).to(si).magnitude) - offset) / 1e6
            units[name] = [kind, f"{scale:.15g}", f"{offset:.15g}"]
    return {"about": "generated by 'python -m auditor.units' from units.txt with pint; do not edit",
            "pint": pint.__version__, "units": units}


def write_table() -> Path:
    """Write ``data/units.json`` from pint (``python -m auditor.units``)."""
    t = table_from_pint()
    rows = ",\n".join(f"  {json.dumps(k, ensure_ascii=False)}: {json.dumps(v)}" for k, v in t.pop("units").items())
    head = json.dumps(t, ensure_ascii=False)[:-1]
    TABLE.write_text(f"{head}, \"units\": {{\n{rows}\n}}}}\n", encoding="utf-8")
    return TABLE


if __name__ == "__main__":
    write_table()
