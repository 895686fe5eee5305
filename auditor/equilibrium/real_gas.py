"""The ideal-gas assumption, audited: the certified state re-solved with real-gas fugacities.

At the certified state of a case whose gas phases were treated as ideal, each gas species
gets a fugacity coefficient from the Peng-Robinson equation of state (:mod:`.peng_robinson`)
built from its critical constants (:mod:`auditor.system.critical`, each with its source).
The equilibrium is then re-solved with ``mu_k/RT = g_k + ln x_k + ln phi_k(T, P, x)``:
Newton's method in ln n on the species present at the certified state, with ``ln phi``
re-evaluated at each step (successive substitution on it) until it stops changing
(``settings.REAL_GAS_FIXED_POINT_TOLERANCE``).  The conserved quantities are those of the
case (an incomplete reaction list keeps its extra ones); the phases are those present at the
certified state (the re-solve adds or removes none: fugacity coefficients shift an
equilibrium, they rarely change its phases, and a condensing gas is reported when the gas
root turns liquid-like).  numpy only, so the check costs a few milliseconds.

Compared with the ideal answer: the largest change of a major mole fraction (one of at least
``settings.REAL_GAS_MAJOR_FRACTION`` in either answer), and for each independent reaction
the change of ln K written in mole fractions, ``sum_k nu_k ln phi_k`` over the gas species
(the equilibrium constant in fugacities is the same; its mole-fraction form moves by this).
The assumption matters when either exceeds its tolerance (``settings``).
"""
from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from .. import settings
from ..findings import Finding
from ..system import ChemicalSystem
from ..system.critical import critical_constants
from .peng_robinson import NoGasRoot, PengRobinsonGas

MODEL_NAME = "Peng-Robinson (van der Waals mixing, k_ij = 0)"
MAX_ITERATIONS = 60


@dataclass(frozen=True)
class RealGasAudit:
    """What re-solving the certified state with Peng-Robinson fugacity coefficients gave."""

    status: str                     # "checked", "no-gas-root", "not-converged", "no-constants", "not-solved"
    model: str
    temperature_K: float
    pressure_Pa: float
    matters: bool
    ideal: tuple[tuple[str, float], ...] = ()        # (species label, x) of the gas phases, ideal gas
    real: tuple[tuple[str, float], ...] = ()         # (species label, x) with fugacity coefficients
    fugacity_coefficients: tuple[tuple[str, float], ...] = ()   # at the real-gas state, largest |ln phi| first
    largest_shift: tuple[str, float] | None = None   # (species label, x_real - x_ideal) among major species
    lnK_shifts: tuple[tuple[str, float], ...] = ()   # (equation, change of ln K in mole fractions)
    compressibility: float | None = None
    missing: tuple[str, ...] = ()                    # gas species without critical constants (phi = 1)
    sources: tuple[tuple[str, str], ...] = ()        # (species label, source of its constants)
    iterations: int = 0
    seconds: float = 0.0
    message: str = ""

    @property
    def largest_lnK_shift(self) -> tuple[str, float] | None:
        return max(self.lnK_shifts, key=lambda kv: abs(kv[1])) if self.lnK_shifts else None


def ideal_gas_phases(system: ChemicalSystem, usable) -> list[int]:
    """Indices of the gas phases treated as ideal gases (and able to enter a minimisation)."""
    return [i for i, (ph, ok) in enumerate(zip(system.phases, usable)) if ok and ph.is_gas and ph.model == "ideal-gas"]


def _amounts(check, system: ChemicalSystem) -> np.ndarray:
    """The certified amounts per phase-species, in system order."""
    n = np.zeros(system.n_species)
    for p, state in zip(system.phases, check.phases):
        idx = system.phase_indices(p.name)
        n[idx] = state.moles * np.array([x for _, x in state.mole_fractions])
    return n


