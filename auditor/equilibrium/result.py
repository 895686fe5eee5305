"""The equilibrium stage's frozen result, and whether its certificate holds."""
from __future__ import annotations

import math
from dataclasses import dataclass

from .. import settings
from ..findings import Finding


@dataclass(frozen=True)
class PhaseState:
    name: str
    moles: float
    mole_fractions: tuple[tuple[str, float], ...]


@dataclass(frozen=True, kw_only=True)
class EquilibriumCheck:
    solved: bool
    converged: bool
    solver: str
    temperature_K: float | None
    pressure_Pa: float | None
    phases: tuple[PhaseState, ...]
    phases_present: tuple[str, ...]
    max_affinity_RT: float | None
    element_balance_error: float | None
    potential_residual_RT: float | None
    absent_phase_driving_force: tuple[tuple[str, float], ...]   # phase -> min driving force, RT
    unique: bool | None
    starts: int
    lnK_additivity_error: float | None
    jacobian_rcond: float | None
    assumed_densities: tuple[tuple[str, float, str], ...]
    findings: tuple[Finding, ...]
    confirmed: bool
    seconds: float = 0.0
    element_potentials: tuple[tuple[str, float], ...] = ()
    unique_basis: str = ""                  # how ``unique`` was decided
    phase_amount_rcond: float | None = None  # present phases' conserved-quantity vectors: s_min/s_max
    route: str = ""                         # the solve route whose state the certificate accepted
    attempts: tuple[tuple[str, str], ...] = ()   # (route, outcome) in the order tried

    def document(self) -> dict:
        return {
            "converged": self.converged,
            "temperature_K": self.temperature_K,
            "pressure_Pa": self.pressure_Pa,
            "phases_present": list(self.phases_present),
            "phases": [{"name": p.name, "moles": p.moles, "mole_fractions": dict(p.mole_fractions)} for p in self.phases],
            "max_affinity_RT": self.max_affinity_RT,
            "element_balance_error": self.element_balance_error,
            "unique": self.unique,
            # additive fields
            "solved": self.solved,
            "confirmed": self.confirmed,
            "solver": self.solver,
            "starts": self.starts,
            "unique_basis": self.unique_basis,
            "phase_amount_rcond": self.phase_amount_rcond,
            "potential_residual_RT": self.potential_residual_RT,
            # null: the phase can never form (it needs an element the feed lacks)
            "absent_phase_driving_force_RT": {k: (v if math.isfinite(v) else None)
                                              for k, v in self.absent_phase_driving_force},
            "lnK_additivity_error": self.lnK_additivity_error,
            "jacobian_rcond": self.jacobian_rcond,
            "element_potentials_RT": dict(self.element_potentials),
            "assumed_densities": [{"species": s, "density_kg_m3": d, "source": src}
                                  for s, d, src in self.assumed_densities],
            "route": self.route or None,
            "attempts": [{"route": r, "outcome": o} for r, o in self.attempts],
        }

    def summary_lines(self) -> list[str]:
        if not self.solved:
            msgs = [f.message for f in self.findings if f.topic == "equilibrium"][:3]
            return msgs or ["Gibbs minimisation: not solved"]
        out = [f"Gibbs minimisation ({self.solver}) at T = {self.temperature_K:.2f} K, P = {self.pressure_Pa:.6g} Pa: "
               + ("CONFIRMED" if self.confirmed else "NOT CONFIRMED")]
        for p in self.phases:
            if p.moles <= 0:
                continue
            major = sorted(p.mole_fractions, key=lambda kv: -kv[1])[:8]
            out.append(f"  {p.name}: {p.moles:.6g} mol; " + ", ".join(f"{k} {v:.4g}" for k, v in major))
        absent = ", ".join(f"{n} {d:+.3g}" if math.isfinite(d) else f"{n} cannot form (needs an element the feed lacks)"
                           for n, d in self.absent_phase_driving_force)
        out.append(f"  certificate: balance error {self.element_balance_error:.2e}, max affinity "
                   f"{_fmt(self.max_affinity_RT)} RT, potential residual {_fmt(self.potential_residual_RT)} RT, "
                   f"unique {self.unique} ({self.unique_basis})")
        if absent:
            out.append(f"  driving force to form absent phases (RT, must be >= 0): {absent}")
        if self.jacobian_rcond is not None:
            out.append(f"  Jacobian smallest/largest singular value: {self.jacobian_rcond:.3e}")
        if len(self.attempts) > 1:
            out.append(f"  solve route: {self.route or 'none certified'}, after " + "; ".join(
                f"{r} {o}" for r, o in self.attempts if o != "certified"))
        return out


    @classmethod
    def not_solved(cls, findings, assumed=(), seconds: float = 0.0) -> "EquilibriumCheck":
        """No state to certify: the findings say why."""
        return cls(solved=False, converged=False, solver="", temperature_K=None, pressure_Pa=None, phases=(),
                   phases_present=(), max_affinity_RT=None, element_balance_error=None, potential_residual_RT=None,
                   absent_phase_driving_force=(), unique=None, starts=0, lnK_additivity_error=None,
                   jacobian_rcond=None, assumed_densities=tuple(assumed), findings=tuple(findings), confirmed=False,
                   seconds=seconds)


def certificate_holds(check: EquilibriumCheck) -> bool:
    """The numerical certificate holds (whatever the phases assumed): balance, zero affinity,
    no absent phase that should form, and restarts that agree (an indeterminate split
    between phases is a property of the problem, not of the solver, and does not count)."""
    return check.solved and not certificate_failure(check)


def certificate_failure(check: EquilibriumCheck) -> str:
    """The first part of the certificate that fails, in words; empty when it holds."""
    if not check.solved:
        return "not solved"
    tol = settings.AFFINITY_TOLERANCE_RT
    if check.element_balance_error is None or not check.element_balance_error <= settings.ELEMENT_BALANCE_TOLERANCE:
        return f"conserved-quantity balance error {check.element_balance_error}"
    if check.max_affinity_RT is None or not check.max_affinity_RT <= tol:
        return f"affinity {check.max_affinity_RT} RT"
    bad = [n for n, d in check.absent_phase_driving_force if d < -tol]
    if bad:
        return f"absent phase(s) {', '.join(bad)} should form"
    indeterminate = check.phase_amount_rcond is not None and check.phase_amount_rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE
    if check.unique is False and not indeterminate:
        return "starting estimates disagree"
    return ""


def _fmt(x):
    return "n/a" if x is None else f"{x:.2e}"
