"""Start-up over any number of cycles without stepping them.

:class:`StartupTransient` holds the closed form of the cycle recurrence (the
modes of the one-cycle map) and answers questions over all cycles: the
extremes and peak of a probe (:mod:`explorer.engines.transient_search`) and the
first cycle and instant at which it reaches a level, by branch and bound over
cycle ranges whose bounds come from :mod:`explorer.engines.transient_bounds`.
"""

from __future__ import annotations

import math
from functools import cached_property

import numpy as np

from ..errors import DesignError
from .network import Network, cycle_map
from .periodic import PeriodicSolution
from .startup import cond2, start_target
from .transient_bounds import RangeBounds
from .transient_search import MAX_STARTUP_CYCLES, first_reach, search_extremes

__all__ = ["MAX_STARTUP_CYCLES", "StartupTransient"]

#: Most real modes bounded by corner states in the search (2^n corners per range).
_CORNER_MODES = 3


class StartupTransient:
    """Start-up over any number of cycles without stepping them (one network, one set of durations).

    From capacitor voltages x₀ the cycle-start states follow
    x_{k+1} = Φ·x_k + Γ·u, so x_k = x_ss + Φ^k·(x₀ − x_ss) with x_ss = Φ·x_ss + Γ·u.
    With Φ = W·diag(μ)·W⁻¹ (eigen-decomposition; ``c = W⁻¹·(x₀ − x_ss)``) any probe
    at time t of cycle k is

        y(k, t) = y_ss(t) + Σ_i μ_i^k·α_i(t),

    where y_ss is the periodic steady state and α_i(t) is the probe's response over
    one cycle, inputs at zero, to the starting state c_i·w_i. Two facts make
    questions over millions of cycles cost O(log N) batched evaluations:

    * for a cycle range a ≤ k < b, |y(k, t) − y(a, t)| ≤ Σ_i A_i·D_i(a, b) for
      every t, with A_i = max_t |α_i(t)| (exact, from the phase extrema) and
      D_i = sup |μ_i^k − μ_i^a| = μ_i^a − μ_i^{b−1} for real μ_i ∈ [0, 1], and at most
      |μ_i|^a·min((b−1−a)·|μ_i − 1|, 1 + |μ_i|^{b−1−a}) otherwise
      (μ^j − 1 = (μ − 1)·Σ_{l<j} μ^l; |μ| ≤ 1 because the network is passive);
    * within one cycle the extrema of a probe are exact (the zeros of its
      closed-form derivative, :meth:`PeriodicSolution.extrema`).

    So a range whose bound cannot reach the quantity sought is skipped whole, and
    the rest is split (branch and bound over the integer k, eight parts per split,
    the open tail [a, ∞) growing eightfold). For a Φ whose eigenvectors are
    ill-conditioned (defective or nearly), the bound is the passivity one:
    the stored energy ½·xᵀC·x of the homogeneous response never grows, so
    |y(k, t) − y(a, t)| ≤ B·‖C^½·(x_a − x_ss)‖·min(2, (b−1−a)·‖C^½·Φ·C^−½ − I‖) with
    B the largest ‖K_x·C^−½‖ of the probe over the phases, and Φ^k comes by repeated squaring.

    Parameters
    ----------
    net : Network
        One network (scalar element values) with the modal form (:attr:`Network.modes`).
    durations : array_like (n_phases,) [s]
    u : array_like (n_u,) [V]/[A]
    x0 : array_like (n_x,), optional
        Capacitor voltages before cycle 0 (default 0 V: dead capacitors) [V].

    Examples
    --------
    A capacitor charged from 1 V through a resistor by a switch closed in the
    first half of each cycle (τ = 1 ms, 1 ms cycles) reaches 0.9 V after ln 10·τ of
    charging, 0.302585 ms into the charging phase of cycle 4:

    >>> net = Network([VSrc("v", "in", "0", "v"), Res("s", "in", "a", 1e3, (0,)),
    ...                Cap("c", "a", "0", 1e-6)], inputs=("v",), n_phases=2)
    >>> tr = StartupTransient(net, [0.5e-3, 0.5e-3], [1.0])
    >>> k, t = tr.first_reach("v(a)", 0.9)
    >>> k, round(t * 1e3, 6)
    (4, 4.302585)
    """

    def __init__(self, net: Network, durations, u, x0=None):
        if net.batch_shape != ():
            raise DesignError("network", "start-up takes one network (scalar element values)", net.batch_shape)
        if net.modes is None:
            raise DesignError("network", "start-up over many cycles needs the modal form of a reciprocal RC network")
        self.net = net
        self.durations = np.asarray(durations, float)
        E, S, tot = cycle_map(net, self.durations, integrals=False)  # the modal form: no S needed
        nx = net.n_x
        self.E, self.S = E, S
        self.u = np.asarray(u, dtype=float)
        x0 = np.zeros(nx) if x0 is None else np.asarray(x0, dtype=float)
        self.Phi = Phi = tot[:nx, :nx]
        self.xss = start_target(Phi, tot[:nx, nx:] @ self.u)
        self.d0 = x0 - self.xss
        mu, W = np.linalg.eig(Phi) if nx else (np.zeros(0), np.zeros((0, 0)))
        self.modal = bool(nx == 0 or cond2(W) < 1e8)
        if self.modal:
            # real arithmetic when every μ is real (eig then returns real μ and W); otherwise complex, with
            # a pair split off the real axis by rounding only (|Im μ| ≤ 1e-12·|μ|) taken as real
            if np.iscomplexobj(mu):
                mu = np.where(np.abs(mu.imag) <= 1e-12 * np.abs(mu), mu.real + 0j, mu)
            self.mu, self.W = mu, W
            self.c = np.linalg.solve(W, self.d0.astype(W.dtype)) if nx else np.zeros(0)
            self.real_modes = (mu.imag == 0) & (mu.real >= 0)
            self._rate = np.abs(mu.real)  # μ_i of a real mode
            self._all_real = bool(self.real_modes.all())
            slow = np.argsort(-np.abs(mu))
            self.corner_modes = np.array([i for i in slow if self.real_modes[i]][:_CORNER_MODES], dtype=int)
            rest = np.ones(nx, bool)
            rest[self.corner_modes] = False
            self.other_modes = rest
        self.bounds = RangeBounds(self)

    @cached_property
    def periodic(self) -> PeriodicSolution:
        """The periodic steady state the start-up tends to (one cycle from x_ss)."""
        return self.one_cycle(self.xss[None, :], self.u)

    @cached_property
    def settling_cycles(self) -> float:
        """Cycles per e-fold of the slowest decaying mode, −1/ln ρ with ρ the largest |μ_i| < 1 (0 if none)."""
        if not self.modal:
            r = float(np.max(np.abs(np.linalg.eigvals(self.Phi)), initial=0.0))
        else:
            r = max((m for m in np.abs(self.mu).tolist() if m < 1.0), default=0.0)
        return 0.0 if r <= 0.0 else -1.0 / math.log(r)

    @property
    def period(self) -> float:
        """Cycle time [s]."""
        return float(self.durations.sum())

    def states(self, cycles) -> np.ndarray:
        """Capacitor voltages x_k at the start of each cycle k, shape (len(cycles), n_x) [V]."""
        k = np.asarray(cycles, dtype=float).reshape(-1)
        if self.modal:
            mk = np.power(self._rate, k[:, None])
            if not self._all_real:
                mk = np.where(self.real_modes, mk, np.power(self.mu, k[:, None]))
            return self.xss + ((mk * self.c) @ self.W.T).real
        return self.xss[None, :] + np.stack([np.linalg.matrix_power(self.Phi, int(kk)) @ self.d0 for kk in k])

    def one_cycle(self, x, u) -> PeriodicSolution:
        """Cycles starting from the states x (n, n_x) with inputs u, as a batch of one-cycle solutions."""
        x = np.asarray(x, float)
        n, nx, P = x.shape[0], self.net.n_x, self.net.n_phases
        z = np.empty((n, P, nx + self.net.n_u))
        z[:, 0, :nx] = x
        z[:, 0, nx:] = u
        for p in range(P - 1):
            z[:, p + 1] = z[:, p] @ self.E[p].T
        return PeriodicSolution(net=self.net, durations=self.durations[None].repeat(n, axis=0), z0=z, E=self.E,
                                S=self.S)

    def cycles(self, cycles) -> PeriodicSolution:
        """The cycles k (any indices) as a batch of one-cycle solutions (phase-start states, integrals, extrema).

        Same closed form as :func:`startup` (x_k = x_ss + Φ^k·(x₀ − x_ss)), from the
        decomposition this object already holds.
        """
        return self.one_cycle(self.states(cycles), self.u)

    def cycle_extrema(self, cycles, names) -> tuple[np.ndarray, np.ndarray]:
        """Exact lowest and highest value of each probe in each phase of each cycle, each (len(cycles), P, m)."""
        return self.one_cycle(self.states(cycles), self.u).phase_extrema(names)

    # ------------------------------------------------------------------ questions over all cycles
    def extrema(self, names, *, rtol: float = 1e-9) -> tuple[np.ndarray, np.ndarray]:
        """Lowest and highest value of each probe over the whole start-up, each of shape (m,).

        The infimum and supremum over every cycle k ≥ 0 and every instant, the
        periodic steady state included (it is the limit k → ∞), to ``rtol`` of the
        probe's scale (its largest magnitude).
        """
        return search_extremes(self, list(names), rtol, peak=False)

    def peak(self, names, *, rtol: float = 1e-9) -> np.ndarray:
        """Largest magnitude |y| of each probe over the whole start-up (as :meth:`extrema`), shape (m,)."""
        lo, hi = search_extremes(self, list(names), rtol, peak=True)
        return np.maximum(hi, -lo)

    def first_reach(self, name: str, threshold: float, *, below: bool = False):
        """The first cycle and instant at which a probe reaches a threshold.

        Parameters
        ----------
        name : str
            Probe (e.g. ``"v(out)"``).
        threshold : float
            Level [V] or [A].
        below : bool
            Seek the first time the probe falls to the threshold instead.

        Returns
        -------
        k : int or None
            Index of the first cycle (0-based) in which the probe reaches the
            threshold; None if it never does within :data:`MAX_STARTUP_CYCLES`.
        t : float or None
            Time from the start of cycle 0 to the first instant it does [s]
            (exact: the phase in which it happens is solved between the zeros
            of the probe's derivative).
        """
        return first_reach(self, name, threshold, below=below)
