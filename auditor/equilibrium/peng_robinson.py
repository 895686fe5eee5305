"""Fugacity coefficients of a gas mixture from the Peng-Robinson equation of state.

D.-Y. Peng and D. B. Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64, with the
kappa(omega) of Robinson and Peng (1978) above omega = 0.491 (the same switch cantera's
Peng-Robinson phase makes); van der Waals one-fluid mixing rules with zero binary
interaction parameters (k_ij = 0: none are tabulated for the packaged species)::

    a_i = 0.45724 R^2 Tc_i^2 / Pc_i * [1 + kappa_i (1 - sqrt(T / Tc_i))]^2,   b_i = 0.07780 R Tc_i / Pc_i
    a = sum_ij x_i x_j sqrt(a_i a_j),   b = sum_i x_i b_i,   A = a P / (R T)^2,   B = b P / (R T)
    Z^3 - (1 - B) Z^2 + (A - 3 B^2 - 2 B) Z - (A B - B^2 - B^3) = 0
    ln phi_i = b_i/b (Z - 1) - ln(Z - B)
               - A / (2 sqrt2 B) (2 sum_j x_j a_ij / a - b_i / b) ln[(Z + (1 + sqrt2) B) / (Z + (1 - sqrt2) B)]

The gas root is the largest real root above B (the vapour-like volume).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

R = 8.314462618  # J/(mol K), CODATA 2018
SQRT2 = float(np.sqrt(2.0))


class NoGasRoot(ValueError):
    """The cubic has no real root above B at this state (no gas volume)."""


@dataclass(frozen=True)
class PengRobinsonGas:
    """Critical constants of the species of one gas mixture (arrays in species order)."""

    Tc: np.ndarray   # K
    Pc: np.ndarray   # Pa
    omega: np.ndarray

    @classmethod
    def of(cls, constants) -> "PengRobinsonGas":
        """From (Tc K, Pc Pa, omega) triples."""
        arr = np.array(constants, dtype=float).reshape(-1, 3)
        return cls(arr[:, 0], arr[:, 1], arr[:, 2])

    def parameters(self, T: float) -> tuple[np.ndarray, np.ndarray]:
        """a_i(T) in Pa m6/mol2 and b_i in m3/mol."""
        w = self.omega
        kappa = np.where(w <= 0.491, 0.37464 + 1.54226 * w - 0.26992 * w ** 2,
                         0.379642 + 1.48503 * w - 0.164423 * w ** 2 + 0.016666 * w ** 3)
        alpha = (1.0 + kappa * (1.0 - np.sqrt(T / self.Tc))) ** 2
        a = 0.45724 * (R * self.Tc) ** 2 / self.Pc * alpha
        b = 0.07780 * R * self.Tc / self.Pc
        return a, b

    def ln_phi(self, T: float, P: float, x: np.ndarray) -> tuple[np.ndarray, float]:
        """ln phi_i of each species in the mixture of mole fractions ``x``, and Z.

        Raises NoGasRoot when the cubic has no real root above B."""
        x = np.asarray(x, dtype=float)
        s = x.sum()
        x = x / s if s > 0 else np.full_like(x, 1.0 / len(x))
        a_i, b_i = self.parameters(T)
        sa = np.sqrt(a_i)
        sum_j = sa * (x @ sa)            # sum_j x_j a_ij with a_ij = sqrt(a_i a_j)
        a = float(x @ sum_j)
        b = float(x @ b_i)
        A = a * P / (R * T) ** 2
        B = b * P / (R * T)
        Z = gas_root(A, B)
        log_term = np.log((Z + (1 + SQRT2) * B) / (Z + (1 - SQRT2) * B))
        ln_phi = b_i / b * (Z - 1) - np.log(Z - B) - A / (2 * SQRT2 * B) * (2 * sum_j / a - b_i / b) * log_term
        return ln_phi, Z


def gas_root(A: float, B: float) -> float:
    """The largest real root of the Peng-Robinson cubic in Z above B."""
    if not (np.isfinite(A) and np.isfinite(B) and B > 0):
        raise NoGasRoot(f"A = {A:.4g}, B = {B:.4g}")
    roots = np.roots([1.0, -(1.0 - B), A - 3 * B ** 2 - 2 * B, -(A * B - B ** 2 - B ** 3)])
    real = roots[np.abs(roots.imag) <= 1e-9 * np.maximum(1.0, np.abs(roots.real))].real
    real = real[real > B]
    if real.size == 0 or not np.isfinite(real).all():
        raise NoGasRoot(f"A = {A:.4g}, B = {B:.4g}")
    return float(real.max())
