"""Enthalpy, internal energy, entropy and volume of a state, the residuals of the specifications
that fix them, and the heat that crosses the boundary.

A rigid vessel fixes the volume; an energy balance (``adiabatic``, or ``heat-added`` with a
duty Q) is on enthalpy at fixed pressure and on internal energy at fixed volume (first law
for a closed system: Q = dH at constant P, Q = dU at constant V, no shaft work); an
isentropic specification holds the entropy of the equilibrium state at a reference T and P.
Each is one residual of the solved state, met by the outer solves of :mod:`.solve`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..case import Specified
from .model import R, PhaseModel

STANDARD_PRESSURE = 101325.0   # Pa: the feed's pressure where no other is stated (U and S of an
#                                ideal gas do not depend on it for U; S is only used at a stated P)


@dataclass(frozen=True)
class Totals:
    """Extensive properties of amounts at T, P: J, J, J/K, m3."""

    H: float
    U: float
    S: float
    V: float


@dataclass(frozen=True)
class Heat:
    """The heat that crosses the boundary from the feed to the equilibrium state (J, on the
    feed's amounts), and the heat of reaction at the state: the same with the feed at the
    state's own temperature and pressure.  ``balance`` is "enthalpy" (fixed pressure) or
    "internal energy" (rigid vessel)."""

    heat_J: float
    feed_temperature_K: float
    balance: str
    heat_of_reaction_J: float | None


def totals(model: PhaseModel, T: float, P: float, n: np.ndarray) -> Totals:
    """H, U, S and V of amounts n (mol) at T, P, phase by phase (molar properties of each
    phase times its amount; cantera's are per kmol)."""
    model.set_state(T, P, n)
    H = U = S = V = 0.0
    off = 0
    for ph in model.phases:
        k = ph.n_species
        tot = float(n[off:off + k].sum())
        off += k
        if tot <= 0:
            continue
        H += tot * ph.enthalpy_mole / 1000.0
        U += tot * ph.int_energy_mole / 1000.0
        S += tot * ph.entropy_mole / 1000.0
        V += tot * ph.volume_mole / 1000.0
    return Totals(H, U, S, V)


def vessel_volume(s: Specified, model: PhaseModel, n0: np.ndarray) -> float | None:
    """The volume a case fixes, m3: as written, or the volume its feed occupies at the stated state."""
    if s.volume_m3 is not None:
        return s.volume_m3
    if s.volume_feed_at is not None:
        return totals(model, *s.volume_feed_at, n0).V
    return None


def feed_pressure(s: Specified) -> float:
    """The pressure the feed is charged at: the case's, the pressure its volume is stated at, or 1 atm."""
    if s.pressure_Pa is not None:
        return s.pressure_Pa
    if s.volume_feed_at is not None:
        return s.volume_feed_at[1]
    return STANDARD_PRESSURE


def residuals(s: Specified, model: PhaseModel, n0: np.ndarray, reference: Callable | None = None) -> list[tuple[str, Callable]]:
    """(what, residual of a solved state) for the volume, the energy balance and the entropy.

    ``reference(T, P)`` solves the equilibrium state an isentropic specification starts from."""
    out = []
    V = vessel_volume(s, model, n0)
    if V is not None:
        out.append(("volume", lambda sol: math.log(max(totals(model, sol.T, sol.P, sol.n).V, 1e-300) / V)))
    balance = s.energy_balance
    if balance is not None:
        t_feed, q = balance
        feed = totals(model, t_feed, feed_pressure(s), n0)
        rigid = s.fixes_volume
        target = (feed.U if rigid else feed.H) + q
        scale = max(abs(feed.H), 1e3 * float(n0.sum()))

        def energy(sol):
            t = totals(model, sol.T, sol.P, sol.n)
            return ((t.U if rigid else t.H) - target) / scale
        out.append(("adiabatic" if s.heat_added is None else "heat-added", energy))
    if s.isentropic_from is not None:
        if reference is None:
            raise ValueError("an isentropic specification needs its reference state")
        ref = reference(*s.isentropic_from)
        S_ref = totals(model, ref.T, ref.P, ref.n).S
        scale = R * float(n0.sum())
        out.append(("isentropic", lambda sol: (totals(model, sol.T, sol.P, sol.n).S - S_ref) / scale))
    return out


def heat_of(s: Specified, model: PhaseModel, n0: np.ndarray, T: float, P: float, n: np.ndarray) -> Heat | None:
    """The heat from the feed (at the case's feed temperature, or the state's own) to the
    state; None where the thermo data cannot give it."""
    rigid = s.fixes_volume
    balance = s.energy_balance
    t_feed = balance[0] if balance is not None else T
    try:
        out = totals(model, T, P, n)
        feed = totals(model, t_feed, P if not rigid else feed_pressure(s), n0)
        at_state = totals(model, T, P, n0)
    except Exception:
        return None
    heat = (out.U - feed.U) if rigid else (out.H - feed.H)
    reaction = out.H - at_state.H
    if not (math.isfinite(heat) and math.isfinite(reaction)):
        return None
    return Heat(heat, t_feed, "internal energy" if rigid else "enthalpy", reaction)
