"""The equilibrium stage's frozen result, and whether its certificate holds.

Data only: the JSON block is ``report.document.equilibrium_document``, the text
``report.terminal.equilibrium_lines``.
"""
from __future__ import annotations

from dataclasses import MISSING, dataclass, fields

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
    nonsingularity_test: str = ""                # the test that showed the equations nonsingular ("" when none ran)
    set_aside: tuple[tuple[str, str], ...] = ()  # (phase, why): outside its thermo data at this T, cannot form
    # the heat crossing the boundary from the feed (at heat_feed_temperature_K) to this state, J on the
    # feed's amounts: an enthalpy change at fixed pressure, an internal-energy change in a rigid vessel
    heat_J: float | None = None
    heat_feed_temperature_K: float | None = None
    heat_balance: str = ""                       # "enthalpy" or "internal energy"
    heat_of_reaction_J: float | None = None      # H of the state minus H of the feed, both at the state's T, P
    # phases fixed at a fraction of 0 (bubble, dew or onset point): (phase, driving force RT, phase fraction)
    incipient: tuple[tuple[str, float, float], ...] = ()
    # reactions held short of equilibrium: (equation, approach K, temperature of K, ln K there, ln Q or None)
    approach: tuple[tuple[str, float, float, float, float | None], ...] = ()

    @classmethod
    def not_solved(cls, findings, assumed=(), seconds: float = 0.0) -> "EquilibriumCheck":
        """No state to certify: the findings say why."""
        return cls(solved=False, converged=False, solver="", temperature_K=None, pressure_Pa=None, phases=(),
                   phases_present=(), max_affinity_RT=None, element_balance_error=None, potential_residual_RT=None,
                   absent_phase_driving_force=(), unique=None, starts=0, lnK_additivity_error=None,
                   jacobian_rcond=None, assumed_densities=tuple(assumed), findings=tuple(findings), confirmed=False,
                   seconds=seconds)


_DEFAULTS = {f.name: f.default for f in fields(EquilibriumCheck) if f.default is not MISSING}
_NAMES = frozenset(f.name for f in fields(EquilibriumCheck))


def solved_check(**values) -> EquilibriumCheck:
    """``EquilibriumCheck(**values)`` with its fields filled at once (a frozen dataclass's
    ``__init__`` sets its 37 fields one by one, on the path every sweep point takes): every
    field without a default must be given, and no other name."""
    out = object.__new__(EquilibriumCheck)
    d = out.__dict__
    d.update(_DEFAULTS)
    d.update(values)
    if len(d) != len(_NAMES) or not _NAMES.issuperset(values):
        raise TypeError(f"EquilibriumCheck fields missing or unknown: "
                        f"{sorted(_NAMES.symmetric_difference(d))}")
    return out


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
        return f"conserved-quantity balance error {_number(check.element_balance_error)}"
    if check.max_affinity_RT is None or not check.max_affinity_RT <= tol:
        return f"affinity {_number(check.max_affinity_RT)} RT"
    bad = [n for n, d in check.absent_phase_driving_force if d < -tol]
    if bad:
        return f"absent phase(s) {', '.join(bad)} should form"
    indeterminate = check.phase_amount_rcond is not None and check.phase_amount_rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE
    if check.unique is False and not indeterminate:
        return "starting estimates disagree"
    return ""



def _number(x: float | None) -> str:
    """A certificate number for the route history: three significant digits."""
    return "not computed" if x is None else f"{x:.2e}"
