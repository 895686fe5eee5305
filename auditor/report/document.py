"""The JSON document of ``check --json`` (every key described in auditor/data/check.schema.json). Other renderers follow its content."""
from __future__ import annotations

from .. import __version__
import math
from typing import TYPE_CHECKING

from ..audit import AuditResult
from ..exact import format_fraction
from ..settings import TOLERANCES
from .text import phase_rule_explanation

if TYPE_CHECKING:   # the stage is imported only where a case is confirmed (cold start)
    from ..equilibrium import EquilibriumCheck

SCHEMA = 1

HAZARD_CAUTION = "(the hazardous species of the case)"   # replaced by case_cautions
CAUTIONS = (
    "Equilibrium says where a system would go, not how fast or how violently: this audit is no "
    "substitute for kinetic, hazard (HAZOP, LOPA) or relief analysis.",
    HAZARD_CAUTION,
    "Thermodynamic data are valid only inside their stated temperature ranges; results outside "
    "them are extrapolations.",
    "Follow local codes and standards and licensed engineering practice; this tool does not replace them.",
)


def case_cautions(r) -> list[str]:
    """The cautions, the hazardous species named from the case's own species."""
    from .wording import hazard_caution
    names = [sp.name for sp in r.system.species]
    return [hazard_caution(names) if c == HAZARD_CAUTION else c for c in CAUTIONS]


def _claim_value(v):
    return list(v) if isinstance(v, tuple) else v


def _sha256(path) -> str | None:
    import hashlib
    try:
        return hashlib.sha256(open(path, "rb").read()).hexdigest()
    except OSError:
        return None


def _case_input(case) -> dict:
    """The case file's row of ``inputs``; a case given in memory is hashed as its YAML text."""
    if getattr(case, "text", None) is not None:
        import hashlib
        return {"path": str(case.path), "sha256": hashlib.sha256(case.text.encode("utf-8")).hexdigest(),
                "role": "case given in memory (as the YAML text shown)"}
    return {"path": str(case.path), "sha256": _sha256(case.path), "role": "case file"}


def versions() -> dict:
    import platform
    from importlib import metadata
    out = {"auditor": __version__, "python": platform.python_version()}
    for lib in ("cantera", "numpy", "scipy", "pint", "PyYAML"):
        try:
            out[lib] = metadata.version(lib)
        except metadata.PackageNotFoundError:
            out[lib] = None
    return out


def system_block(r: AuditResult) -> dict:
    from ..system import display_source
    s = r.system
    return {
        "source": s.source if s.source == "packaged" else display_source(s.source),
        "phases": [{"name": p.name, "model": p.model, "species": list(p.species)} for p in s.phases],
        "elements": list(s.elements),
        "formula_matrix": [[format_fraction(x) for x in row] for row in s.formula_matrix],
        "species": [{"label": sp.label, "phase": sp.phase, "charge": format_fraction(sp.charge),
                     "thermo_range_K": [sp.t_min, sp.t_max]} for sp in s.species],
    }


def thermo_inputs(r: AuditResult) -> list[dict]:
    """Every thermo or mechanism file the audit read: path as the case gives it, SHA-256, role."""
    from ..system import CONDENSED_DATABASE, GAS_DATABASE, shipped_by, shipped_data_file, shipped_name
    if r.system.source != "packaged":
        from .entered import read
        role = f"mechanism (ships with {shipped_by()})" if shipped_name(r.system.source) else "mechanism"
        return [{"path": read(r.case).source, "sha256": _sha256(r.system.source), "role": role}]
    out = []
    for name, wanted in ((GAS_DATABASE, any(p.is_gas for p in r.system.phases)),
                         (CONDENSED_DATABASE, any(not p.is_gas for p in r.system.phases))):
        if wanted:
            found = shipped_data_file(name)
            out.append({"path": name, "sha256": _sha256(found) if found else None,
                        "role": f"thermo data (ships with {shipped_by()})"})
    return out


