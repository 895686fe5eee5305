"""Phase sets that cannot be right, found from the system alone (issue 18, item 5).

* Two ideal-gas phases that share species: ideal gases mix in all proportions, so both can
  be present only with one and the same composition (their split is then indeterminate),
  and otherwise one of them must be empty.
* A condensed species inside a gas phase of a mechanism (the packaged source refuses one
  when the case is read): in a gas it would be counted as a gas at its partial pressure.
* An interface (surface or edge) phase: its species sit on the sites of a solid surface whose
  amount is set by the catalyst's area, not by a bulk material balance.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from .records import CONDENSED_DATABASE, GAS_DATABASE, INTERFACE_MODELS, ChemicalSystem

# equations of state that only a condensed species carries
CONDENSED_EOS = ("constant-volume", "density-four-polynomial", "HKFT", "ions-from-neutral-molecule",
                 "liquid-water-IAPWS95", "molar-volume-temperature-polynomial", "density-temperature-polynomial")

# the state tags of the packaged condensed database's names: C(gr), H2O(L), SiO2(Lqz), Na2CO3(II);
# a name without one (CH2(S), the singlet, included) is never looked up there
_STATE_TAG = re.compile(r"\((gr|caL|s|L|cr\d?|[a-d]|b,c|I{1,3}|IV|V|an|Lqz|hqz|rd|yw|ru|\d)\)(,|$)")


@dataclass(frozen=True)
class SharedGas:
    """Two ideal-gas phases with species in common."""

    phases: tuple[str, str]
    shared: tuple[str, ...]              # species names both hold
    only: tuple[tuple[str, ...], ...]    # species only the first holds, only the second holds

    @property
    def same_species(self) -> bool:
        return not self.only[0] and not self.only[1]


def shared_gas_phases(system: ChemicalSystem) -> tuple[SharedGas, ...]:
    """Every pair of ideal-gas phases that hold a species of the same name, in system order."""
    gases = [p for p in system.phases if p.model == "ideal-gas"]
    names = {p.name: [system.species[k].name for k in system.phase_indices(p.name)] for p in gases}
    out = []
    for i, a in enumerate(gases):
        for b in gases[i + 1:]:
            na, nb = names[a.name], names[b.name]
            shared = tuple(n for n in na if n in nb)
            if shared:
                out.append(SharedGas((a.name, b.name), shared,
                                     (tuple(n for n in na if n not in nb), tuple(n for n in nb if n not in na))))
    return tuple(out)


def interface_phases(system: ChemicalSystem) -> tuple[str, ...]:
    """Surface and edge phases of the system."""
    return tuple(p.name for p in system.phases if p.model in INTERFACE_MODELS)


def condensed_in_gas(raw) -> tuple[tuple[str, str, str], ...]:
    """(phase, species, why) for each species of an ideal-gas phase that is a condensed species:
    its definition carries a condensed equation of state, or it is a species of the packaged
    condensed database that the gas database does not hold.  ``raw``: (phase, model, is_gas,
    [cantera Species]) as the mechanism loader assembles them."""
    out = []
    for pname, model, _, sps in raw:
        if model != "ideal-gas":
            continue
        for sp in sps:
            eos = (sp.input_data.get("equation-of-state") or {})
            eos = eos[0] if isinstance(eos, list) and eos else eos
            kind = eos.get("model") if isinstance(eos, dict) else None
            if kind in CONDENSED_EOS:
                out.append((pname, sp.name, f"its definition gives a condensed equation of state ({kind})"))
            elif _STATE_TAG.search(sp.name) and _packaged_condensed(sp.name):
                out.append((pname, sp.name, f"it is the condensed species {sp.name} of {CONDENSED_DATABASE}"))
    return tuple(out)


def _packaged_condensed(name: str) -> bool:
    from .packaged import packaged_species
    return name in packaged_species(CONDENSED_DATABASE) and name not in packaged_species(GAS_DATABASE)
