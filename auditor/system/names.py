"""Species names read as chemistry: element symbols and names, formulas written in any
element order, and the closest known names to a mistyped one.

A formula is read case-sensitively first (``CS2`` is carbon and sulphur, ``Cs2`` caesium); the
packaged databases spell some symbols in capitals (``HCL``, ``ALCL3``), so known names are
compared by the element counts their source gives when the caller has them.  The suggestions for
an unknown species name rank, in order: the name with a digit/letter confusion undone
(``H20`` -> ``H2O``, ``CH3CI`` -> ``CH3Cl``), the same element counts written another way
(``OCS`` -> ``COS``), then names that look alike.
"""
from __future__ import annotations

import re
from typing import Mapping, Sequence

# element symbol -> its English names (IUPAC, with the common spelling variants; common practice)
ELEMENTS: dict[str, tuple[str, ...]] = {
    "H": ("hydrogen",), "He": ("helium",), "Li": ("lithium",), "Be": ("beryllium",), "B": ("boron",),
    "C": ("carbon",), "N": ("nitrogen",), "O": ("oxygen",), "F": ("fluorine",), "Ne": ("neon",),
    "Na": ("sodium",), "Mg": ("magnesium",), "Al": ("aluminium", "aluminum"), "Si": ("silicon",),
    "P": ("phosphorus",), "S": ("sulfur", "sulphur"), "Cl": ("chlorine",), "Ar": ("argon",),
    "K": ("potassium",), "Ca": ("calcium",), "Sc": ("scandium",), "Ti": ("titanium",), "V": ("vanadium",),
    "Cr": ("chromium",), "Mn": ("manganese",), "Fe": ("iron",), "Co": ("cobalt",), "Ni": ("nickel",),
    "Cu": ("copper",), "Zn": ("zinc",), "Ga": ("gallium",), "Ge": ("germanium",), "As": ("arsenic",),
    "Se": ("selenium",), "Br": ("bromine",), "Kr": ("krypton",), "Rb": ("rubidium",), "Sr": ("strontium",),
    "Y": ("yttrium",), "Zr": ("zirconium",), "Nb": ("niobium",), "Mo": ("molybdenum",), "Tc": ("technetium",),
    "Ru": ("ruthenium",), "Rh": ("rhodium",), "Pd": ("palladium",), "Ag": ("silver",), "Cd": ("cadmium",),
    "In": ("indium",), "Sn": ("tin",), "Sb": ("antimony",), "Te": ("tellurium",), "I": ("iodine",),
    "Xe": ("xenon",), "Cs": ("caesium", "cesium"), "Ba": ("barium",), "La": ("lanthanum",), "Ce": ("cerium",),
    "Hf": ("hafnium",), "Ta": ("tantalum",), "W": ("tungsten",), "Re": ("rhenium",), "Os": ("osmium",),
    "Ir": ("iridium",), "Pt": ("platinum",), "Au": ("gold",), "Hg": ("mercury",), "Tl": ("thallium",),
    "Pb": ("lead",), "Bi": ("bismuth",), "Rn": ("radon",), "Ra": ("radium",), "Th": ("thorium",),
    "U": ("uranium",), "Pu": ("plutonium",), "D": ("deuterium",), "E": ("electron",),
}
_BY_NAME = {n: sym for sym, names in ELEMENTS.items() for n in names}
_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")
_SUFFIX = re.compile(r"^(.*?)(\(([^()]*)\))?$")
# digit/letter confusions of a typed formula: O and 0, l and 1, I and 1, I and l (Cl typed CI)
CONFUSIONS = (("0", "O"), ("O", "0"), ("1", "l"), ("l", "1"), ("1", "I"), ("I", "1"), ("I", "l"), ("l", "I"))


def element_of_name(word: str) -> str | None:
    """The symbol of an element given by its name (``sulphur`` -> ``S``), else None."""
    return _BY_NAME.get(" ".join(word.lower().split()))


def _read(text: str, symbol) -> dict[str, int] | None:
    if not text or "".join(m.group(0) for m in _TOKEN.finditer(text)) != text:
        return None
    out: dict[str, int] = {}
    for el, n in _TOKEN.findall(text):
        sym = symbol(el)
        if sym is None:
            return None
        out[sym] = out.get(sym, 0) + int(n or 1)
    return out


def parse_formula(text: str) -> dict[str, int] | None:
    """Element counts of a plain formula read case-sensitively (``CS2`` -> {C: 1, S: 2});
    None when the text is not one (unknown symbols, other characters)."""
    return _read(text, lambda el: el if el in ELEMENTS else None)


def split_phase(text: str) -> tuple[str, str | None]:
    """``S(cr)`` -> (``S``, ``cr``); ``H2O`` -> (``H2O``, None)."""
    m = _SUFFIX.match(text.strip())
    return (m.group(1), m.group(3)) if m and m.group(2) and m.group(1) else (text.strip(), None)


def name_formula(name: str) -> dict[str, int] | None:
    """Element counts a name spells, its phase suffix dropped (``COS(g)`` -> {C: 1, O: 1, S: 1})."""
    return parse_formula(split_phase(name)[0])


def _variants(name: str) -> list[str]:
    """``name`` with one, then every, digit/letter confusion undone."""
    out = []
    for a, b in CONFUSIONS:
        for i, ch in enumerate(name):
            if ch == a:
                out.append(name[:i] + b + name[i + 1:])
        if a in name:
            out.append(name.replace(a, b))
    return list(dict.fromkeys(v for v in out if v != name))


def chemistry_matches(name: str, known: Sequence[str],
                      formulas: Mapping[str, Mapping[str, float]] | None = None) -> list[str]:
    """Known names that are ``name`` as a chemist meant it, best first: a digit/letter confusion
    undone (exact spelling, then any letter case), then the same element counts written another
    way (names with the phase suffix asked for first).  ``formulas`` gives the element counts of
    known names (from their source); names without one are read as formulas."""
    by_upper: dict[str, list[str]] = {}
    for k in known:
        by_upper.setdefault(k.upper(), []).append(k)
    known_set = set(known)
    out: list[str] = []

    def add(hits):
        out.extend(h for h in hits if h not in out and h != name)

    for v in _variants(name):
        add([v] if v in known_set else by_upper.get(v.upper(), []))
    body, phase = split_phase(name)
    targets = [f for f in (parse_formula(body),) if f]
    if targets:
        targets = [{e: float(c) for e, c in t.items()} for t in targets]

        def counts(k):
            f = formulas.get(k) if formulas else None
            f = f if f is not None else (name_formula(k) or {})
            return {e: float(c) for e, c in f.items() if e != "E"}
        same = [k for k in known if counts(k) in targets]
        same.sort(key=lambda k: (phase is not None and phase.lower() not in k.lower(), len(k), k))
        add(same)
    return out
