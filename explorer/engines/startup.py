"""Cycle-by-cycle start-up of a switched-capacitor network for given cycle indices.

From given capacitor voltages the cycle-start states follow the recurrence
x_{k+1} = Φ·x_k + Γ·u, evaluated in closed form through the eigenvalues of Φ for
all requested k at once. :class:`explorer.engines.transient.StartupTransient`
answers questions over all cycles (extremes, first crossing) without listing them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import DesignError
from .network import Network, cycle_map

__all__ = ["StartupSolution", "cond2", "start_target", "startup"]


@dataclass(frozen=True)
class StartupSolution:
    """Cycle-by-cycle start-up (one network, one set of durations).

    Attributes
    ----------
    net : Network
    durations : ndarray (P,) [s]
    z_start : ndarray (n_cycles, P, n_z)
        Augmented state at the start of each phase of each cycle.
    E, S : ndarray (P, n_z, n_z)
        Phase transition and integral matrices.
    """

    net: Network
    durations: np.ndarray
    z_start: np.ndarray
    E: np.ndarray
    S: np.ndarray

    def phase_integrals(self, names) -> np.ndarray:
        """∫ y dt over each phase of each cycle, shape (m, n_cycles, P)."""
        K = np.stack([s.K[self.net.probe_index(names)] for s in self.net.systems])
        iz = np.einsum("pij,kpj->kpi", self.S, self.z_start)
        return np.einsum("pmj,kpj->mkp", K, iz)

    def at_phase_starts(self, names) -> np.ndarray:
        """Probes at each phase start, shape (m, n_cycles, P)."""
        K = np.stack([s.K[self.net.probe_index(names)] for s in self.net.systems])
        return np.einsum("pmj,kpj->mkp", K, self.z_start)

    def at_phase_ends(self, names) -> np.ndarray:
        """Probes at each phase end, shape (m, n_cycles, P)."""
        K = np.stack([s.K[self.net.probe_index(names)] for s in self.net.systems])
        zend = np.einsum("pij,kpj->kpi", self.E, self.z_start)
        return np.einsum("pmj,kpj->mkp", K, zend)


def cond2(A: np.ndarray) -> float:
    """2-norm condition number σ_max/σ_min of one square matrix (∞ if singular), as ``np.linalg.cond(A)``
    without its handling of NaN (the SVD raises on NaN) and of stacks."""
    s = np.linalg.svd(A, compute_uv=False)
    return float(s[0] / s[-1]) if s[-1] > 0.0 else math.inf


def start_target(Phi: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The state x_ss = Φ·x_ss + b the recurrence tends to (any consistent one when Φ has an eigenvalue 1)."""
    nx = Phi.shape[0]
    A = np.eye(nx) - Phi
    if nx and cond2(A) > 1e12:
        # a charge that no phase changes (Φ has an eigenvalue 1): any consistent x_ss will do
        xss = np.linalg.lstsq(A, b, rcond=None)[0]
        if not np.allclose(A @ xss, b, rtol=1e-9, atol=1e-12 * (np.abs(b).max(initial=0.0) + 1.0)):
            raise DesignError("network", "the inputs drive a charge that no phase can settle (no steady "
                              "state to start toward)")
        return xss
    return np.linalg.solve(A, b) if nx else np.zeros(0)


def _powers_apply(Phi: np.ndarray, v: np.ndarray, k: np.ndarray) -> np.ndarray:
    """Φ^k·v for every k (closed form through the eigen-decomposition), shape (len(k), n)."""
    n = Phi.shape[0]
    if n == 0:
        return np.zeros((k.size, 0))
    lam, V = np.linalg.eig(Phi)
    if cond2(V) < 1e8:
        c = np.linalg.solve(V, v.astype(complex))
        out = (lam[None, :] ** k[:, None] * c[None, :]) @ V.T
        return out.real
    # defective or nearly so: repeated squaring per k (rare)
    return np.stack([np.linalg.matrix_power(Phi, int(kk)) @ v for kk in k])


def startup(net: Network, durations, u, x0=None, *, cycles) -> StartupSolution:
    """Start-up by the recurrence x_{k+1} = Φ·x_k + Γ·u, evaluated in closed form.

    Parameters
    ----------
    durations : array_like (n_phases,) [s]
    u : array_like (n_u,)
    x0 : array_like (n_x,), optional
        Capacitor voltages before the first cycle (default 0 V: dead capacitors).
    cycles : array_like of int
        Indices k of the cycles wanted (need not be contiguous).

    Notes
    -----
    With x_ss = (I − Φ)⁻¹·Γ·u, x_k = x_ss + Φ^k·(x₀ − x_ss), and Φ^k comes from
    Φ's eigenvalues, so a thousand cycles cost one vector operation.
    """
    if net.batch_shape != ():
        raise DesignError("network", "start-up takes one network (scalar element values)", net.batch_shape)
    E, S, tot = cycle_map(net, np.asarray(durations, float))
    nx = net.n_x
    u = np.asarray(u, dtype=float)
    x0 = np.zeros(nx) if x0 is None else np.asarray(x0, dtype=float)
    k = np.asarray(cycles, dtype=np.int64)
    Phi, Gam = tot[:nx, :nx], tot[:nx, nx:]
    xss = start_target(Phi, Gam @ u)
    xk = xss[None, :] + _powers_apply(Phi, x0 - xss, k)
    z = np.concatenate([xk, np.broadcast_to(u, (k.size, u.size))], axis=1)
    zs = []
    for p in range(net.n_phases):
        zs.append(z)
        z = z @ E[p].T
    return StartupSolution(net=net, durations=np.asarray(durations, float), z_start=np.stack(zs, axis=1), E=E, S=S)