def check_document(r: AuditResult, with_context: bool = False) -> dict:
    """The audit as one JSON-ready dict.  ``with_context`` adds inputs, versions and the date
    (for filed reports); the ``generated`` timestamp is the only field that varies between runs."""
    a, pr, sp = r.reactions, r.phase_rule, r.specification
    eqs = [x.equation for x in a.reactions]
    doc = {
        "schema": SCHEMA,
        "case": str(r.case.path),
        "title": r.case.title,
        "verdict": r.verdict,
        "phase_rule": {
            "species": pr.n_present,
            "phases": pr.n_phases,
            "independent_reactions": pr.independent_reactions,
            "restrictions": pr.restrictions,
            "degrees_of_freedom": pr.degrees_of_freedom,
            # additive fields
            "components": pr.components,
            "restrictions_from_feed": pr.r_feed,
            "restrictions_declared": pr.r_declared,
            "coexisting": list(pr.coexisting),
            "relations": [{"origin": x.origin, "relation": x.text} for x in pr.relations],
            "double_counted": [x.text for x in pr.double_counted],
            "reactions_among_present_species": [x.equation for x in pr.reactions_present],
            "explanation": phase_rule_explanation(pr),
        },
        "reactions": {
            "rank": a.rank,
            "independent": [eqs[i] for i in a.independent],
            "complete": a.complete,
            "dependent": [{"equation": eqs[d.index],
                           "combination": [{"equation": eqs[j], "coefficient": format_fraction(c)}
                                           for j, c in d.combination]} for d in a.dependent],
            "unbalanced": [{"equation": eqs[u.index], "imbalance": {e: format_fraction(v) for e, v in u.imbalance}}
                           for u in a.unbalanced],
            # additive fields
            "formula_rank": a.formula_rank,
            "max_independent": a.max_independent,
            "frozen_directions": [x.equation for x in a.frozen],
            "conserved_quantities": [c.name for c in a.conserved],
        },
        "specification": {
            "intensive": len(sp.intensive),
            "extensive": len(sp.extensive),
            "free": list(sp.free),
            "conflicting": list(sp.conflicting),
            # additive fields
            "intensive_names": list(sp.intensive),
            "extensive_names": list(sp.extensive),
            "status": sp.status,
            "rules_applied": list(sp.reasons),
            "suggestion": sp.suggestion,
            "structural_rank": sp.decomposition.structural_rank,
            "variables": len(sp.variables),
            "equations": len(sp.equations),
        },
        "equilibrium": equilibrium_document(r.equilibrium) if r.equilibrium is not None else None,
        "claims": [{"claim": c.name, "claimed": _claim_value(c.claimed), "found": _claim_value(c.found),
                    "held": c.held} for c in r.claims],
        "findings": [{"severity": f.severity, "topic": f.topic, "message": f.message} for f in r.findings],
        # additive: the verdict's reason in one plain sentence
        "reason": r.reason,
        "tolerances": dict(TOLERANCES),
        "tool": {"name": "auditor", "version": __version__},
        "cautions": case_cautions(r),
    }
    return _additive_blocks(doc, r, eqs, with_context)


def _additive_blocks(doc: dict, r: AuditResult, eqs: list[str], with_context: bool) -> dict:
    """The blocks added to the first contract, one per stage or option (each described in
    auditor/data/check.schema.json)."""
    a = r.reactions
    doc["reactions"]["duplicates"] = [{"equation": eqs[g.representative],
                                       "members": [{"equation": eqs[i], "factor": format_fraction(f)} for i, f in g.members]}
                                      for g in a.duplicates]
    doc["reactions"]["derived_complete_set"] = [x.equation for x in a.derived_basis]
    doc["system"] = system_block(r)
    from .bases import bases_document, flow_document    # reporting bases and the flow basis
    doc["flow_basis"] = flow_document(r.case)
    if doc["equilibrium"] is not None:
        doc["equilibrium"]["bases"] = bases_document(r)
    if getattr(r, "real_gas", None) is not None:   # the ideal-gas assumption checked (equilibrium/real_gas.py)
        doc["real_gas"] = real_gas_document(r.real_gas)
    if getattr(r, "margins", None) is not None:    # equilibrium/margins.py, when asked for
        from .margins import margins_list, search_document, sensitivities_document
        doc["margins"] = margins_list(r.margins)
        doc["sensitivities"] = sensitivities_document(r.margins)
        doc["margins_search"] = search_document(r.margins)
    if with_context:
        import datetime
        inputs = [_case_input(r.case)]
        inputs += thermo_inputs(r)
        doc["inputs"] = inputs
        doc["versions"] = versions()
        doc["generated"] = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")
    return doc


