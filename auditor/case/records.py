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


INTENSIVE, EXTENSIVE = "intensive", "extensive"


@dataclass(frozen=True)
class Specification:
    """One thing the case fixes, as data: what the counting, the incidence and every sentence read.

    ``extent`` decides how it counts (the verdict rules): an intensive one against ``F`` and Duhem's
    two, an extensive one against Duhem's two only.  ``touches`` names the intensive variables
    its equation involves (``"T"``, ``"P"``, or ``(species, phase)`` for a mole fraction); an
    extensive specification has no equation in the intensive incidence.
    """

    kind: str                   # temperature, pressure, mole-fraction, ratio, phase-fraction, adiabatic,
                                # volume, heat-added, isentropic
    symbol: str                 # T, P, x(CO), x(H2)/x(N2), the gas fraction, the enthalpy balance
    label: str                  # the full name with its value: "mole fraction x(CO) = 0.02 in gas"
    extent: str                 # INTENSIVE or EXTENSIVE
    key_path: str               # where the case file states it
    touches: tuple = ()         # "T", "P" or (species, phase), for an intensive specification
    value_si: float | None = None   # the value in SI units (K for temperatures), None when dimensionless
    unit: str = ""              # the SI unit of value_si

    @property
    def intensive(self) -> bool:
        return self.extent == INTENSIVE


def _specifications(s: "Specified") -> tuple[Specification, ...]:
    """The records of what ``s`` fixes, in the order the case file's sections are read."""
    out = []
    if s.temperature_K is not None:
        out.append(Specification("temperature", "T", "temperature", INTENSIVE, "specified.temperature", ("T",),
                                 s.temperature_K, "K"))
    if s.pressure_Pa is not None:
        out.append(Specification("pressure", "P", "pressure", INTENSIVE, "specified.pressure", ("P",),
                                 s.pressure_Pa, "Pa"))
    out += [Specification("mole-fraction", f"x({m.species})", f"mole fraction x({m.species}) = {m.value:g} in {m.phase}",
                          INTENSIVE, m.key_path, ((m.species, m.phase),)) for m in s.mole_fractions]
    out += [Specification("ratio", f"x({r.numerator})/x({r.denominator})",
                          f"ratio x({r.numerator})/x({r.denominator}) = {r.value:g} in {r.phase}", INTENSIVE,
                          r.key_path, ((r.numerator, r.phase), (r.denominator, r.phase))) for r in s.ratios]
    out += [Specification("phase-fraction", f"the {p.phase} fraction", f"phase fraction of {p.phase} = {p.value:g}"
                          + (" (incipient: present in zero amount)" if p.value == 0 else ""),
                          EXTENSIVE, p.key_path) for p in s.phase_fractions]
    if s.volume_m3 is not None:
        out.append(Specification("volume", "V", f"volume V = {s.volume_m3:g} m3", EXTENSIVE, "specified.volume", (),
                                 s.volume_m3, "m^3"))
    if s.volume_feed_at is not None:
        t, p = s.volume_feed_at
        out.append(Specification("volume", "V", f"volume V of the feed at {t:g} K and {p:g} Pa", EXTENSIVE,
                                 "specified.volume.feed-at"))
    balance = "internal-energy" if s.fixes_volume else "enthalpy"
    if s.adiabatic_feed_temperature_K is not None:
        out.append(Specification("adiabatic", f"the {balance} balance",
                                 f"adiabatic {balance} balance (feed at {s.adiabatic_feed_temperature_K:g} K)",
                                 EXTENSIVE, "specified.adiabatic.feed-temperature", (),
                                 s.adiabatic_feed_temperature_K, "K"))
    if s.heat_added is not None:
        t, q = s.heat_added
        out.append(Specification("heat-added", f"the {balance} balance",
                                 f"{balance} balance with {q:g} J added (feed at {t:g} K)", EXTENSIVE,
                                 "specified.heat-added.amount", (), q, "J"))
    if s.isentropic_from is not None:
        t, p = s.isentropic_from
        out.append(Specification("isentropic", "the entropy", f"entropy of the equilibrium state at {t:g} K and {p:g} Pa",
                                 EXTENSIVE, "specified.isentropic"))
    return tuple(out)


