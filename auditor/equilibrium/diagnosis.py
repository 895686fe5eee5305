"""Why a solve failed, in engineering words (never a library's raw text).

``solver_words`` turns the text of a cantera exception into what it means for the case;
``log_summary`` summarises the lines cantera's solvers print; ``failure_cause`` classifies
why no route reached a certified state, from the case's own arrays and the solvers' texts:

* temperature beyond the thermo data of the species that must carry the feed;
* an element of the feed that no species able to enter the minimisation carries;
* an element that the feed does not supply, held by every species of a phase assumed present;
* a rank-deficient formula matrix over the species that can form (two conserved quantities
  that those species hold only in a fixed proportion);
* an invariant point (no degree of freedom left for the assumed phases);
* a non-ideal (or any) phase model that cannot be evaluated at the state.
"""
from __future__ import annotations

import re

import numpy as np

from .routes import RouteSolver

# (pattern in a cantera message, what it means); the first that matches is used
_CANTERA_TEXTS = (
    (re.compile(r"species\s*(\S+) is excluded since its thermo properties are not valid at this temperature", re.I),
     "{0} is outside its thermo data's temperature range, and cantera's {solver} solver will not start from an "
     "estimate that holds it"),
    (re.compile(r"its\s*=\s*(\d+)", re.I), "cantera's {solver} solver reached its iteration limit ({0} iterations) "
     "without converging"),
    (re.compile(r"VCS solver failed", re.I), "cantera's {solver} solver stopped without converging"),
    (re.compile(r"temperature.*(outside|out of range|too (low|high))", re.I),
     "the temperature is outside a phase model's valid range"),
    (re.compile(r"(nan|not a number|infinite)", re.I), "a phase model gave a value that is not a finite number"),
    (re.compile(r"converge", re.I), "cantera's {solver} solver did not converge"),
)

_LOG_KINDS = (
    (re.compile(r"RANGE SPACE ERROR", re.I), "a singular step in its element-balance (range-space) solve"),
    (re.compile(r"its\s*=\s*\d+", re.I), "an iteration limit reached"),
    (re.compile(r"not valid at this temperature|temperature", re.I), "a species outside its temperature range"),
)


def solver_words(text: str, solver: str) -> str:
    """What a cantera exception's text means, in words ("cantera's vcs solver stopped without
    converging"); a text the tool does not recognise becomes a plain statement that the
    solver stopped on an error."""
    for pattern, words in _CANTERA_TEXTS:
        m = pattern.search(text)
        if m:
            return words.format(*m.groups(), solver=solver)
    return f"cantera's {solver} solver stopped on an error it does not explain"


def log_summary(lines: list[str]) -> str:
    """cantera's solver log lines summarised: what kinds of diagnostic it printed (empty when none)."""
    kinds = []
    for line in lines:
        kind = next((w for p, w in _LOG_KINDS if p.search(line)), "a diagnostic message")
        if kind not in kinds:
            kinds.append(kind)
    return "; ".join(kinds)


def failure_cause(solver: RouteSolver, T: float | None, P: float | None, texts: list[str],
                  degrees_of_freedom: int | None = None, assumed: tuple[str, ...] = ()) -> str:
    """Why no route reached a certified state at T, P (either None when an outer solve looked
    for it): the first cause that applies, in words; a statement that none of the known
    causes applies otherwise.  ``texts`` are the solvers' own failure texts (read, never
    quoted)."""
    a, system = solver.arrays, solver.system
    usable = a.usable_species & solver.candidate
    E = a.element_rows
    supply = E @ solver.n0
    elements = [e for e in system.elements if e != "charge"]
    # an element the feed supplies that no species able to enter the minimisation carries
    carried = (E[:, usable] != 0).any(axis=1)
    uncarried = [elements[i] for i in range(len(elements)) if supply[i] != 0 and not carried[i]]
    if uncarried:
        return (f"the feed supplies {', '.join(uncarried)}, but no species that can enter the minimisation carries "
                "it (its species are in phases left out of the minimisation): the balance cannot be met")
    # an element the feed lacks that every species of an assumed phase needs
    for ph, idx in zip(system.phases, a.phase_species):
        if ph.name in assumed and idx.size and not solver.candidate[idx].any():
            lacking = [elements[i] for i in range(len(elements)) if supply[i] == 0 and (E[i, idx] != 0).any()]
            return (f"the feed supplies no {', '.join(lacking)}, which every species of the assumed phase {ph.name} "
                    "needs: that phase cannot form")
    if degrees_of_freedom is not None and degrees_of_freedom <= 0:
        return ("the assumed phases can coexist only at an invariant point (F = 0), which T and P must hit "
                "exactly; no solver lands on it")
    # temperature beyond the data of the species that can carry the feed
    outside = np.flatnonzero(usable & ((T < a.t_min) | (T > a.t_max))) if T is not None else np.zeros(0, int)
    if T is not None and (outside.size or any("not valid at this temperature" in t for t in texts)):
        labels = ", ".join(f"{system.species[k].label} ({system.species[k].t_min:g}-{system.species[k].t_max:g} K, "
                           f"{_distance(T, system.species[k]):.4g} K away)" for k in outside[:5])
        return f"T = {T:.2f} K is beyond the thermo data of " + (labels or "a species the solvers met")
    # the formula matrix over the species that can form
    supplied = np.flatnonzero(supply != 0)
    if supplied.size:
        rank = int(np.linalg.matrix_rank(E[np.ix_(supplied, np.flatnonzero(usable))])) if usable.any() else 0
        if rank < supplied.size:
            return (f"the formula matrix over the species that can form has rank {rank} for {supplied.size} supplied "
                    f"elements ({', '.join(elements[i] for i in supplied)}): they occur only in fixed proportions, "
                    "so the element potentials are not determined")
    model_problem = _model_problem(solver, T, P) if T is not None and P is not None else ""
    if model_problem:
        return model_problem
    return ("none of the known causes applies (data range, element supply, formula-matrix rank, invariant point, "
            "model evaluation): the solvers did not converge from any starting estimate")


def _distance(T: float, sp) -> float:
    return sp.t_min - T if T < sp.t_min else T - sp.t_max


def _model_problem(solver: RouteSolver, T: float, P: float) -> str:
    """A phase whose model cannot be evaluated at T, P (at the feed, or at an even mixture
    of its species when the feed holds none of it); empty when every phase evaluates."""
    model, a = solver.model, solver.arrays
    for p, (ph, idx) in enumerate(zip(solver.system.phases, a.phase_species)):
        if not model.usable[p] or idx.size == 0:
            continue
        n = np.zeros(a.W.shape[1])
        n[idx] = solver.n0[idx] if solver.n0[idx].sum() > 0 else 1.0
        try:
            mu = model.at_state(T, P, n)[0][idx]
            ok = bool(np.isfinite(mu[n[idx] > 0]).all())
        except Exception:       # cantera raises its own errors for a model outside its domain
            ok = False
        if not ok:
            return (f"the {ph.model} model of phase {ph.name} cannot be evaluated at T = {T:.2f} K, "
                    f"P = {P / 1e5:.6g} bar (its chemical potentials are not finite numbers there)")
    return ""
