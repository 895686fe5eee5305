"""Sweep axes that replace a value inside a case's energy balance or vessel, not a state variable.

``feed-temperature`` replaces the feed temperature of the case's adiabatic or heat-added balance
(the temperature the feed enters at, so the equilibrium temperature is solved at each point;
a rigid vessel the case fills with the feed at that same temperature is filled at the new one);
``fill-pressure`` replaces the pressure at which the feed fills a rigid vessel
(``volume: {feed-at: ...}``), so the vessel's volume, and the explosion pressure, follow it.
Neither touches the count: the case keeps its specifications, only a value inside one changes.
"""
from __future__ import annotations

import math
from dataclasses import replace
from typing import Iterable, Sequence

from .errors import InputError, Problem

# name -> (unit kind, default unit)
VARIABLES = {"temperature": ("temperature", "K"), "pressure": ("pressure", "bar")}
SPEC_AXES = {"feed-temperature": ("temperature", "K"), "fill-pressure": ("pressure", "bar")}


def check_spec_axis(name: str, specified) -> None:
    """Refuse an axis whose value the case does not hold, with the reason."""
    if name == "feed-temperature" and specified.energy_balance is None:
        raise InputError(Problem("--vary", "a feed-temperature axis replaces the feed temperature of the case's "
                                 "energy balance; the case has none (give 'adiabatic' or 'heat-added' with a "
                                 "feed-temperature under 'specified', or vary the temperature)"))
    if name == "fill-pressure" and specified.volume_feed_at is None:
        raise InputError(Problem("--vary", "a fill-pressure axis replaces the pressure at which the feed fills a "
                                 "rigid vessel; the case states no such vessel (give 'volume: {feed-at: "
                                 "{temperature: ..., pressure: ...}}' under 'specified')"))


def fills_at_feed_temperature(specified) -> bool:
    """A rigid vessel filled with the feed at the feed temperature of the case's energy balance."""
    fill, balance = specified.volume_feed_at, specified.energy_balance
    return fill is not None and balance is not None and math.isclose(fill[0], balance[0], rel_tol=1e-9)


def with_spec_axes(specified, coordinates: Iterable[tuple[str, float]]):
    """``specified`` with the values of this point's feed-temperature and fill-pressure axes."""
    for name, value in coordinates:
        if name == "feed-temperature":
            if fills_at_feed_temperature(specified):
                # a vessel filled with the feed at its feed temperature: it is filled at the new one
                specified = replace(specified, volume_feed_at=(float(value), specified.volume_feed_at[1]))
            if specified.heat_added is not None:
                specified = replace(specified, heat_added=(float(value), specified.heat_added[1]))
            else:
                specified = replace(specified, adiabatic_feed_temperature_K=float(value))
        elif name == "fill-pressure":
            specified = replace(specified, volume_feed_at=(specified.volume_feed_at[0], float(value)))
    return specified


def check_state_axes(specified, names: Sequence[str]) -> None:
    """Refuse a temperature or pressure axis on a case that solves that variable (it would
    over-specify), a feed-temperature or fill-pressure axis on a case without that value, and a
    feed axis on a case that neither fixes nor solves T and P."""
    fixed_by_case = {"temperature": specified.temperature_K, "pressure": specified.pressure_Pa}
    others = [sp.label for sp in specified.specifications if sp.kind not in ("temperature", "pressure")]
    hint = (", the feed-temperature" if specified.energy_balance is not None else "") + \
        (", the fill-pressure" if specified.volume_feed_at is not None else "")
    for n in names:
        if n in VARIABLES and fixed_by_case[n] is None and others:
            raise InputError(Problem("--vary", f"the case does not fix the {n}: it is solved from "
                                     f"{' and '.join(others)}; a {n} axis would over-specify the case "
                                     f"(vary the feed{hint}, or a variable the case fixes)"))
        if n in SPEC_AXES:
            check_spec_axis(n, specified)
    if others or all(n in VARIABLES for n in names):
        return                  # T and P fixed, swept or solved from the case's other specifications
    for tp, value in fixed_by_case.items():
        if value is None and tp not in names:
            raise InputError(Problem("--vary", f"a feed axis runs at fixed temperature and pressure; the case does "
                                     f"not fix the {tp} (vary it too, or specify it in the case)"))