def audit_ideal_gas(case, system: ChemicalSystem, analysis, check, workspace) -> RealGasAudit | None:
    """Re-solve a certified state with Peng-Robinson fugacity coefficients; None when the case
    has no ideal gas phase or its pressure is below ``settings.REAL_GAS_AUDIT_PRESSURE_PA``."""
    if check is None or not check.solved or check.pressure_Pa is None:
        return None
    model = workspace.model
    gases = ideal_gas_phases(system, model.usable)
    T, P = float(check.temperature_K), float(check.pressure_Pa)
    if not gases or P < settings.REAL_GAS_AUDIT_PRESSURE_PA:
        return None
    t0 = time.perf_counter()
    base = dict(model=MODEL_NAME, temperature_K=T, pressure_Pa=P, matters=False)
    groups, missing, sources = [], [], []
    for p in gases:
        idx = np.array(system.phase_indices(system.phases[p].name))
        found = []
        for k in idx:
            sp = system.species[k]
            c = critical_constants(sp.name, sp.formula, packaged=system.source == "packaged")
            if c is None:
                missing.append(sp.label)
            else:
                found.append((int(k), (c.Tc, c.Pc, c.omega)))
                sources.append((sp.label, c.source))
        if found:
            ks = np.array([k for k, _ in found])
            groups.append((idx, ks, PengRobinsonGas.of([c for _, c in found])))
    base.update(missing=tuple(missing), sources=tuple(sources))
    if not groups:
        return RealGasAudit(status="no-constants", **base, seconds=time.perf_counter() - t0)
    n_ideal = _amounts(check, system)
    try:
        n_real, ln_phi, Z, iterations, converged = _fixed_point(case, system, workspace, n_ideal, groups, T, P)
    except NoGasRoot as exc:
        return RealGasAudit(status="no-gas-root", **base, message=str(exc), seconds=time.perf_counter() - t0)
    gas_idx = np.concatenate([g[0] for g in groups])
    return _compare(system, analysis, n_ideal, n_real, ln_phi, gas_idx, Z, iterations, converged, base, t0)


def _fixed_point(case, system, workspace, n_ideal, groups, T, P):
    """Newton's method in ln n on the present species of the certified state (conserved
    quantities of the feed, zero affinity of each independent reaction among them with
    mu_k/RT = g_k + ln x_k + ln phi_k), ln phi re-evaluated at each step and held fixed in the
    Jacobian (successive substitution on ln phi).  Returns amounts, ln phi per species, Z of
    the first gas phase, iterations and whether the equations and ln phi settled."""
    from .workspace import feed_vector
    a = workspace.arrays
    n0 = feed_vector(case, system)
    totals = n_ideal @ a.membership
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * max(float(totals.sum()), 1e-300)
    present = phase_present[a.phase_of] & (n_ideal > 0)
    idx = np.flatnonzero(present)
    basis = workspace.present_species(present).basis[:, idx]
    W = a.W[:, idx]
    b = a.W @ n0
    scale = max(float(np.abs(b).max()), 1e-300)
    g = workspace.model.g_RT(T, P)
    if case.approach:       # the approached reactions keep their condition (approach.py)
        from .approach import approach_plan, potential_shift
        g = g + potential_shift(workspace.model, approach_plan(case, system, workspace.analysis), T)
    g = g[idx]
    phase = a.phase_of[idx]
    solution = a.solution[phase]
    same = (phase[:, None] == phase[None, :]) & solution[:, None]
    z = np.log(n_ideal[idx])
    ln_phi = np.zeros(system.n_species)
    Z = None
    for it in range(1, MAX_ITERATIONS + 1):
        n = np.exp(z)
        tot = same @ n
        ln_x = np.where(solution, z - np.log(np.where(solution, tot, 1.0)), 0.0)
        full = np.zeros(system.n_species)
        full[idx] = n
        new = np.zeros(system.n_species)
        Z = None
        for phase_idx, ks, pr in groups:
            if full[phase_idx].sum() > 0:
                lp, zc = pr.ln_phi(T, P, full[ks])
                new[ks] = lp
                Z = zc if Z is None else Z
        moved = float(np.abs(new - ln_phi).max())
        ln_phi = new
        F = np.concatenate(((W @ n - b) / scale, basis @ (g + ln_x + ln_phi[idx])))
        if moved <= settings.REAL_GAS_FIXED_POINT_TOLERANCE and float(np.abs(F).max()) <= 1e-10:
            return full, ln_phi, Z, it, True
        J = np.vstack((W * n / scale, basis @ (np.eye(idx.size) - np.where(same, n[None, :] / tot[:, None], 0.0))))
        step = np.linalg.lstsq(J, -F, rcond=None)[0]
        longest = float(np.abs(step).max())
        z = z + (step if longest <= 2.0 else step * (2.0 / longest))
        if not np.isfinite(z).all():
            break
    full = np.zeros(system.n_species)
    full[idx] = np.exp(z) if np.isfinite(z).all() else n_ideal[idx]
    return full, ln_phi, Z, MAX_ITERATIONS, False


