"""The frozen records of a validated case (SI units, lines kept), and case-file units."""
from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any, Mapping

from .. import units

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
    gas_model: str = "ideal-gas"                # packaged gas phases: "ideal-gas" or "peng-robinson"


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