@dataclass(frozen=True)
class Specified:
    temperature_K: float | None = None
    pressure_Pa: float | None = None
    mole_fractions: tuple[MoleFractionSpec, ...] = ()
    ratios: tuple[RatioSpec, ...] = ()
    phase_fractions: tuple[PhaseFractionSpec, ...] = ()
    adiabatic_feed_temperature_K: float | None = None
    volume_m3: float | None = None                      # a rigid vessel of this volume
    volume_feed_at: tuple[float, float] | None = None   # the volume the feed occupies at (T K, P Pa)
    heat_added: tuple[float, float] | None = None       # (feed temperature K, heat added J; negative = removed)
    isentropic_from: tuple[float, float] | None = None  # entropy of the equilibrium state at (T K, P Pa)
    # the records of all the above, built once when the case is read (and again by ``replace``)
    specifications: tuple[Specification, ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "specifications", _specifications(self))

    def at_conditions(self, temperature_K: float | None, pressure_Pa: float | None) -> "Specified":
        """``replace(self, temperature_K=..., pressure_Pa=...)``, for a sweep's every point: the
        fields copied at once instead of set one by one, the records rebuilt as ``__post_init__`` does."""
        out = object.__new__(Specified)
        out.__dict__.update(self.__dict__)
        out.__dict__.update(temperature_K=temperature_K, pressure_Pa=pressure_Pa)
        out.__dict__["specifications"] = _specifications(out)
        return out

    @property
    def fixes_volume(self) -> bool:
        """A rigid vessel: the energy balance is on internal energy, not enthalpy."""
        return self.volume_m3 is not None or self.volume_feed_at is not None

    @property
    def energy_balance(self) -> tuple[float, float] | None:
        """(feed temperature K, heat added J) of an adiabatic or heat-added balance, or None."""
        if self.heat_added is not None:
            return self.heat_added
        if self.adiabatic_feed_temperature_K is not None:
            return self.adiabatic_feed_temperature_K, 0.0
        return None

    @property
    def incipient_phases(self) -> tuple[str, ...]:
        """Phases fixed at a fraction of 0: present in zero amount (bubble, dew or onset point)."""
        return tuple(p.phase for p in self.phase_fractions if p.value == 0)

    def names(self) -> list[str]:
        """The full names of what is specified, with their values."""
        return [s.label for s in self.specifications]


@dataclass(frozen=True)
class DeclaredRestriction:
    kind: str                       # "ratio" or "same-composition"
    key_path: str
    ratio: RatioSpec | None = None
    phases: tuple[str, ...] = ()


@dataclass(frozen=True)
class ApproachSpec:
    """A reaction held short of equilibrium by a temperature approach: its quotient equals its
    equilibrium constant at T - delta (endothermic) or T + delta (exothermic)."""

    equation: str
    delta_K: float
    key_path: str               # approach[i]


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
    # the YAML text of a case given in memory (a mapping, auditor.check); None for a case file
    text: str | None = field(default=None, compare=False)
    # a feed written as rates ('kmol/h', 'kg/h', 't/d'): the time unit as written ('h'); the case is
    # the closed system fed in one such time unit, so every extensive result is per that unit
    rate_per: str | None = None
    # the top-level 'margins' key: feed axes probed for phase boundaries (None: the key is absent)
    margins: tuple[str, ...] | None = None
    approach: tuple[ApproachSpec, ...] = ()     # reactions held short of equilibrium (top-level 'approach:')

    def line(self, key_path: str) -> int | None:
        return self.lines.get(key_path)

    def with_specified(self, specified: Specified) -> "Case":
        """``replace(self, specified=specified)``, for a sweep's every point: ``Case`` has no
        ``__post_init__``, so its fields copied at once with one changed make the same record."""
        out = object.__new__(Case)
        out.__dict__.update(self.__dict__)
        out.__dict__["specified"] = specified
        return out


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