def _fractions(system, n, gas_idx) -> dict[int, float]:
    out = {}
    for p in system.phases:
        idx = system.phase_indices(p.name)
        tot = n[idx].sum()
        for k in idx:
            out[k] = float(n[k] / tot) if tot > 0 else 0.0
    return out


def _compare(system, analysis, n_ideal, n_real, ln_phi, gas_idx, Z, iterations, converged, base, t0) -> RealGasAudit:
    labels = system.labels
    x_i, x_r = _fractions(system, n_ideal, gas_idx), _fractions(system, n_real, gas_idx)
    major = [k for k in x_i if max(x_i[k], x_r[k]) >= settings.REAL_GAS_MAJOR_FRACTION]
    shift = max(((labels[k], x_r[k] - x_i[k]) for k in major), key=lambda kv: abs(kv[1]), default=None)
    reactions = [analysis.reactions[i] for i in analysis.independent] or list(analysis.derived_basis)
    lnk = tuple((r.equation, -float(sum(float(c) * ln_phi[k] for k, c in r.stoich))) for r in reactions)
    phis = sorted(((labels[k], float(np.exp(ln_phi[k]))) for k in gas_idx if labels[k] not in base["missing"]),
                  key=lambda kv: -abs(np.log(kv[1])))
    matters = (shift is not None and abs(shift[1]) > settings.REAL_GAS_MOLE_FRACTION_TOLERANCE) or \
        any(abs(v) > settings.REAL_GAS_LNK_TOLERANCE for _, v in lnk)
    base = dict(base, matters=bool(matters and converged))
    return RealGasAudit(status="checked" if converged else "not-converged", **base,
                        ideal=tuple((labels[k], x_i[k]) for k in gas_idx),
                        real=tuple((labels[k], x_r[k]) for k in gas_idx),
                        fugacity_coefficients=tuple(phis), largest_shift=shift, lnK_shifts=lnk,
                        compressibility=Z, iterations=iterations, seconds=time.perf_counter() - t0)


def _state(audit: RealGasAudit) -> str:
    return f"{audit.pressure_Pa / 1e5:.4g} bar and {audit.temperature_K:.2f} K"


def _how_to_confirm(system: ChemicalSystem) -> str:
    if system.source == "packaged":
        return "write 'gas-model: peng-robinson' under system"
    return "give the gas phase a real-gas model in the mechanism (thermo: Peng-Robinson)"