def equilibrium_document(eq: EquilibriumCheck) -> dict:
    """The ``equilibrium`` block of the JSON document."""
    out = {
        "converged": eq.converged,
        "temperature_K": eq.temperature_K,
        "pressure_Pa": eq.pressure_Pa,
        "phases_present": list(eq.phases_present),
        "phases": [{"name": p.name, "moles": p.moles, "mole_fractions": dict(p.mole_fractions)} for p in eq.phases],
        "max_affinity_RT": eq.max_affinity_RT,
        "element_balance_error": eq.element_balance_error,
        "unique": eq.unique,
        # additive fields
        "solved": eq.solved,
        "confirmed": eq.confirmed,
        "solver": eq.solver,
        "starts": eq.starts,
        "unique_basis": eq.unique_basis,
        "phase_amount_rcond": eq.phase_amount_rcond,
        "potential_residual_RT": eq.potential_residual_RT,
        # null: the phase can never form (it needs an element the feed lacks)
        "absent_phase_driving_force_RT": {k: (v if math.isfinite(v) else None)
                                          for k, v in eq.absent_phase_driving_force},
        "lnK_additivity_error": eq.lnK_additivity_error,
        "jacobian_rcond": eq.jacobian_rcond,
        "nonsingularity_test": eq.nonsingularity_test or None,
        "element_potentials_RT": dict(eq.element_potentials),
        "assumed_densities": [{"species": s, "density_kg_m3": d, "source": src}
                              for s, d, src in eq.assumed_densities],
        "route": eq.route or None,
        "attempts": [{"route": r, "outcome": o} for r, o in eq.attempts],
        # phases outside their thermo data's temperature range at this T: left out of the solve
        "phases_set_aside": [{"phase": p, "reason": why} for p, why in eq.set_aside],
        # heat crossing the boundary from the feed (at heat_feed_temperature_K) to this state, J on the
        # feed's amounts (positive = added): an enthalpy change at fixed pressure, an internal-energy
        # change in a rigid vessel; and the heat of reaction at the state (feed and state at its T and P)
        "heat_J": eq.heat_J,
        "heat_feed_temperature_K": eq.heat_feed_temperature_K,
        "heat_balance": eq.heat_balance or None,
        "heat_of_reaction_J": eq.heat_of_reaction_J,
    }
    if eq.approach:
        # reactions held short of equilibrium: ln Q equals ln K at the approach's temperature
        out["approach"] = [{"reaction": e, "approach_K": dt, "K_temperature_K": t2, "lnK_at_approach": lnk,
                            "lnQ": lnq} for e, dt, t2, lnk, lnq in eq.approach]
    if eq.incipient:
        # phases fixed at a fraction of 0 (bubble, dew or onset point), present in zero amount
        out["incipient_phases"] = [{"phase": p, "driving_force_RT": d if math.isfinite(d) else None,
                                    "phase_fraction": f} for p, d, f in eq.incipient]
    return out


def real_gas_document(rg) -> dict:
    """The ``real_gas`` block: the certified state re-solved with Peng-Robinson fugacity coefficients."""
    from .. import settings
    shift, lnk = rg.largest_shift, rg.largest_lnK_shift
    return {
        "status": rg.status,
        "model": rg.model,
        "temperature_K": rg.temperature_K,
        "pressure_Pa": rg.pressure_Pa,
        "matters": rg.matters,
        "ideal_mole_fractions": dict(rg.ideal),
        "real_mole_fractions": dict(rg.real),
        "fugacity_coefficients": dict(rg.fugacity_coefficients),
        "largest_shift": {"species": shift[0], "change": shift[1]} if shift else None,
        "lnK_shifts": [{"equation": e, "change": v} for e, v in rg.lnK_shifts],
        "largest_lnK_shift": {"equation": lnk[0], "change": lnk[1]} if lnk else None,
        "compressibility": rg.compressibility,
        "missing_constants": list(rg.missing),
        "constants_sources": dict(rg.sources),
        "iterations": rg.iterations,
        "tolerances": {"audit_pressure_Pa": settings.REAL_GAS_AUDIT_PRESSURE_PA,
                       "mole_fraction": settings.REAL_GAS_MOLE_FRACTION_TOLERANCE,
                       "major_fraction": settings.REAL_GAS_MAJOR_FRACTION,
                       "lnK": settings.REAL_GAS_LNK_TOLERANCE,
                       "high_pressure_caution_Pa": settings.HIGH_PRESSURE_CAUTION_PA},
    }
