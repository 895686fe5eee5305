"""The cantera phases a case's minimisation runs on, and condensed-species densities.

A packaged system gets one cantera phase per system phase, built from the packaged
databases (ideal gas, fixed-stoichiometry or ideal-condensed; a condensed species gets a
constant-volume equation of state at its tabulated density).  A mechanism keeps the thermo
model of each phase, narrowed to the chosen species.
"""
from __future__ import annotations

import functools
import math
import warnings

import numpy as np

from ..errors import one_line
from ..findings import Finding
from ..system import CONDENSED_DATABASE, GAS_DATABASE, ChemicalSystem, cantera_phase, packaged_species

R = 8.314462618  # J/(mol K), CODATA 2018 (exact since the 2019 SI)
DEFAULT_DENSITY = 2000.0  # kg/m3: a typical inorganic solid; only the P*V term uses it
IDEAL_MODELS = ("ideal-gas", "fixed-stoichiometry", "ideal-condensed", "ideal-solid-solution")
# cantera thermo models that cannot enter a multiphase minimisation
UNUSABLE_MODELS = ("pure-fluid", "liquid-water-IAPWS95", "ideal-surface", "edge",
                   "coverage-dependent-surface", "electron-cloud")


@functools.lru_cache(maxsize=1)
def density_table() -> dict[str, tuple[float, str]]:
    """Densities (kg/m3) of condensed species of the packaged database, with their source."""
    import yaml
    from importlib import resources
    data = yaml.safe_load((resources.files("auditor") / "data" / "densities.yaml").read_text(encoding="utf-8"))
    return {name: (float(entry["density"]), str(entry["source"])) for name, entry in data["densities"].items()}


def _plain(obj):
    """cantera's input data as plain Python containers (for YAML output)."""
    from collections.abc import Mapping
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if isinstance(obj, (np.floating, np.integer)):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return [_plain(v) for v in obj.tolist()]
    return obj


