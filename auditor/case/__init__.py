"""Case files: YAML -> validated, frozen :class:`Case` in SI units (the format is documented in the README).

The loader works on the YAML *node* tree (:mod:`auditor.yaml_nodes`) so that every problem
carries its line, and it collects every problem in a file before raising one
:class:`CaseError`.  It reads each top-level key with its own reader (``_read_system``,
``_read_feed``, ...); binding the names to a chemical system is
:func:`auditor.system.check_names`.

Units are parsed by :mod:`auditor.units` (pint's definitions: K, degC, degF, Pa, kPa, bar, atm,
psi; mol, kmol, lbmol; feed amounts also in mass units, kg, t, lb, converted to moles with
each species' molar mass once the species are known: :func:`auditor.system.feed_moles`).  The text of every
feed amount and specification is kept as written (``Case.as_written``) for reports.

Rooms: ``records.py`` (the frozen records, units), ``load.py`` (``load_case``: title, system,
reactions, feed, coexisting), ``conditions.py`` (specified, restrictions, claims), ``quantities.py``
(units required or declared in ``units:``, physical limits).
"""
from __future__ import annotations

from ..errors import CaseError
from .conditions import CLAIM_KEYS, RATIO_KEYS, SPECIFIED_KEYS, VERDICTS
from .load import SYSTEM_KEYS, TOP_KEYS, load_case
from .quantities import UNIT_KEYS, outside_limits
from .records import (EXTENSIVE, INTENSIVE, Case, DeclaredRestriction, MoleFractionSpec, PhaseFractionSpec,
                      RatioSpec, Specification, Specified, SystemSpec, parse_amount, parse_quantity)

__all__ = ["CaseError", "CLAIM_KEYS", "RATIO_KEYS", "SPECIFIED_KEYS", "VERDICTS", "SYSTEM_KEYS", "TOP_KEYS",
           "load_case", "Case", "DeclaredRestriction", "MoleFractionSpec", "PhaseFractionSpec", "RatioSpec",
           "Specified", "Specification", "INTENSIVE", "EXTENSIVE", "SystemSpec", "parse_amount", "parse_quantity",
           "UNIT_KEYS", "outside_limits"]