def real_gas_findings(audit: RealGasAudit | None, system: ChemicalSystem | None = None) -> list[Finding]:
    """The audit in words: a warning when the assumption matters (both answers, the largest
    fugacity coefficients), a note saying by how much it moves the answer otherwise."""
    if audit is None:
        return []
    out = []
    if audit.missing:
        out.append(Finding("note", "real-gas", f"no critical constants for {', '.join(audit.missing)} (neither cantera's "
                           "table nor the project's): the ideal-gas check treats them as ideal (fugacity coefficient 1) "
                           "and cannot say how far they are from it", audit.missing))
    if audit.status == "no-constants":
        return out
    if audit.status == "no-gas-root":
        out.append(Finding("warning", "real-gas", f"the ideal-gas assumption could not be checked at {_state(audit)}: "
                           f"the Peng-Robinson cubic has no gas root there ({audit.message}); the mixture is not a "
                           "gas at these conditions by that model"))
        return out
    if audit.status == "not-converged":
        out.append(Finding("warning", "real-gas", f"the ideal-gas check at {_state(audit)} did not settle: the "
                           f"re-solve with Peng-Robinson fugacity coefficients stopped after {audit.iterations} "
                           "iterations, so how far the ideal-gas answer moves is not known"))
        return out
    sp, dx = audit.largest_shift or ("none", 0.0)
    eq, dlnk = audit.largest_lnK_shift or ("none", 0.0)
    x_i, x_r = dict(audit.ideal).get(sp), dict(audit.real).get(sp)
    phis = ", ".join(f"{k} {v:.3f}" for k, v in audit.fugacity_coefficients[:4])
    moved = (f"x({sp}) {x_i:.4f} as an ideal gas, {x_r:.4f} with fugacity coefficients ({dx:+.4f})"
             if x_i is not None else f"x({sp}) by {dx:+.4f}")
    tol = (f"tolerances {settings.REAL_GAS_MOLE_FRACTION_TOLERANCE:g} in a major mole fraction, "
           f"{settings.REAL_GAS_LNK_TOLERANCE:g} in ln K")
    dense = audit.compressibility is not None and audit.compressibility < settings.REAL_GAS_LIQUID_LIKE_Z
    if dense:
        out.append(Finding("warning", "real-gas", f"at {_state(audit)} the Peng-Robinson root of the gas is liquid-like "
                           f"(compressibility Z = {audit.compressibility:.3f}): the mixture may not be a gas there; "
                           "consider a condensed phase"))
    if audit.matters:
        out.append(Finding("warning", "real-gas", f"the ideal-gas assumption matters at {_state(audit)}: re-solved with "
                           f"{audit.model} fugacity coefficients, {moved}; ln K in mole fractions of '{eq}' moves by "
                           f"{dlnk:+.3f} ({tol}); largest fugacity coefficients: {phis}; to confirm with the real-gas "
                           f"model {_how_to_confirm(system) if system is not None else 'use a real-gas model'}", (sp,)))
    else:
        out.append(Finding("note", "real-gas", f"ideal-gas assumption checked at {_state(audit)} with {audit.model}: "
                           f"the answer moves by at most {abs(dx):.4f} in a major mole fraction ({sp}) and "
                           f"{abs(dlnk):.3f} in ln K ({tol}); fugacity coefficients: {phis}"))
    return out


def high_pressure_caution(system: ChemicalSystem, pressure_Pa: float | None, usable=None) -> list[Finding]:
    """A caution when the pressure exceeds ``settings.HIGH_PRESSURE_CAUTION_PA`` and a gas
    phase is treated as an ideal gas."""
    if pressure_Pa is None or pressure_Pa <= settings.HIGH_PRESSURE_CAUTION_PA:
        return []
    usable = usable if usable is not None else [True] * len(system.phases)
    gases = [system.phases[i].name for i in ideal_gas_phases(system, usable)]
    if not gases:
        return []
    return [Finding("warning", "real-gas", f"caution: at {pressure_Pa / 1e5:.4g} bar (above "
                    f"{settings.HIGH_PRESSURE_CAUTION_PA / 1e5:g} bar) the gas phase {', '.join(gases)} is treated as "
                    f"an ideal gas; real-gas behaviour can move the equilibrium (see the ideal-gas check, or "
                    f"{_how_to_confirm(system)})", tuple(gases))]


def requested_model_findings(system: ChemicalSystem) -> list[Finding]:
    """A packaged gas phase confirmed with Peng-Robinson on request: the model and the source
    of each species' critical constants."""
    out = []
    for ph in system.phases:
        if system.source != "packaged" or ph.model != "Peng-Robinson":
            continue
        rows = []
        for k in system.phase_indices(ph.name):
            sp = system.species[k]
            c = critical_constants(sp.name, sp.formula)
            rows.append(f"{sp.label} Tc {c.Tc:.2f} K, Pc {c.Pc / 1e5:.2f} bar, omega {c.omega:.3f} ({c.source})")
        out.append(Finding("note", "real-gas", f"gas phase {ph.name} is confirmed with the {MODEL_NAME} equation of "
                           f"state (system.gas-model); critical constants: {'; '.join(rows)}", (ph.name,)))
    return out
