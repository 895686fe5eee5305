"""Common names of species, for ``auditor species``: the trade's words for what the packaged
databases name by formula. A small table (common practice); each name maps to the database
names it usually means, gas first."""
from __future__ import annotations

COMMON_NAMES: dict[str, tuple[str, ...]] = {
    "hydrogen": ("H2",), "nitrogen": ("N2",), "oxygen": ("O2",), "argon": ("Ar",), "helium": ("He",),
    "water": ("H2O", "H2O(L)", "H2O(s)"), "steam": ("H2O",), "ice": ("H2O(s)",),
    "hydrogen peroxide": ("H2O2",),
    "carbon monoxide": ("CO",), "carbon dioxide": ("CO2",), "graphite": ("C(gr)",), "carbon": ("C(gr)", "C"),
    "soot": ("C(gr)",),
    "methane": ("CH4",), "ethane": ("C2H6",), "ethylene": ("C2H4",), "ethene": ("C2H4",), "propane": ("C3H8",),
    "benzene": ("C6H6", "C6H6(L)"), "toluene": ("C7H8", "C7H8(L)"),
    "methanol": ("CH3OH",), "ethanol": ("C2H5OH",), "dimethyl ether": ("CH3OCH3",), "formic acid": ("HCOOH",),
    "ammonia": ("NH3",), "nitric oxide": ("NO",), "nitrogen dioxide": ("NO2",), "nitrous oxide": ("N2O",),
    "hydrogen chloride": ("HCL",), "hydrogen sulfide": ("H2S",), "hydrogen sulphide": ("H2S",),
    "sulfur dioxide": ("SO2",), "sulphur dioxide": ("SO2",),
    "lime": ("CaO(s)",), "quicklime": ("CaO(s)",), "calcium oxide": ("CaO(s)",),
    "limestone": ("CaCO3(caL)",), "calcite": ("CaCO3(caL)",), "calcium carbonate": ("CaCO3(caL)",),
    "slaked lime": ("CaO2H2(s)",), "magnesia": ("MgO(s)",), "quartz": ("SiO2(Lqz)", "SiO2(hqz)"),
    "silica": ("SiO2(Lqz)", "SiO2(hqz)"), "salt": ("NaCL(s)",), "sodium chloride": ("NaCL(s)",),
    "iron": ("Fe(a)",), "magnetite": ("Fe3O4(s)",),
}


def lookup(query: str) -> list[tuple[str, str]]:
    """(common name, database name) for a query that is a common name or the start of one
    (at least three letters: 'methan' finds methane and methanol); exact matches first."""
    q = " ".join(query.lower().split())
    if len(q) < 3:
        return []
    names = sorted((n for n in COMMON_NAMES if n == q or n.startswith(q)), key=lambda n: (n != q, n))
    return [(n, s) for n in names for s in COMMON_NAMES[n]]
