"""Chemical system: phases, phase-species, elements and the exact formula matrix.

A *phase-species* is one species in one phase; H2O in a gas and H2O in a
liquid are two phase-species, and the transfer between them is a reaction like any
other.  The formula matrix ``A`` has one row per element that occurs, plus a row
``charge`` when any species is charged (the electron is a species; cantera's pseudo
element ``E`` is replaced by the charge row so that it is not counted twice).

Rooms: ``records.py`` (the frozen records), ``assemble.py`` (a system from cantera
species), ``packaged.py`` (species picked from the databases that ship with cantera),
``mechanism_file.py`` (what a mechanism file declares), ``mechanism.py`` (its phases loaded
by cantera: all of them or the ones named),
``from_case.py`` (the system a case describes, and the check of the names it uses).
"""
from __future__ import annotations

from .from_case import build_system, check_names, feed_moles, matching_species
from .mechanism import cantera_phase, from_mechanism, load_phases
from .mechanism_file import (alternative_pairs, alternatives_message, are_alternatives, default_phases,
                             display_source, mechanism_phase_entries, mechanism_phase_names, shipped_by,
                             shipped_data_file, shipped_name)
from .packaged import (find_species, from_packaged, packaged_species, same_formula_species, search_species,
                       species_suggestions)
from .records import (CHARGE, CONDENSED_DATABASE, GAS_DATABASE, INTERFACE_MODELS, SITES_PREFIX, ChemicalSystem,
                      Formula, MechanismReaction, PhaseDef, SpeciesDef, unknown_name_message)

__all__ = ["build_system", "check_names", "feed_moles", "matching_species", "alternative_pairs",
           "alternatives_message", "are_alternatives", "cantera_phase", "default_phases", "from_mechanism",
           "load_phases", "mechanism_phase_entries", "mechanism_phase_names", "shipped_data_file", "shipped_name",
           "shipped_by", "display_source", "from_packaged", "packaged_species", "same_formula_species",
           "search_species", "find_species", "species_suggestions", "CHARGE", "CONDENSED_DATABASE", "GAS_DATABASE",
           "INTERFACE_MODELS", "SITES_PREFIX", "ChemicalSystem", "Formula", "MechanismReaction", "PhaseDef",
           "SpeciesDef", "unknown_name_message"]
