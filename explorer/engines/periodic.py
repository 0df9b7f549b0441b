"""Periodic steady state of a switched-capacitor network.

The steady state is the fixed point x₀ = Φ·x₀ + Γ·u of the one-cycle map,
solved directly; its averages, RMS values and extrema over the cycle are exact
(integrals by the modes or Van Loan's block exponential, extrema from the
zeros of the probe's closed-form derivative).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import DesignError
from .expm import expm, identity, phi1, phi12
from .expsum import exp_sum_roots
from .network import Network, cycle_map, solve_checked

__all__ = ["PeriodicSolution", "phase_square_integrals", "periodic_steady_state"]


@dataclass(frozen=True)
class PeriodicSolution:
    """Periodic steady state of a network (batched over the leading dimensions of ``durations``).

    Attributes
    ----------
    net : Network
    durations : ndarray (..., P) [s]
    z0 : ndarray (..., P, n_z)
        Augmented state [x; u] at the start of each phase.
    E, S : ndarray (..., P, n_z, n_z)
        Phase transition and integral matrices; S is None for a network with the
        modal form (:attr:`Network.modes`), whose integrals come from the modes.
    """

    net: Network
    durations: np.ndarray
    z0: np.ndarray
    E: np.ndarray
    S: np.ndarray | None

    @property
    def period(self) -> np.ndarray:
        """Cycle time [s]."""
        return self.durations.sum(axis=-1)

    @property
    def x0(self) -> np.ndarray:
        """Capacitor voltages at the start of the cycle [V]."""
        return self.z0[..., 0, :self.net.n_x]

    def _K(self, names):
        return self.net.probe_rows(names)  # (*batch, P, m, nz)

    def integral(self, names) -> np.ndarray:
        """∫ y dt over one cycle for each probe, shape (..., m) [V·s or C].

        With the modal form, each phase is integrated about a reference state x_r near
        the phase's own equilibrium: x(t) = x_r + V·ŵ(t) with dŵ/dt = Λ·ŵ + ĝ,
        ŵ(0) = V⁻¹·(x(0) − x_r), ĝ = V⁻¹·(M·x_r + N·u), so

            ∫ y dt = y(x_r)·t + K_x·V·(φ₁(Λt)·t·ŵ(0) + φ₂(Λt)·t²·ĝ),

        exact for any x_r. The fast modes (|λt| > 1) of x_r sit at their equilibrium
        −g/λ, refined once on the residual M·x_r + N·u (iterative refinement; Higham,
        "Accuracy and Stability of Numerical Algorithms", 2nd ed., SIAM 2002, ch. 12);
        the slow ones at x(0). Integrating S·z directly instead subtracts two nearly equal
        terms when a phase settles in far less than its length (a current
        (v_in − x)/R whose x has long reached v_in), which cost up to 1e-7 of a
        charge balance with time constants 1e6 apart.
        """
        K = self._K(names)
        net = self.net
        modes = net.modes
        if modes is None or net.n_x == 0:
            S = self.S if self.S is not None else net.phase_maps(self.durations)[1]
            iz = np.einsum("...pij,...pj->...pi", S, self.z0)
            return np.einsum("...pmj,...pj->...m", K, iz)
        lam, V, Vinv, VN = modes
        nx = net.n_x

        def mv(A, x):  # matrix times vector over the batch and phase dimensions; the matrices are tiny, so
            if x.size <= 1024:  # for a few of them one batched matmul costs least, for many a sum of columns
                return (A @ x[..., None])[..., 0]
            out = A[..., 0] * x[..., None, 0]
            for j in range(1, A.shape[-1]):
                out = out + A[..., j] * x[..., None, j]
            return out

        Fx = net.stacked()[0][..., :nx, :]  # dx/dt = Fx·[x; u]
        x0, u = self.z0[..., :nx], self.z0[..., nx:]
        t = self.durations[..., None]  # (..., P, 1)
        lt = lam * t
        fast = np.abs(lt) > 1.0
        lam_f = np.where(fast, lam, 1.0)
        xr = mv(V, np.where(fast, -mv(VN, u) / lam_f, mv(Vinv, x0)))
        # one step of iterative refinement of the fast modes' equilibrium
        xr = xr - mv(V, np.where(fast, mv(Vinv, mv(Fx, np.concatenate([xr, u], axis=-1))) / lam_f, 0.0))
        zr = np.concatenate([xr, u], axis=-1)
        f1, f2 = phi12(lt)
        dev = f1 * t * mv(Vinv, x0 - xr) + f2 * t * t * mv(Vinv, mv(Fx, zr))
        y_r = mv(K, zr)
        y_d = mv(np.einsum("...mi,...ij->...mj", K[..., :nx], V), dev)
        return (y_r * t + y_d).sum(axis=-2)

    def mean(self, names) -> np.ndarray:
        """Cycle average of each probe [V or A]."""
        return self.integral(names) / self.period[..., None]

    def square_integral(self, names) -> np.ndarray:
        """∫ y² dt over one cycle for each probe (exact, Van Loan 1978), shape (..., m)."""
        return phase_square_integrals(self.net, self.durations, self.z0, names).sum(axis=-2)

    def rms(self, names) -> np.ndarray:
        """RMS of each probe over the cycle."""
        return np.sqrt(np.maximum(self.square_integral(names), 0.0) / self.period[..., None])

    def samples(self, names, n: int = 32):
        """Waveforms sampled at n+1 points per phase (both ends included).

        Returns (t, y) with t shape (..., P·(n+1)) [s] and y shape (..., m, P·(n+1)). With the
        modal form every instant is the closed form of :meth:`phase_extrema` (its modal state at
        that instant times the probe's modal row); without it, each instant's phase map.
        """
        K = self._K(names)
        d = self.durations
        s = d[..., :, None] * _fractions(n)  # (..., P, n+1): time into each phase
        if self.net.modes is not None:
            lam, w, gv, k, ku = self._modal_rows(K)
            modal = _modal_state(lam[..., None, :], w[..., None, :], gv[..., None, :], s[..., None])
            y = (modal @ k.swapaxes(-1, -2) + ku[..., None, :]).swapaxes(-1, -2).swapaxes(-2, -3)  # (..., m, P, n+1)
        else:
            # every sample instant's exact phase map at once (not n steps of one map), the instants on a
            # leading axis so that they broadcast with the network's batch: (n+1, ..., P, nz, nz)
            Es, _ = self.net.phase_maps(np.moveaxis(s, -1, 0), integrals=False)
            Z = np.moveaxis((Es @ self.z0[..., None])[..., 0], 0, -2)  # (..., P, n+1, nz)
            y = np.swapaxes(K @ np.swapaxes(Z, -1, -2), -2, -3)  # (..., m, P, n+1)
        t0 = np.concatenate([np.zeros(d.shape[:-1] + (1,)), np.cumsum(d, axis=-1)[..., :-1]], axis=-1)
        t = t0[..., :, None] + s
        sh = y.shape[:-2] + (-1,)
        return t.reshape(t.shape[:-2] + (-1,)), y.reshape(sh)

    def at_phase_starts(self, names) -> np.ndarray:
        """Each probe at the start of each phase (just after the switching), shape (..., m, P)."""
        return np.einsum("...pmj,...pj->...mp", self._K(names), self.z0)

    def extrema(self, names) -> tuple[np.ndarray, np.ndarray]:
        """Exact lowest and highest value of each probe over the cycle, each of shape (..., m).

        Within phase p, in the modes of :attr:`Network.modes` (M = V·Λ·V⁻¹,
        w = V⁻¹·x(0), g = V⁻¹·N·u), a probe is
        y(t) = k·(e^{Λt}·w + φ₁(Λ, t)·g) + k_u·u with k = K_x·V, so
        y′(t) = Σ_i k_i·(λ_i·w_i + g_i)·e^{λ_i t}: a sum of n_x exponentials,
        whose zeros in the phase (at most n_x − 1; closed form for n_x ≤ 2, see
        :func:`exp_sum_roots`) and the phase's two ends are the only candidates.
        Both ends of each phase count (a probe may step at a switching instant).
        """
        lo, hi = self.phase_extrema(names)
        return lo.min(axis=-2), hi.max(axis=-2)

    def phase_extrema(self, names) -> tuple[np.ndarray, np.ndarray]:
        """Exact lowest and highest value of each probe within each phase, each of shape (..., P, m).

        The method of :meth:`extrema`, before the phases are combined.
        """
        if self.net.modes is None:
            raise DesignError("network", "exact extrema need the modal form of a reciprocal RC network")
        lam, w, gv, k, ku = self._modal_rows(self._K(names))
        b = k * (lam * w + gv)[..., None, :]
        d = self.durations
        roots = exp_sum_roots(b, lam[..., None, :], d[..., None])
        # the phase's two ends do not depend on the probe: their modal states once per phase
        end = _modal_state(lam, w, gv, d[..., None])
        y0 = (k @ w[..., None])[..., 0] + ku
        y1 = (k @ end[..., None])[..., 0] + ku
        lo, hi = np.minimum(y0, y1), np.maximum(y0, y1)
        if roots.shape[-1]:
            t = np.where(np.isnan(roots), 0.0, roots)  # an absent root repeats the phase start
            modal = _modal_state(lam[..., None, None, :], w[..., None, None, :], gv[..., None, None, :],
                                 t[..., None])  # (..., P, m, c, nx)
            y = (modal @ k[..., None])[..., 0] + ku[..., None]
            lo, hi = np.minimum(lo, y.min(axis=-1)), np.maximum(hi, y.max(axis=-1))
        return lo, hi

    def _modal_rows(self, K):
        """The phases in the modes of :attr:`Network.modes`, for the probe rows K (..., P, m, n_z).

        Returns (λ, w, g, k, k_u): λ (..., P, n_x); the modal state w = V⁻¹·x(0) at each phase
        start and its drive g = V⁻¹·N·u, (..., P, n_x); the probes' modal rows k = K_x·V
        (..., P, m, n_x) and input parts k_u = K_u·u (..., P, m); a probe s into phase p is
        k·ŵ(s) + k_u with ŵ(s) from :func:`_modal_state`.
        """
        lam, V, Vinv, VN = self.net.modes
        nx = self.net.n_x
        x0 = self.z0[..., :nx]
        u = self.z0[..., 0, None, nx:, None]  # (..., 1, n_u, 1): matrix products below, not einsum
        w = (Vinv @ x0[..., None])[..., 0]  # (..., P, nx)
        gv = (VN @ u)[..., 0]
        k = K[..., :nx] @ V  # (..., P, m, nx)
        ku = (K[..., nx:] @ u)[..., 0]  # (..., P, m)
        return lam, w, gv, k, ku

    def at_phase_ends(self, names) -> np.ndarray:
        """Each probe at the end of each phase (just before the switching), shape (..., m, P)."""
        zend = np.einsum("...pij,...pj->...pi", self.E, self.z0)
        return np.einsum("...pmj,...pj->...mp", self._K(names), zend)


@lru_cache(maxsize=8)
def _fractions(n: int) -> np.ndarray:
    """The n+1 sample points 0, 1/n, …, 1 of a phase, read-only (kept per n: value-independent)."""
    out = np.linspace(0.0, 1.0, n + 1)
    out.flags.writeable = False
    return out


def _modal_state(lam, w, g, s):
    """The modal state ŵ(s) = e^{Λs}·w + φ₁(Λs)·s·g a time s into a phase (all arguments broadcast;
    dŵ/dt = Λ·ŵ + g, ŵ(0) = w)."""
    x = lam * s
    return np.exp(x) * w + phi1(x) * s * g


def phase_square_integrals(net: Network, durations, z_start, names) -> np.ndarray:
    """∫ y² dt over each phase from given phase-start states (exact, Van Loan 1978).

    Parameters
    ----------
    durations : array_like (..., P) [s]
    z_start : array_like (..., P, n_z)
        Augmented state [x; u] at the start of each phase.
    names : list of str
        Probes.

    Returns
    -------
    ndarray (..., P, m)
        For a current probe times a resistance, the energy dissipated [J].
    """
    F, K = net.stacked()[0], net.probe_rows(names)
    z0 = np.asarray(z_start, float)
    nz = z0.shape[-1]
    d = np.asarray(durations, float)
    # Van Loan's block exponential on a short step h = t/2^k (its −Fᵀ block grows as e^{|F|h},
    # so h is kept where that is harmless), then doubling: G(2h) = G(h) + E(h)·G(h)·E(h)ᵀ.
    norm = np.abs(F).sum(axis=-1).max(axis=-1)  # (P,) row-sum norm
    k = max(0, math.ceil(math.log2(max(float((norm * d).max(initial=0.0)), 1e-300) / 0.25)))
    h = (d / 2.0 ** k)[..., None, None]
    H = np.zeros(d.shape + (2 * nz, 2 * nz))
    H[..., :nz, :nz] = F * h
    H[..., :nz, nz:] = z0[..., :, None] * z0[..., None, :] * h
    H[..., nz:, nz:] = -F.swapaxes(-1, -2) * h
    B = expm(H)
    E = B[..., :nz, :nz]
    G = B[..., :nz, nz:] @ E.swapaxes(-1, -2)  # ∫_0^h e^{Fs} z zᵀ e^{Fᵀs} ds
    for _ in range(k):
        G = G + E @ G @ E.swapaxes(-1, -2)
        E = E @ E
    return np.einsum("...pmi,...pij,...pmj->...pm", K, G, K)


def periodic_steady_state(net: Network, durations, u) -> PeriodicSolution:
    """The periodic steady state, solved directly: x₀ = (I − Φ)⁻¹·Γ·u.

    Parameters
    ----------
    net : Network
    durations : array_like (..., n_phases) [s]
        Phase durations (a batch of cycles may be given).
    u : array_like (n_u,) or (..., n_u)
        Inputs [V] / [A].

    Raises
    ------
    DesignError
        When the cycle map has an eigenvalue at 1 (a capacitor whose charge no
        phase ever changes, so its steady state is undefined).
    """
    E, S, tot = cycle_map(net, durations, integrals=False)  # S only without the modal form
    nx, P = net.n_x, net.n_phases
    u = np.asarray(u, dtype=float)
    d = np.asarray(durations, dtype=float)
    batch = u.shape[:-1] if d.ndim == 1 and net.batch_shape == () else np.broadcast_shapes(
        d.shape[:-1], net.batch_shape, u.shape[:-1])
    if u.shape != batch + (net.n_u,):
        u = np.broadcast_to(u, batch + (net.n_u,))
    Phi = tot[..., :nx, :nx]
    Gam = tot[..., :nx, nx:]
    A = identity(nx) - Phi
    if nx:
        x0 = solve_checked(A, Gam @ u[..., None], 1e12, "the cycle has no unique periodic steady state "
                            "(a capacitor's charge is never changed by any phase)")[..., 0]
    else:
        x0 = np.zeros(u.shape[:-1] + (0,))
    z = np.concatenate([x0, u], axis=-1)
    z0 = np.empty(z.shape[:-1] + (P, z.shape[-1]))
    for p in range(P):
        z0[..., p, :] = z
        if p + 1 < P:
            z = np.einsum("...ij,...j->...i", E[..., p, :, :], z)
    if d.shape != batch + (P,):
        d = np.broadcast_to(d, batch + (P,))
    return PeriodicSolution(net=net, durations=d, z0=z0, E=E, S=S)