class PhaseModel:
    """Cantera objects for a system, built once per case and reused for every state.

    ``phases`` holds one cantera phase per system phase, in system order; ``usable`` says
    which can enter a minimisation; ``problems`` says why the others cannot; ``assumed``
    lists the condensed species' densities taken from the table or the default.
    """

    def __init__(self, system: ChemicalSystem):
        import cantera as ct
        self.ct = ct
        self.system = system
        self.assumed: list[tuple[str, float, str]] = []
        self.problems: list[str] = []
        self.phases: list = []
        self.usable: list[bool] = []
        if system.source == "packaged":
            self._packaged()
        else:
            self._mechanism()
        self.density_notes = tuple(Finding("note", "data", f"density of {label} taken as {rho:g} kg/m3 ({src})", (label,))
                                   for label, rho, src in self.assumed)

    def _species_entry(self, sp_def, condensed: bool) -> dict:
        base = packaged_species(CONDENSED_DATABASE if condensed else GAS_DATABASE)[sp_def.name]
        entry = _plain(base.input_data)
        if condensed:
            if sp_def.name in density_table():
                rho, src = density_table()[sp_def.name]
            else:
                rho, src = DEFAULT_DENSITY, "default (no tabulated value; only the P*V term uses it)"
            self.assumed.append((sp_def.label, rho, src))
            entry["equation-of-state"] = {"model": "constant-volume", "density": f"{rho} kg/m^3"}
        elif self.system.phase(sp_def.phase).model == "Peng-Robinson":
            from ..system.critical import critical_constants
            c = critical_constants(sp_def.name, sp_def.formula)   # the system stage checked that it exists
            entry["critical-parameters"] = {"critical-temperature": c.Tc, "critical-pressure": c.Pc,
                                            "acentric-factor": c.omega}
        return entry

    def _packaged(self):
        import yaml
        ct = self.ct
        for ph in self.system.phases:
            sps = [s for s in self.system.species if s.phase == ph.name]
            entries = [self._species_entry(s, not ph.is_gas) for s in sps]
            thermo = {"ideal-gas": "ideal-gas", "fixed-stoichiometry": "fixed-stoichiometry",
                      "Peng-Robinson": "Peng-Robinson"}.get(ph.model, "ideal-condensed")
            phase = {"name": ph.name, "thermo": thermo, "species": [e["name"] for e in entries],
                     "state": {"T": 300.0, "P": 101325.0}}
            if thermo == "ideal-condensed":
                phase["standard-concentration-basis"] = "unity"
            text = yaml.safe_dump({"phases": [phase], "species": entries}, sort_keys=False)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                self.phases.append(ct.Solution(yaml=text, name=ph.name))
            self.usable.append(True)

    def _mechanism(self):
        ct = self.ct
        for ph in self.system.phases:
            sol, _ = cantera_phase(self.system.source, ph.name)   # the object the system stage built
            names = [s.name for s in self.system.species if s.phase == ph.name]
            ok = sol.thermo_model not in UNUSABLE_MODELS
            if ok and names != list(sol.species_names):
                # the same thermo model over the chosen species (a real-gas model keeps its own
                # equation-of-state data, which each species carries)
                try:
                    keep = [sol.species(n) for n in names]
                    with warnings.catch_warnings():
                        warnings.simplefilter("ignore")
                        sol = ct.Solution(thermo=sol.thermo_model, species=keep)
                except Exception as exc:
                    ok = False
                    self.problems.append(f"phase {ph.name}: cantera cannot build its {sol.thermo_model} model over the "
                                         f"chosen species ({one_line(exc, 200)}); the phase is left out "
                                         "of the minimisation rather than treated as ideal")
            if not ok and sol.thermo_model in ("pure-fluid", "liquid-water-IAPWS95"):
                self.problems.append(f"phase {ph.name} ({sol.thermo_model}) cannot enter a multiphase minimisation; "
                                     "model the vapour and the liquid as two phases")
            elif not ok and "surface" in sol.thermo_model or sol.thermo_model == "edge":
                self.problems.append(f"phase {ph.name} ({sol.thermo_model}) is an interface and is left out of the minimisation")
            self.phases.append(sol)
            self.usable.append(ok)

    # ---- thermodynamics at a state
    def set_state(self, T: float, P: float, n: np.ndarray):
        if not (np.isfinite(n).all() and math.isfinite(T) and math.isfinite(P)):
            # an iterate beyond what floating point carries (exp overflow): refused before cantera
            # takes it, which would leave the phase in a state it cannot leave (NaN density)
            raise FloatingPointError("amounts, temperature or pressure beyond the floating-point range")
        off = 0
        for ph in self.phases:
            k = ph.n_species
            x = n[off:off + k]
            tot = x.sum()
            if tot > 0:
                ph.TPX = T, P, x / tot
            else:
                ph.TP = T, P
            off += k

    def g_RT(self, T: float, P: float) -> np.ndarray:
        """Standard chemical potentials mu°_k(T, P)/RT (pressure term included)."""
        out = []
        for ph in self.phases:
            ph.TP = T, P
            out.append(ph.standard_gibbs_RT)
        return np.concatenate(out)

    def standard_at(self, T: float) -> tuple[np.ndarray, np.ndarray]:
        """Standard chemical potentials mu°_k/RT and enthalpies H°_k/RT at ``T`` and each phase's
        reference pressure (the data's standard state: what an equilibrium constant uses)."""
        g, h = [], []
        for ph in self.phases:
            ph.TP = T, ph.reference_pressure
            g.append(ph.standard_gibbs_RT)
            h.append(ph.standard_enthalpies_RT)
        return np.concatenate(g), np.concatenate(h)

    def at_state(self, T: float, P: float, n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """At amounts n, T, P, from one setting of the state: chemical potentials mu_k/RT and
        standard ones mu°_k(T, P)/RT."""
        self.set_state(T, P, n)
        RT = R * 1000.0 * T
        phases = self.phases
        mu = np.concatenate([ph.chemical_potentials for ph in phases]) / RT
        g = np.concatenate([ph.standard_gibbs_RT for ph in phases])
        return mu, g

    def derivatives(self, T: float, P: float) -> tuple[np.ndarray, np.ndarray]:
        """At the state last set (``at_state``): d(mu°/RT)/d ln T = -H°/RT (Gibbs-Helmholtz) and
        d(mu°/RT)/d ln P = P V/RT, per species."""
        RT = R * 1000.0 * T
        dT = -np.concatenate([ph.standard_enthalpies_RT for ph in self.phases])
        dP = np.concatenate([ph.partial_molar_volumes for ph in self.phases]) * (P / RT)
        return dT, dP

    def enthalpy(self, T: float, P: float, n: np.ndarray) -> float:
        """Total enthalpy, J, of amounts n (mol) at T, P."""
        self.set_state(T, P, n)
        h = np.concatenate([ph.partial_molar_enthalpies for ph in self.phases]) / 1000.0  # J/mol
        return float(h @ n)
