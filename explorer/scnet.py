"""The one engine for linear switched-capacitor networks.

A network is a list of two-terminal elements between named nodes (``"0"`` is
the reference) and a fixed cycle of ``n_phases`` phases:

* :class:`Cap` — an ideal capacitor C in series with its ESR; its voltage is a
  state variable;
* :class:`Res` — a resistor, or a switch (``closed`` lists the phases in which
  it conducts with resistance ``r``; open it is absent);
* :class:`VSrc` — an ideal voltage source driven by a named input;
* :class:`ISrc` — a current source driven by a named input (a load).

Inputs are constant within a phase. In each phase the resistive network seen by
the capacitor voltages is solved by modified nodal analysis (Ho, Ruehli &
Brennan, "The modified nodal approach to network analysis", IEEE Trans.
Circuits and Systems 22(6), 1975, doi:10.1109/TCS.1975.1084079) with a
branch-current unknown for every capacitor (v_a − v_b − ESR·i = x), closed
switch or resistor (v_a − v_b − R·i = 0) and voltage source, so element
currents are solved for directly and a milliohm ESR or R_on costs no digits
(a 1/R stamp followed by (v_a − v_b − x)/ESR does); this gives
linear state equations

    dx/dt = M_p·x + N_p·u,    y = K_p·[x; u]

for the capacitor voltages x, the inputs u and every probe y (node voltages
``"v(node)"`` and element currents ``"i(name)"``, positive from the element's
terminal ``a`` to ``b`` through it). With z = [x; u] and F_p = [[M_p, N_p], [0, 0]]
one phase of duration t maps z(0) to z(t) = e^{F_p t}·z(0) exactly, and

    ∫_0^t z ds       = (∫_0^t e^{F_p s} ds)·z(0),
    ∫_0^t z zᵀ ds    = ∫_0^t e^{F_p s} z(0) z(0)ᵀ e^{F_pᵀ s} ds,

both read off one block matrix exponential each (C. F. Van Loan, "Computing
integrals involving the matrix exponential", IEEE Trans. Automatic Control
23(3), 1978, doi:10.1109/TAC.1978.1101743). So averages, charges, RMS currents
and dissipated energies are exact, not sampled. The periodic steady state is
the fixed point x₀ = Φ·x₀ + Γ·u of the one-cycle map, solved directly; start-up
from given voltages is the recurrence x_{k+1} = Φ·x_k + Γ·u evaluated in
closed form through the eigenvalues of Φ for all k at once. Phase durations may
carry leading batch dimensions (e.g. a sweep of clock frequencies).

Batches of networks. Element values (``Cap.c``, ``Cap.esr``, ``Res.r``) may be
numpy arrays that broadcast to one shape, :attr:`Network.batch_shape`: the
network is then that many networks of one topology, solved together (nodal
analysis stacked over the resistances' shape only, state matrices stacked
(*batch, P, n_z, n_z), one batched periodic solve). This is how Monte Carlo
evaluates 10⁴ spread samples at once. Start-up and netlists take one network.

Closed-form phase maps. The state matrix of a reciprocal RC network is
M = −C⁻¹·G with G symmetric positive semi-definite, so C^½·M·C^−½ is symmetric
and M = V·Λ·V⁻¹ with real λ ≤ 0 (:attr:`Network.modes`). The phase maps are
then e^{Mt}, ∫e^{Ms}ds and ∫∫e^{Mr}dr ds in closed form from e^{λt} and the
φ-functions (e^{λt} − 1)/λ, (e^{λt} − 1 − λt)/λ² — the same quantities as
Van Loan's block exponential, which remains available (``method="expm"``,
scipy) and is the fallback for a state matrix without that symmetry. The same
modes give exact extrema of any probe over the cycle
(:meth:`PeriodicSolution.extrema`).

A node group that no element ties to the reference in some phase (a flying
capacitor during a dead time) has no defined common-mode potential; it is
pinned to 0 V through a zero-current anchor, which is exact because nothing can
flow into such a group. A current source feeding such a group, or a loop of
capacitors without ESR and voltage sources with no resistance, has no solution
and raises :class:`~explorer.errors.DesignError`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property
from typing import Union

import numpy as np
from .roots import brentq

from .errors import DesignError

__all__ = ["Cap", "Res", "VSrc", "ISrc", "Network", "PhaseSystem", "PeriodicSolution",
           "StartupSolution", "StartupTransient", "periodic_steady_state", "phase_square_integrals", "startup", "cycle_map",
           "to_spice", "spice_t0"]

GROUND = "0"


@dataclass(frozen=True)
class Cap:
    """Capacitor ``c`` [F] in series with ``esr`` [Ω] from node ``a`` (+) to ``b``."""

    name: str
    a: str
    b: str
    c: float
    esr: float = 0.0


@dataclass(frozen=True)
class Res:
    """Resistor ``r`` [Ω] from ``a`` to ``b``; a switch when ``closed`` lists its conducting phases."""

    name: str
    a: str
    b: str
    r: float
    closed: tuple | None = None  #: phases in which it conducts (None: always)

    def on(self, p: int) -> bool:
        return self.closed is None or p in self.closed


@dataclass(frozen=True)
class VSrc:
    """Ideal voltage source: v(a) − v(b) = u[``input``] [V]."""

    name: str
    a: str
    b: str
    input: str


@dataclass(frozen=True)
class ISrc:
    """Current source: u[``input``] [A] flows out of node ``a`` through the source into ``b``."""

    name: str
    a: str
    b: str
    input: str


Element = Union[Cap, Res, VSrc, ISrc]


@dataclass(frozen=True)
class PhaseSystem:
    """State equations of one phase: dz/dt = F·z, probes y = K·z, z = [x; u]."""

    F: np.ndarray
    K: np.ndarray


#: Padé(13) coefficients b_0..b_13 of the scaling-and-squaring matrix exponential (Higham 2005, eq. 2.4).
_PADE13 = (64764752532480000.0, 32382376266240000.0, 7771770303897600.0, 1187353796428800.0,
           129060195264000.0, 10559470521600.0, 670442572800.0, 33522128640.0, 1323241920.0,
           40840800.0, 960960.0, 16380.0, 182.0, 1.0)
#: Largest 1-norm for which Padé(13) needs no scaling (Higham 2005, table 2.3).
_THETA13 = 5.371920351148152


def _expm(a: np.ndarray) -> np.ndarray:
    """Matrix exponential over leading batch dimensions (scaling and squaring with a Padé(13) approximant).

    N. J. Higham, "The scaling and squaring method for the matrix exponential
    revisited", SIAM J. Matrix Anal. Appl. 26(4), 2005, doi:10.1137/04061101X,
    algorithm 2.3 with the degree-13 approximant throughout. Written with numpy
    so that a batch of small matrices costs a few batched products: scipy's
    ``expm`` calls a threaded BLAS per small matrix, which on a loaded machine
    took milliseconds per 10×10 matrix.
    """
    a = np.asarray(a, dtype=float)
    n = a.shape[-1]
    if a.size == 0:
        return a.copy()
    norm = np.abs(a).sum(axis=-2).max(axis=-1)  # 1-norm per matrix
    s = np.maximum(0, np.ceil(np.log2(np.maximum(norm, 1e-300) / _THETA13))).astype(int)
    x = a / (2.0 ** s)[..., None, None]
    b = _PADE13
    eye = np.broadcast_to(np.eye(n), x.shape)
    x2 = x @ x
    x4 = x2 @ x2
    x6 = x4 @ x2
    u = x @ (x6 @ (b[13] * x6 + b[11] * x4 + b[9] * x2) + b[7] * x6 + b[5] * x4 + b[3] * x2 + b[1] * eye)
    v = x6 @ (b[12] * x6 + b[10] * x4 + b[8] * x2) + b[6] * x6 + b[4] * x4 + b[2] * x2 + b[0] * eye
    r = np.linalg.solve(v - u, v + u)
    if s.ndim == 0:
        for _ in range(int(s)):
            r = r @ r
        return r
    flat, sf = r.reshape((-1, n, n)), s.reshape(-1)
    for k in range(int(sf.max(initial=0))):
        idx = sf > k  # square only the matrices still scaled down
        flat[idx] = flat[idx] @ flat[idx]
    return flat.reshape(r.shape)


def _phi(x: np.ndarray, second: bool = True) -> tuple[np.ndarray, np.ndarray | None]:
    """(e^x − 1)/x and (e^x − 1 − x)/x², the second by its Taylor series for |x| < 0.1 (error < 1e-16).

    The first is :func:`_phi1` (expm1 keeps it accurate for small x); the second cancels for
    small x, so the series is summed there, and only there; ``second=False`` skips it (None).
    """
    x = np.asarray(x, dtype=float)
    f1 = np.asarray(_phi1(x))
    if not second:
        return f1, None
    small = np.abs(x) < 0.1
    xs = np.where(small, 1.0, x)
    f2 = np.asarray((np.expm1(xs) - xs) / (xs * xs))
    if small.any():
        # series Σ x^k/(k+2)!, k = 0..9, as a table of powers (running products) times the coefficients:
        # a few numpy calls instead of twenty for Horner's rule on tiny arrays; |x| < 0.1, so the terms
        # fall by 10× each and the sum is good to a few units in the last place
        xv = x[small]
        pw = np.empty((xv.size, _SERIES_C2.size))
        pw[:, 0] = 1.0
        pw[:, 1:] = xv[:, None]
        np.cumprod(pw, axis=1, out=pw)
        f2[small] = pw @ _SERIES_C2
    return f1, f2


_SERIES_C2 = np.array([1.0 / math.factorial(k + 2) for k in range(10)])


def _phi1(x: np.ndarray) -> np.ndarray:
    """(e^x − 1)/x, 1 at x = 0 (expm1 keeps full relative accuracy for small x, so only x = 0 is special)."""
    x = np.asarray(x, dtype=float)
    zero = x == 0.0
    if zero.any():
        xs = np.where(zero, 1.0, x)
        return np.where(zero, 1.0, np.expm1(xs) / xs)
    return np.expm1(x) / x


def _exp_sum_roots(b: np.ndarray, lam: np.ndarray, T: np.ndarray) -> np.ndarray:
    """Real roots in (0, T) of f(t) = Σ_i b_i·e^{λ_i t} (n terms), shape (..., n − 1), NaN where absent.

    Such a sum has at most n − 1 real roots (Laguerre's extension of Descartes'
    rule of signs; Pólya & Szegő, "Problems and Theorems in Analysis II", part V,
    problem 75). With λ₁ the largest exponent, g = e^{−λ₁t}·f has the roots of f
    and its derivative is an (n − 1)-term sum of the same kind, so the roots of
    g′ (found recursively) split (0, T) into intervals on which g is monotone;
    each holds at most one root, found by bisection to the last bit. Two terms
    have the closed form t = ln(−b₁/b₂)/(λ₂ − λ₁). Exponents λ_i − λ₁ ≤ 0 keep
    every exponential ≤ 1.
    """
    n = b.shape[-1]
    shape = np.broadcast_shapes(b.shape[:-1], lam.shape[:-1], np.shape(T))
    if n <= 1:
        return np.full(shape + (0,), np.nan)
    if n == 2:  # the closed form, symmetric in the two terms (no sort needed)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.log(-b[..., 0] / b[..., 1]) / (lam[..., 1] - lam[..., 0])
            ok = (lam[..., 0] != lam[..., 1]) & (t > 0) & (t < T)
        return np.broadcast_to(np.where(ok, t, np.nan), shape)[..., None]
    order = np.argsort(-lam, axis=-1)
    lam = np.take_along_axis(np.broadcast_to(lam, shape + (n,)), np.broadcast_to(order, shape + (n,)), -1)
    b = np.take_along_axis(np.broadcast_to(b, shape + (n,)), np.broadcast_to(order, shape + (n,)), -1)
    b1, c, mu = b[..., 0], b[..., 1:], lam[..., 1:] - lam[..., :1]
    T = np.broadcast_to(T, shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        if n == 2:
            t = np.log(-b1 / c[..., 0]) / mu[..., 0]
            ok = (mu[..., 0] < 0) & (t > 0) & (t < T)
            return np.where(ok, t, np.nan)[..., None]

    def g(t):
        return b1[..., None] + np.sum(c[..., None, :] * np.exp(mu[..., None, :] * t[..., None]), axis=-1)

    crit = _exp_sum_roots(c * mu, mu, T)
    edges = np.sort(np.concatenate([np.zeros(shape + (1,)), np.where(np.isnan(crit), T[..., None], crit),
                                    T[..., None]], axis=-1), axis=-1)
    lo, hi = edges[..., :-1], edges[..., 1:]
    g_lo, g_hi = g(lo), g(hi)
    has = np.sign(g_lo) * np.sign(g_hi) < 0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        g_mid = g(mid)
        left = np.sign(g_mid) == np.sign(g_lo)
        lo = np.where(left, mid, lo)
        g_lo = np.where(left, g_mid, g_lo)
        hi = np.where(left, hi, mid)
    return np.where(has, 0.5 * (lo + hi), np.nan)


def _solve_checked(A: np.ndarray, B: np.ndarray, cond_max: float, problem: str) -> np.ndarray:
    """A⁻¹·B over leading batch dimensions; DesignError(problem) when any A has a 1-norm
    condition number above cond_max (cheaper than the SVD condition number over a batch,
    and within a factor n of it)."""
    try:
        inv = np.linalg.inv(A)
    except np.linalg.LinAlgError:
        raise DesignError("network", problem) from None
    cond = np.abs(A).sum(axis=-2).max(axis=-1) * np.abs(inv).sum(axis=-2).max(axis=-1)
    if not np.all(cond <= cond_max):
        raise DesignError("network", problem)
    return inv @ B


def _modal_maps(modes, nx: int, nu: int, d: np.ndarray, integrals: bool = True):
    """E and S of every phase from the modes (:attr:`Network.modes`) for durations d (..., P).

    ``integrals=False`` skips S (None): the modal solution integrates from the modes directly.
    """
    lam, V, Vinv, VN = modes
    t = d[..., None]
    x = lam * t  # (..., P, nx)
    e = np.exp(x)
    nz = nx + nu
    shape = np.broadcast_shapes(lam.shape[:-1], d.shape)
    iu = np.arange(nx, nz)
    E = np.zeros(shape + (nz, nz))
    E[..., :nx, :nx] = (V * e[..., None, :]) @ Vinv
    E[..., iu, iu] = 1.0
    f1, f2 = _phi(x, second=integrals)
    if not integrals:
        E[..., :nx, nx:] = (V * (f1 * t)[..., None, :]) @ VN
        return E, None
    p1 = f1 * t
    p2 = f2 * t * t
    E[..., :nx, nx:] = (V * p1[..., None, :]) @ VN
    S = np.zeros(shape + (nz, nz))
    S[..., :nx, :nx] = (V * p1[..., None, :]) @ Vinv
    S[..., :nx, nx:] = (V * p2[..., None, :]) @ VN
    S[..., iu, iu] = d[..., None]
    return E, S


def _all_above(x, lo: float, strict: bool) -> bool:
    """Whether every value of x is > lo (``strict``) or ≥ lo; plain floats skip numpy."""
    if type(x) in (float, int):
        return x > lo if strict else x >= lo
    a = np.asarray(x)
    return bool(np.all(a > lo) if strict else np.all(a >= lo))


def _stack_values(vals, shape: tuple) -> np.ndarray:
    """Element values as one array of shape (*shape, len(vals)); plain floats skip numpy's broadcasting."""
    if shape == ():
        return np.array([float(v) for v in vals], dtype=float)
    return np.stack([np.broadcast_to(np.asarray(v, dtype=float), shape) for v in vals], axis=-1)


@dataclass(frozen=True)
class _Stamps:
    """Value-independent nodal analysis of every phase of one topology (see :func:`_stamps`).

    Y0 (P, n, n) and R0 (P, n, n_z): the MNA matrix without the branch resistances and the
    right-hand side per phase, padded to one size n with identity rows (``real`` marks the
    phase's own unknowns); ``res_p``, ``res_row``, ``res_val``: where each branch resistance
    goes (phase, row) and which element value it is (capacitor ESRs and resistances in element
    order); ``k_rows`` (P, n_probes): each probe's row in [W; 0; I_{n_z}]; ``cap_rows`` (P, n_x):
    each capacitor's branch-current row of W.
    """

    size: int
    Y0: np.ndarray
    R0: np.ndarray
    real: np.ndarray
    res_p: np.ndarray
    res_row: np.ndarray
    res_val: np.ndarray
    k_rows: np.ndarray
    cap_rows: np.ndarray


_STAMPS: dict = {}


def _stamps(topology: tuple) -> _Stamps:
    """The nodal analysis's structure for a :attr:`Network._topology` (cached: networks of one
    topology differ only in element values).

    Every capacitor (x in series with its ESR), closed switch or resistor and voltage source
    has a branch-current unknown, so currents are solved for directly: no 1/R stamps and no
    (v_a − v_b − x)/ESR differences, which lose digits for small ESR or R. A node group that
    nothing ties to the reference in a phase gets a zero-current anchor (module notes).
    """
    hit = _STAMPS.get(topology)
    if hit is not None:
        return hit
    els, inputs, P = topology
    seen: dict = {}
    for _, _, a, b, _, _ in els:
        for nd in (a, b):
            if nd != GROUND:
                seen.setdefault(nd, None)
    nodes = tuple(seen)
    idx = {nd: i for i, nd in enumerate(nodes)}
    nn = len(nodes)
    caps = [e for e in els if e[0] == "Cap"]
    nx, nu = len(caps), len(inputs)
    n_z = nx + nu
    cap_idx = {e[1]: i for i, e in enumerate(caps)}
    inp = {nm: i for i, nm in enumerate(inputs)}
    val_idx = {}
    for e in els:
        if e[0] in ("Cap", "Res"):
            val_idx[e[1]] = len(val_idx)
    per_phase = []
    for p in range(P):
        parent = {nd: nd for nd in nodes + (GROUND,)}

        def find(nd):
            while parent[nd] != nd:
                parent[nd] = parent[parent[nd]]
                nd = parent[nd]
            return nd

        def union(a, b):
            parent[find(a)] = find(b)

        branches = []  # (a, b, kind, ref, value index or None)
        for kind_e, name, a, b, closed, inp_name in els:
            if kind_e == "Cap":
                union(a, b)
                branches.append((a, b, "x", cap_idx[name], val_idx[name]))
            elif kind_e == "Res":
                if closed is None or p in closed:
                    union(a, b)
                    branches.append((a, b, "r", name, val_idx[name]))
            elif kind_e == "VSrc":
                union(a, b)
                branches.append((a, b, "u", inp[inp_name], None))
        groups: dict = {}
        for nd in nodes:
            groups.setdefault(find(nd), []).append(nd)
        g_root = find(GROUND)
        for root, members in groups.items():
            if root == g_root:
                continue
            ms = set(members)
            for kind_e, name, a, b, _, _ in els:
                if kind_e == "ISrc" and ((a in ms) != (b in ms)):
                    raise DesignError(f"network.{name}", f"in phase {p} the current source feeds nodes "
                                      f"{sorted(ms)} that nothing else connects to the reference")
            branches.append((members[0], GROUND, "0", 0, None))
        per_phase.append(branches)
    n = nn + max((len(br) for br in per_phase), default=0) if nn else 0
    Y0 = np.zeros((P, n, n))
    R0 = np.zeros((P, n, n_z))
    real = np.zeros((P, n), bool)
    res_p, res_row, res_val = [], [], []
    names = ([f"v({nd})" for nd in nodes] + [f"i({e[1]})" for e in els] + [f"x({e[1]})" for e in caps])
    zero_row, unit0 = n, n + 1
    k_rows = np.full((P, len(names)), zero_row, dtype=np.intp)
    cap_rows = np.zeros((P, nx), dtype=np.intp)
    for p, branches in enumerate(per_phase):
        if not n:
            break
        nj = len(branches)
        real[p, :nn + nj] = True
        for i in range(nn + nj, n):
            Y0[p, i, i] = 1.0  # padding: an unknown of its own, solved as 0
        for kind_e, name, a, b, _, inp_name in els:
            if kind_e == "ISrc":
                k = nx + inp[inp_name]
                if a != GROUND:
                    R0[p, idx[a], k] -= 1.0
                if b != GROUND:
                    R0[p, idx[b], k] += 1.0
        jrow = {}
        for j, (a, b, kind, ref, vi) in enumerate(branches):
            r = nn + j
            jrow[(kind, ref)] = r
            if a != GROUND:
                Y0[p, idx[a], r] += 1.0
                Y0[p, r, idx[a]] += 1.0
            if b != GROUND:
                Y0[p, idx[b], r] -= 1.0
                Y0[p, r, idx[b]] -= 1.0
            if vi is not None:  # v_a − v_b − R·i = x (capacitor) or 0
                res_p.append(p)
                res_row.append(r)
                res_val.append(vi)
            if kind == "x":
                R0[p, r, ref] = 1.0
            elif kind == "u":
                R0[p, r, nx + ref] = 1.0
        k_rows[p, :nn] = np.arange(nn)
        for i, (kind_e, name, a, b, closed, inp_name) in enumerate(els):
            if kind_e == "Res":
                if closed is None or p in closed:
                    k_rows[p, nn + i] = jrow[("r", name)]
            elif kind_e == "Cap":
                k_rows[p, nn + i] = cap_rows[p, cap_idx[name]] = jrow[("x", cap_idx[name])]
            elif kind_e == "VSrc":
                k_rows[p, nn + i] = jrow[("u", inp[inp_name])]
            else:
                k_rows[p, nn + i] = unit0 + nx + inp[inp_name]
        for k in range(nx):
            k_rows[p, nn + len(els) + k] = unit0 + k
    out = _Stamps(size=n, Y0=Y0, R0=R0, real=real, res_p=np.array(res_p, np.intp),
                  res_row=np.array(res_row, np.intp), res_val=np.array(res_val, np.intp), k_rows=k_rows,
                  cap_rows=cap_rows)
    for a in (Y0, R0, real, k_rows, cap_rows):
        a.flags.writeable = False
    if len(_STAMPS) > 256:
        _STAMPS.clear()
    _STAMPS[topology] = out
    return out


def _solve_phases(Y: np.ndarray, R: np.ndarray, real: np.ndarray, cond_max: float, problem: str) -> np.ndarray:
    """Y⁻¹·R for every phase (axis −3) over leading batch dimensions, in one batched inversion.

    ``real`` (P, n) marks each phase's own unknowns; the rest are identity padding, left out of
    the 1-norm condition number (of the phase's own block, as :func:`_solve_checked`). Raises
    DesignError("phase p " + problem) for the first phase whose matrix is singular or whose
    condition number exceeds ``cond_max``.
    """
    try:
        inv = np.linalg.inv(Y)
    except np.linalg.LinAlgError:
        inv = None
    if inv is not None:
        m = real[:, None, :]  # (P, 1, n): sum over rows, keep the phase's own columns
        cond = (np.where(m, np.abs(Y).sum(axis=-2)[..., None, :], 0.0).max(axis=-1)
                * np.where(m, np.abs(inv).sum(axis=-2)[..., None, :], 0.0).max(axis=-1))[..., 0]  # (..., P)
        bad = ~(cond <= cond_max)
    if inv is not None and not bad.any():
        return inv @ R
    # some phase is singular or ill-conditioned (or only its padded form is, by rounding): phase by phase
    W = np.zeros(np.broadcast_shapes(Y.shape[:-2], R.shape[:-2]) + R.shape[-2:])
    for p in range(Y.shape[-3]):
        sel = real[p]
        W[..., p, sel, :] = _solve_checked(Y[..., p, :, :][..., sel, :][..., :, sel], R[p][sel], cond_max,
                                           f"phase {p} {problem}")
    return W

@dataclass(frozen=True)
class Network:
    """A linear switched-capacitor network with a fixed cycle of phases.

    Parameters
    ----------
    elements : sequence of Cap, Res, VSrc, ISrc
    inputs : sequence of str
        Names of the inputs (source voltages [V] and load currents [A]), in the
        order the input vector ``u`` uses.
    n_phases : int
        Phases per cycle.

    Examples
    --------
    Two capacitors joined by a resistor share their charge:

    >>> net = Network([Cap("c1", "a", "0", 1e-6), Cap("c2", "b", "0", 1e-6),
    ...                Res("r", "a", "b", 1.0)], inputs=(), n_phases=1)
    >>> x, _ = net.propagate([1.0, 0.0], [], [1e-3])
    >>> [round(float(v), 6) for v in x]
    [0.5, 0.5]
    """

    elements: tuple
    inputs: tuple = ()
    n_phases: int = 1

    def __post_init__(self):
        object.__setattr__(self, "elements", tuple(self.elements))
        object.__setattr__(self, "inputs", tuple(self.inputs))
        names = [e.name for e in self.elements]
        if len(set(names)) != len(names):
            raise DesignError("network", "element names must be unique", names)
        if not isinstance(self.n_phases, int) or self.n_phases < 1:
            raise DesignError("network.n_phases", "expected a whole number \u2265 1", self.n_phases)
        for e in self.elements:
            if e.a == e.b:
                raise DesignError(f"network.{e.name}", "both terminals on the same node", e.a)
            if isinstance(e, Cap) and not (_all_above(e.c, 0.0, True) and _all_above(e.esr, 0.0, False)):
                raise DesignError(f"network.{e.name}", "expected c > 0 F and esr \u2265 0 \u03a9", (e.c, e.esr))
            if isinstance(e, Res) and not _all_above(e.r, 0.0, True):
                raise DesignError(f"network.{e.name}", "expected r > 0 \u03a9", e.r)
            if isinstance(e, (VSrc, ISrc)) and e.input not in self.inputs:
                raise DesignError(f"network.{e.name}", f"input not declared; inputs: {self.inputs}", e.input)

    # ------------------------------------------------------------------ structure
    @cached_property
    def nodes(self) -> tuple:
        """Non-reference node names in first-use order."""
        seen: dict = {}
        for e in self.elements:
            for n in (e.a, e.b):
                if n != GROUND:
                    seen.setdefault(n, None)
        return tuple(seen)

    @cached_property
    def caps(self) -> tuple:
        """The capacitors, in state order."""
        return tuple(e for e in self.elements if isinstance(e, Cap))

    @property
    def n_x(self) -> int:
        return len(self.caps)

    @property
    def n_u(self) -> int:
        return len(self.inputs)

    @cached_property
    def probes(self) -> dict:
        """Probe name → row of K: ``v(node)``, ``i(element)`` and ``x(capacitor)`` (its ideal-C voltage)."""
        names = ([f"v({n})" for n in self.nodes] + [f"i({e.name})" for e in self.elements]
                 + [f"x({c.name})" for c in self.caps])
        return {n: i for i, n in enumerate(names)}

    def probe_index(self, names) -> np.ndarray:
        try:
            return np.array([self.probes[n] for n in names], dtype=int)
        except KeyError as e:
            raise DesignError("probe", f"unknown probe; known: {', '.join(self.probes)}", e.args[0]) from None

    @cached_property
    def systems(self) -> tuple:
        """One :class:`PhaseSystem` per phase."""
        F, K = self._FK
        return tuple(PhaseSystem(F=F[..., p, :, :], K=K[..., p, :, :]) for p in range(self.n_phases))

    def _shape_of(self, resistive_only: bool) -> tuple:
        vals = []
        for e in self.elements:
            if isinstance(e, Cap):
                vals += [e.esr] if resistive_only else [e.c, e.esr]
            elif isinstance(e, Res):
                vals.append(e.r)
        if all(type(v) in (float, int) for v in vals):
            return ()
        try:
            return np.broadcast_shapes(*(np.shape(v) for v in vals))
        except ValueError:
            raise DesignError("network", "element values of a batch must broadcast to one shape",
                              [np.shape(v) for v in vals]) from None

    @cached_property
    def batch_shape(self) -> tuple:
        """Common shape of the element values (``()`` for one network; see the module notes)."""
        return self._shape_of(False)

    @cached_property
    def _g_shape(self) -> tuple:
        """Shape of the resistances alone: the nodal analysis is done once per distinct resistive network."""
        return self._shape_of(True)

    @cached_property
    def _F(self) -> np.ndarray:
        return self._FK[0]

    def stacked(self, rows=None) -> tuple[np.ndarray, np.ndarray]:
        """F of every phase, shape (*batch, P, n_z, n_z), and K's ``rows`` (all if None), (*batch, P, m, n_z)."""
        F, K = self._FK
        return F, (K if rows is None else K[..., rows, :])

    def probe_rows(self, names) -> np.ndarray:
        """K's rows of the named probes, shape (*batch, P, m, n_z) (kept per list of names: an evaluation asks
        for the same few lists many times)."""
        key = tuple(names)
        hit = self._rows_cache.get(key)
        if hit is None:
            hit = self._FK[1][..., self.probe_index(key), :]
            hit.flags.writeable = False  # shared by every caller
            self._rows_cache[key] = hit
        return hit

    @cached_property
    def _rows_cache(self) -> dict:
        return {}

    @cached_property
    def _FK(self) -> tuple[np.ndarray, np.ndarray]:
        """State matrices F (*batch, P, n_z, n_z) and probe matrices K (*g, P, n_probes, n_z) of every phase.

        The value-independent part of the nodal analysis (:func:`_stamps`, shared by every
        network of the same topology) is filled with this network's resistances, and the
        phases' systems are solved in one batched inversion (each phase padded to one size
        by identity rows, which leave its own block and its solution unchanged).
        """
        st = _stamps(self._topology)
        nx, nz, P, n = self.n_x, self.n_x + self.n_u, self.n_phases, st.size
        bs = self._g_shape
        if n:
            Y = np.array(np.broadcast_to(st.Y0, bs + st.Y0.shape))
            if st.res_p.size:
                v = _stack_values([e.esr if isinstance(e, Cap) else e.r for e in self.elements
                                   if isinstance(e, (Cap, Res))], bs)
                Y[..., st.res_p, st.res_row, st.res_row] = -v[..., st.res_val]
            W = _solve_phases(Y, st.R0, st.real, 1e13, "has a loop of capacitors without ESR and voltage "
                              "sources with no resistance in it (no unique solution)")
        else:
            W = np.zeros(bs + (P, 0, nz))
        ext = np.concatenate([W, np.zeros(bs + (P, 1, nz)), np.broadcast_to(np.eye(nz), bs + (P, nz, nz))],
                             axis=-2)
        ph = np.arange(P)[:, None]
        K = ext[..., ph, st.k_rows, :]  # (*g, P, n_probes, n_z)
        F = np.zeros(self.batch_shape + (P, nz, nz))
        if nx:
            icap = W[..., ph, st.cap_rows, :]  # (*g, P, nx, n_z)
            F[..., :nx, :] = icap / self._c[..., None, :, None]
        return F, K

    @cached_property
    def _c(self) -> np.ndarray:
        """Capacitances in state order, shape (*batch, n_x) [F]."""
        return _stack_values([e.c for e in self.caps], self.batch_shape)

    @cached_property
    def _topology(self) -> tuple:
        """The network without its element values: what the nodal analysis's structure depends on."""
        els = tuple((type(e).__name__, e.name, e.a, e.b, getattr(e, "closed", None), getattr(e, "input", None))
                    for e in self.elements)
        return els, self.inputs, self.n_phases

    # ------------------------------------------------------------------ maps
    def phase_maps(self, durations, *, method: str = "auto", integrals: bool = True):
        """Exact transition and integral matrices of every phase.

        Parameters
        ----------
        durations : array_like, shape (..., n_phases) [s]
            Broadcasts against the network's :attr:`batch_shape`.
        method : {"auto", "modal", "expm"}
            ``"modal"``: closed form through the eigen-decomposition of the
            state matrix (see :meth:`modes`); ``"expm"``: Van Loan's block
            matrix exponential (scipy); ``"auto"``: modal when the state matrix
            is that of a reciprocal RC network (always, for networks of this
            module), else expm.
        integrals : bool
            False: the modal form skips S and returns None for it (its solutions
            integrate from the modes directly); expm returns S regardless.

        Returns
        -------
        E : ndarray, shape (..., n_phases, n_z, n_z)
            z(t_p) = E_p·z(0) within phase p (e^{F_p t_p}).
        S : ndarray, shape (..., n_phases, n_z, n_z), or None
            ∫_0^{t_p} z ds = S_p·z(0).
        """
        d = np.asarray(durations, dtype=float)
        if d.shape[-1:] != (self.n_phases,):
            raise DesignError("durations", f"expected {self.n_phases} phase durations", d.shape)
        if np.any(d < 0) or not np.all(np.isfinite(d)):
            raise DesignError("durations", "phase durations must be finite and \u2265 0 s")
        if method not in ("auto", "modal", "expm"):
            raise DesignError("method", "expected 'auto', 'modal' or 'expm'", method)
        modes = None if method == "expm" else self.modes
        if method == "modal" and modes is None:
            raise DesignError("method", "the state matrix is not that of a reciprocal RC network", method)
        if modes is not None:
            return _modal_maps(modes, self.n_x, self.n_u, d, integrals)
        nz = self.n_x + self.n_u
        Fs = self._F  # (*batch, P, nz, nz)
        shape = np.broadcast_shapes(Fs.shape[:-2], d.shape)
        A = np.zeros(shape + (2 * nz, 2 * nz))
        A[..., :nz, :nz] = Fs * d[..., None, None]
        A[..., :nz, nz:] = np.eye(nz) * d[..., None, None]
        B = _expm(A)
        return B[..., :nz, :nz], B[..., :nz, nz:]

    @cached_property
    def modes(self):
        """Eigen-decomposition of every phase's state matrix M (dx/dt = M·x + N·u), or None.

        The capacitor currents of a reciprocal resistive network are i = −G·x + …
        with G symmetric positive semi-definite, so M = −C⁻¹·G and
        C^½·M·C^−½ is symmetric: its eigenvalues λ are real and ≤ 0 and its
        eigenvectors orthonormal (no defective case). With M = V·Λ·V⁻¹ each phase
        has the closed forms e^{Mt} = V·e^{Λt}·V⁻¹,
        ∫_0^t e^{Ms} ds = V·φ₁(Λ, t)·V⁻¹ and ∫_0^t∫_0^s e^{Mr} dr ds = V·φ₂(Λ, t)·V⁻¹
        with φ₁ = (e^{λt} − 1)/λ and φ₂ = (e^{λt} − 1 − λt)/λ² (series near λt = 0).
        Returns (λ, V, V⁻¹, V⁻¹·N) stacked (*batch, P, …), or None when the
        symmetry does not hold to 1e-9 (then :meth:`phase_maps` uses expm).
        """
        nx = self.n_x
        F = self._F
        M = F[..., :nx, :nx]
        N = F[..., :nx, nx:]
        c = self._c[..., None, :] if nx else np.ones(self.batch_shape + (1, 0))
        sq = np.sqrt(c)  # (*batch, 1, nx)
        Ms = sq[..., :, None] * M / sq[..., None, :]
        asym = np.abs(Ms - np.swapaxes(Ms, -1, -2)).max(initial=0.0)
        if asym > 1e-9 * max(np.abs(Ms).max(initial=0.0), 1e-300):
            return None
        lam, Q = np.linalg.eigh(0.5 * (Ms + np.swapaxes(Ms, -1, -2)))
        V = Q / sq[..., :, None]
        Vinv = np.swapaxes(Q, -1, -2) * sq[..., None, :]
        return lam, V, Vinv, Vinv @ N

    def propagate(self, x0, u, durations):
        """States after running the phases once from ``x0`` (a cycle, or part of one).

        ``durations`` lists the time spent in phases 0, 1, …; fewer than
        ``n_phases`` entries stop early. Returns (x_end, per-phase end states).
        """
        d = np.zeros(self.n_phases)
        d[:len(durations)] = durations
        E, _ = self.phase_maps(d)
        z = np.concatenate([np.asarray(x0, float), np.asarray(u, float)])
        ends = []
        for p in range(len(durations)):
            z = E[p] @ z
            ends.append(z[:self.n_x].copy())
        return z[:self.n_x], ends


def cycle_map(net: Network, durations, *, integrals: bool = True):
    """One-cycle map of the augmented state: z_{k+1} = E_tot·z_k (batched over durations).

    Returns (E, S, E_tot) with E and S from :meth:`Network.phase_maps` (``integrals``
    as there) and E_tot = E_{P−1}·…·E_0.
    """
    E, S = net.phase_maps(durations, integrals=integrals)
    tot = E[..., 0, :, :]
    for p in range(1, net.n_phases):
        tot = E[..., p, :, :] @ tot
    return E, S, tot


# --------------------------------------------------------------------------- steady state

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

        Fx = net._F[..., :nx, :]  # dx/dt = Fx·[x; u]
        x0, u = self.z0[..., :nx], self.z0[..., nx:]
        t = self.durations[..., None]  # (..., P, 1)
        lt = lam * t
        fast = np.abs(lt) > 1.0
        lam_f = np.where(fast, lam, 1.0)
        xr = mv(V, np.where(fast, -mv(VN, u) / lam_f, mv(Vinv, x0)))
        # one step of iterative refinement of the fast modes' equilibrium
        xr = xr - mv(V, np.where(fast, mv(Vinv, mv(Fx, np.concatenate([xr, u], axis=-1))) / lam_f, 0.0))
        zr = np.concatenate([xr, u], axis=-1)
        f1, f2 = _phi(lt)
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

        Returns (t, y) with t shape (..., P·(n+1)) [s] and y shape (..., m, P·(n+1)).
        """
        K = self._K(names)
        d = self.durations
        frac = np.linspace(0.0, 1.0, n + 1).reshape((n + 1,) + (1,) * d.ndim)
        # every sample instant's exact phase map at once (not n steps of one map), the instants on a
        # leading axis so that they broadcast with the network's batch: (n+1, ..., P, nz, nz)
        Es, _ = self.net.phase_maps(frac * d, integrals=False)
        Z = np.moveaxis((Es @ self.z0[..., None])[..., 0], 0, -2)  # (..., P, n+1, nz)
        y = np.swapaxes(K @ np.swapaxes(Z, -1, -2), -2, -3)  # (..., m, P, n+1)
        t0 = np.concatenate([np.zeros(d.shape[:-1] + (1,)), np.cumsum(d, axis=-1)[..., :-1]], axis=-1)
        t = t0[..., :, None] + d[..., :, None] * np.linspace(0.0, 1.0, n + 1)
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
        :func:`_exp_sum_roots`) and the phase's two ends are the only candidates.
        Both ends of each phase count (a probe may step at a switching instant).
        """
        lo, hi = self.phase_extrema(names)
        return lo.min(axis=-2), hi.max(axis=-2)

    def phase_extrema(self, names) -> tuple[np.ndarray, np.ndarray]:
        """Exact lowest and highest value of each probe within each phase, each of shape (..., P, m).

        The method of :meth:`extrema`, before the phases are combined.
        """
        net = self.net
        modes = net.modes
        if modes is None:
            raise DesignError("network", "exact extrema need the modal form of a reciprocal RC network")
        lam, V, Vinv, VN = modes
        nx = net.n_x
        K = self._K(names)
        x0 = self.z0[..., :nx]
        u = self.z0[..., 0, None, nx:, None]  # (..., 1, n_u, 1): matrix products below, not einsum
        w = (Vinv @ x0[..., None])[..., 0]  # (..., P, nx)
        gv = (VN @ u)[..., 0]
        k = K[..., :nx] @ V  # (..., P, m, nx)
        ku = (K[..., nx:] @ u)[..., 0]  # (..., P, m)
        b = k * (lam * w + gv)[..., None, :]
        d = self.durations
        roots = _exp_sum_roots(b, lam[..., None, :], d[..., None])
        # the phase's two ends do not depend on the probe: their modal states once per phase
        xd = lam * d[..., None]  # (..., P, nx)
        end = np.exp(xd) * w + _phi1(xd) * d[..., None] * gv
        y0 = (k @ w[..., None])[..., 0] + ku
        y1 = (k @ end[..., None])[..., 0] + ku
        lo, hi = np.minimum(y0, y1), np.maximum(y0, y1)
        if roots.shape[-1]:
            t = np.where(np.isnan(roots), 0.0, roots)  # an absent root repeats the phase start
            x = lam[..., None, None, :] * t[..., None]  # (..., P, m, c, nx)
            modal = np.exp(x) * w[..., None, None, :] + _phi1(x) * t[..., None] * gv[..., None, None, :]
            y = (modal @ k[..., None])[..., 0] + ku[..., None]
            lo, hi = np.minimum(lo, y.min(axis=-1)), np.maximum(hi, y.max(axis=-1))
        return lo, hi

    def at_phase_ends(self, names) -> np.ndarray:
        """Each probe at the end of each phase (just before the switching), shape (..., m, P)."""
        zend = np.einsum("...pij,...pj->...pi", self.E, self.z0)
        return np.einsum("...pmj,...pj->...mp", self._K(names), zend)


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
    k = int(max(0, np.ceil(np.log2(max(float((norm * d).max(initial=0.0)), 1e-300) / 0.25))))
    h = d / 2.0 ** k
    H = np.zeros(d.shape + (2 * nz, 2 * nz))
    H[..., :nz, :nz] = F * h[..., None, None]
    H[..., :nz, nz:] = np.einsum("...i,...j->...ij", z0, z0) * h[..., None, None]
    H[..., nz:, nz:] = -np.swapaxes(F, -1, -2) * h[..., None, None]
    B = _expm(H)
    E = B[..., :nz, :nz]
    G = B[..., :nz, nz:] @ np.swapaxes(E, -1, -2)  # ∫_0^h e^{Fs} z zᵀ e^{Fᵀs} ds
    for _ in range(k):
        G = G + E @ G @ np.swapaxes(E, -1, -2)
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
    nx = net.n_x
    u = np.asarray(u, dtype=float)
    d = np.asarray(durations, dtype=float)
    u = np.broadcast_to(u, np.broadcast_shapes(d.shape[:-1], net.batch_shape, u.shape[:-1]) + (net.n_u,))
    Phi = tot[..., :nx, :nx]
    Gam = tot[..., :nx, nx:]
    A = np.eye(nx) - Phi
    if nx:
        x0 = _solve_checked(A, Gam @ u[..., None], 1e12, "the cycle has no unique periodic steady state "
                            "(a capacitor's charge is never changed by any phase)")[..., 0]
    else:
        x0 = np.zeros(u.shape[:-1] + (0,))
    z = np.concatenate([x0, u], axis=-1)
    zs = []
    for p in range(net.n_phases):
        zs.append(z)
        z = np.einsum("...ij,...j->...i", E[..., p, :, :], z)
    return PeriodicSolution(net=net, durations=np.broadcast_to(d, u.shape[:-1] + d.shape[-1:]),
                            z0=np.stack(zs, axis=-2), E=E, S=S)


# --------------------------------------------------------------------------- start-up

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


def _start_target(Phi: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The state x_ss = Φ·x_ss + b the recurrence tends to (any consistent one when Φ has an eigenvalue 1)."""
    nx = Phi.shape[0]
    A = np.eye(nx) - Phi
    if nx and np.linalg.cond(A) > 1e12:
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
    if np.linalg.cond(V) < 1e8:
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
    xss = _start_target(Phi, Gam @ u)
    xk = xss[None, :] + _powers_apply(Phi, x0 - xss, k)
    z = np.concatenate([xk, np.broadcast_to(u, (k.size, u.size))], axis=1)
    zs = []
    for p in range(net.n_phases):
        zs.append(z)
        z = z @ E[p].T
    return StartupSolution(net=net, durations=np.asarray(durations, float), z_start=np.stack(zs, axis=1), E=E, S=S)


#: Cycles beyond which start-up is not followed (2⁵³: the last count a float holds exactly).
MAX_STARTUP_CYCLES = 2 ** 53
#: Subintervals per split of the cycle-range search in :class:`StartupTransient`.
_SPLIT = 8
#: Most real modes bounded by corner states in that search (2^n corners per range).
_CORNER_MODES = 3
#: Most open ranges per round of that search: beyond it :meth:`StartupTransient.extrema` returns its
#: bounds (conservative: never inside the true extremes) and :meth:`StartupTransient.first_reach`
#: defers the later ranges, so the work per round stays bounded.
_MAX_OPEN = 512
#: Cycles whose phase-boundary values the first pass of :meth:`StartupTransient.first_reach` scans at once.
_FIRST_PASS = 256
#: Most cycles whose exact in-cycle extrema that first pass evaluates; a later candidate goes to the search.
_FIRST_EXACT = 64


def _tangent_triangle(mu: np.ndarray, j: np.ndarray, mj: np.ndarray, box: np.ndarray) -> np.ndarray:
    """Corners, as fractions of S_i = 1 − μ_i^j, of a triangle holding the curve s_i(l) = 1 − μ_i^l, 0 ≤ l ≤ j.

    Two real modes μ₁, μ₂ ∈ (0, 1): the curve is a convex arc from 0 to S, so it
    lies in the triangle of its chord and its two end tangents (directions
    (−ln μ_i) at l = 0 and (−μ_i^j·ln μ_i) at l = j), whose corners are 0, S and
    the tangents' intersection P. Returns (n, 3, 2) rows [S, P, P] scaled by S,
    or the box's other corners ``box`` where the triangle is degenerate (equal
    rates, an open tail, μ at 0 or 1). Rates equal to 1e-9 give the chord alone.
    """
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        l_ = -np.log(mu)  # (2,)
        S = 1.0 - mj  # (n, 2)
        # P = t0·l = S − tj·(μ^j·l): solve [l, μ^j·l]·[t0, tj]ᵀ = S
        a11, a21 = l_[0], l_[1]
        a12, a22 = mj[:, 0] * l_[0], mj[:, 1] * l_[1]
        det = a11 * a22 - a12 * a21
        t0 = (S[:, 0] * a22 - S[:, 1] * a12) / det
        tj = (a11 * S[:, 1] - a21 * S[:, 0]) / det
        P = t0[:, None] * l_[None, :]
        frac = P / S
        ok = (np.isfinite(j) & np.all(np.isfinite(frac), axis=1) & (t0 >= 0) & (tj >= 0)
              & np.all(np.isfinite(l_)) & np.all(S > 0, axis=1) & (np.abs(det) > 1e-12 * np.abs(a11 * a22)))
        # equal rates (to 1e-9): the curve is the chord itself, s₂/S₂ = s₁/S₁
        same = np.isfinite(j) & bool(np.all(np.isfinite(l_)) and abs(l_[0] - l_[1]) <= 1e-9 * max(l_.max(), 1e-300))
    frac = np.where(same[:, None], 1.0, frac)
    ok = ok | same
    tri = np.stack([np.ones_like(frac), np.where(ok[:, None], frac, 0.0), np.where(ok[:, None], frac, 0.0)], axis=1)
    return np.where(ok[:, None, None], tri, box)


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
        self.xss = _start_target(Phi, tot[:nx, nx:] @ self.u)
        self.d0 = x0 - self.xss
        mu, W = np.linalg.eig(Phi) if nx else (np.zeros(0), np.zeros((0, 0)))
        self.modal = bool(nx == 0 or np.linalg.cond(W) < 1e8)
        if self.modal:
            mu = mu.astype(complex)
            # a pair split off the real axis by rounding only (|Im μ| ≤ 1e-12·|μ|): real
            self.mu = np.where(np.abs(mu.imag) <= 1e-12 * np.abs(mu), mu.real + 0j, mu)
            self.W = W.astype(complex)
            self.c = np.linalg.solve(self.W, self.d0.astype(complex)) if nx else np.zeros(0, complex)
            self._real = (np.abs(self.mu.imag) == 0) & (self.mu.real >= 0)
            slow = np.argsort(-np.abs(self.mu))
            self._corner = np.array([i for i in slow if self._real[i]][:_CORNER_MODES], dtype=int)
            rest = np.ones(nx, bool)
            rest[self._corner] = False
            self._rest = rest
        self._amp: dict = {}

    # ------------------------------------------------------------------ evaluation
    @cached_property
    def periodic(self) -> PeriodicSolution:
        """The periodic steady state the start-up tends to (one cycle from x_ss)."""
        return self._solution(self.xss[None, :], self.u)

    @property
    def settling_cycles(self) -> float:
        """Cycles per e-fold of the slowest decaying mode, −1/ln ρ with ρ the largest |μ_i| < 1 (0 if none)."""
        if not self.modal:
            r = float(np.max(np.abs(np.linalg.eigvals(self.Phi)), initial=0.0))
        else:
            m = np.abs(self.mu)
            r = float(np.max(m[m < 1.0], initial=0.0))
        return 0.0 if r <= 0.0 else -1.0 / math.log(r)

    @property
    def period(self) -> float:
        """Cycle time [s]."""
        return float(self.durations.sum())

    def states(self, cycles) -> np.ndarray:
        """Capacitor voltages x_k at the start of each cycle k, shape (len(cycles), n_x) [V]."""
        k = np.asarray(cycles, dtype=float).reshape(-1)
        if self.modal:
            mk = np.where(self._real, np.power(np.abs(self.mu.real)[None, :], k[:, None]),
                          np.power(self.mu[None, :], k[:, None]))
            return self.xss[None, :] + ((mk * self.c[None, :]) @ self.W.T).real
        return self.xss[None, :] + np.stack([np.linalg.matrix_power(self.Phi, int(kk)) @ self.d0 for kk in k])

    def _solution(self, x, u) -> PeriodicSolution:
        """Cycles starting from the states x (n, n_x) with inputs u, as a batch of one-cycle solutions."""
        x = np.asarray(x, float)
        z = np.concatenate([x, np.broadcast_to(u, (x.shape[0], self.net.n_u))], axis=1)
        zs = []
        for p in range(self.net.n_phases):
            zs.append(z)
            z = z @ self.E[p].T
        d = np.broadcast_to(self.durations, (x.shape[0], self.net.n_phases))
        return PeriodicSolution(net=self.net, durations=d, z0=np.stack(zs, axis=1), E=self.E, S=self.S)

    def cycles(self, cycles) -> PeriodicSolution:
        """The cycles k (any indices) as a batch of one-cycle solutions (phase-start states, integrals, extrema).

        Same closed form as :func:`startup` (x_k = x_ss + Φ^k·(x₀ − x_ss)), from the
        decomposition this object already holds.
        """
        return self._solution(self.states(cycles), self.u)

    def cycle_extrema(self, cycles, names) -> tuple[np.ndarray, np.ndarray]:
        """Exact lowest and highest value of each probe in each phase of each cycle, each (len(cycles), P, m)."""
        return self._solution(self.states(cycles), self.u).phase_extrema(names)

    def _amplitudes(self, names) -> np.ndarray:
        """A_i = max_t |α_i(t)| per mode, phase and probe (shape (n_modes, P, m)), or B per phase and probe
        (shape (P, m)) for the energy bound. Per phase, so that a probe that is zero in a phase (an open
        switch's current) has no deviation there."""
        key = tuple(names)
        if key in self._amp:
            return self._amp[key]
        net, nx = self.net, self.net.n_x
        if self.modal:
            v = self.c[:, None] * self.W.T  # row i: c_i·w_i
            lo, hi = self._solution(np.concatenate([v.real, v.imag]), np.zeros(net.n_u)).phase_extrema(names)
            a = np.maximum(np.abs(lo), np.abs(hi))
            amp = a[:nx] + a[nx:]
        else:
            cvals = np.array([float(c.c) for c in net.caps])
            K = net.stacked(net.probe_index(names))[1][..., :nx]  # (P, m, nx)
            amp = np.sqrt(((K / np.sqrt(cvals)) ** 2).sum(axis=-1))
        self._amp[key] = amp
        return amp

    def _deviation_bound(self, a: np.ndarray, b: np.ndarray, names) -> np.ndarray:
        """Bound on |y(k, t) − y(a, t)| over a ≤ k < b (b may be ∞, b > a) and t in each phase, (len(a), P, m)."""
        amp = self._amplitudes(names)
        j = b - 1.0 - a  # steps beyond a (∞ for the open tail)
        if not self.modal:
            cvals = np.array([float(c.c) for c in self.net.caps])
            sq = np.sqrt(cvals)
            phi_s = sq[:, None] * self.Phi / sq[None, :]
            g = np.linalg.norm(phi_s - np.eye(self.net.n_x), 2)
            n_a = np.linalg.norm((self.states(a) - self.xss) * sq, axis=-1)
            with np.errstate(invalid="ignore"):
                f = np.minimum(2.0, np.where(np.isinf(j), 2.0, j * g))
            return (n_a * f)[:, None, None] * amp[None]
        r = np.minimum(np.abs(self.mu), 1.0)
        with np.errstate(over="ignore", invalid="ignore"):
            ra = np.power(r[None, :], a[:, None])
            rj = np.power(r[None, :], np.where(np.isinf(j), 0.0, j)[:, None])
            rj = np.where(np.isinf(j)[:, None], np.where(r[None, :] < 1.0, 0.0, 1.0), rj)
            real_d = ra * (1.0 - rj)  # μ^a − μ^{b−1} for real μ in [0, 1]
            step = np.where(np.isinf(j)[:, None], np.inf, j[:, None] * np.abs(self.mu - 1.0)[None, :])
            gen_d = ra * np.minimum(np.nan_to_num(step, nan=np.inf), 1.0 + rj)
        dmode = np.where(self._real[None, :], real_d, gen_d) * self._rest[None, :]
        return np.einsum("ni,ipm->npm", dmode, amp)

    def _bounds(self, a: np.ndarray, b: np.ndarray, names, extra=None):
        """Each probe's extremes in each phase of cycle a, and bounds on them over a ≤ k < b.

        ``extra``: more cycle-start states (q, n_x) whose phase extrema are wanted too, solved in
        the same batch; then their (lo, hi), each (q, P, m), follow the four results.

        Returns (lo_a, hi_a, lo_bound, hi_bound), each of shape (len(a), P, m). A real mode
        μ_i ∈ [0, 1] moves the cycle-start state by −s_i·μ_i^a·c_i·w_i with s_i = 1 − μ_i^{k−a} in
        [0, 1 − μ_i^{b−1−a}], and a probe is linear in the state at every instant, so over the box
        of the s_i its extremes at each instant sit at the box's corners: the exact phase extrema
        from the 2^n corner states bound the range (for one mode, the corners are cycles a and
        b − 1). Other modes add :meth:`_deviation_bound`.
        """
        xa = self.states(a)
        n, nx = xa.shape
        if self.modal and self._corner.size:
            ci = self._corner
            mu = self.mu.real[ci]
            j = b - 1.0 - a
            with np.errstate(over="ignore", invalid="ignore"):
                mj = np.where(np.isinf(j)[:, None], np.where(mu[None, :] < 1.0, 0.0, 1.0),
                              np.power(mu[None, :], np.where(np.isinf(j), 0.0, j)[:, None]))
            shift = ((1.0 - mj) * np.power(mu[None, :], a[:, None]))[:, :, None] \
                * (self.c[ci, None] * self.W.T[ci]).real[None]  # (n, r, nx)
            sig = ((np.arange(2 ** ci.size)[:, None] >> np.arange(ci.size)[None, :]) & 1).astype(float)
            sig = np.broadcast_to(sig, (n,) + sig.shape).copy()  # (n, corners, r): s_i / S_i
            if ci.size == 2:
                sig[:, 1:] = _tangent_triangle(mu, j, mj, sig[:, 1:])
            x = xa[:, None, :] - np.einsum("ncr,nrx->ncx", sig, shift)  # corner 0 is x_a itself
            # each distinct corner state once: a one-cycle range has no shift (μ^0 = 1), so all its
            # corners are x_a; a tangent triangle lists its apex twice
            nc = sig.shape[1]
            same = np.zeros((n, nc), bool)  # corner equal to the one before it
            same[(b - a) <= 1.0, 1:] = True
            if nc > 3:
                same[:, 3] |= np.all(sig[:, 3] == sig[:, 2], axis=-1)
            xs = x[~same]
            if extra is not None:
                xs = np.concatenate([xs, extra])
            lo_r, hi_r = self._solution(xs, self.u).phase_extrema(names)
            if extra is not None:
                q = len(extra)
                lo_r, hi_r, lo_e, hi_e = lo_r[:-q], hi_r[:-q], lo_r[-q:], hi_r[-q:]
            lo = np.empty((n, nc) + lo_r.shape[1:])
            hi = np.empty((n, nc) + hi_r.shape[1:])
            lo[~same], hi[~same] = lo_r, hi_r
            for c in range(1, nc):
                lo[same[:, c], c] = lo[same[:, c], c - 1]
                hi[same[:, c], c] = hi[same[:, c], c - 1]
            lo_a, hi_a, lo_b, hi_b = lo[:, 0], hi[:, 0], lo.min(axis=1), hi.max(axis=1)
        else:
            xs = xa if extra is None else np.concatenate([xa, extra])
            lo_a, hi_a = self._solution(xs, self.u).phase_extrema(names)
            if extra is not None:
                lo_a, hi_a, lo_e, hi_e = lo_a[:n], hi_a[:n], lo_a[n:], hi_a[n:]
            lo_b, hi_b = lo_a, hi_a
        if not self.modal or self._rest.any():
            dev = self._deviation_bound(a, b, names)
            lo_b, hi_b = lo_b - dev, hi_b + dev
        if extra is not None:
            return lo_a, hi_a, lo_b, hi_b, lo_e, hi_e
        return lo_a, hi_a, lo_b, hi_b

    # ------------------------------------------------------------------ questions over all cycles
    @staticmethod
    def _split(a: np.ndarray, b: np.ndarray, extra=None) -> tuple[np.ndarray, np.ndarray]:
        """Split each range [a, b) into up to _SPLIT parts (and at the cycles ``extra`` (n, q) inside
        it); an open tail [a, ∞) into [a, a + 1), [a + 1, 8·(a + 1)) and [8·(a + 1), ∞)."""
        tail = np.isinf(b)
        at, af, bf = a[tail], a[~tail], b[~tail]
        e = np.round(af[:, None] + (bf - af)[:, None] * np.linspace(0.0, 1.0, _SPLIT + 1)[None, :])
        if extra is not None:
            x = np.clip(np.nan_to_num(np.floor(extra[~tail]), nan=0.0), af[:, None], bf[:, None])
            e = np.sort(np.concatenate([e, x], axis=1), axis=1)
        lo, hi = e[:, :-1].ravel(), e[:, 1:].ravel()
        ok = hi > lo
        lo = np.concatenate([lo[ok], at, at + 1.0, _SPLIT * (at + 1.0)])
        hi = np.concatenate([hi[ok], at + 1.0, _SPLIT * (at + 1.0), np.full(at.size, math.inf)])
        return lo, hi

    def _initial_ranges(self) -> tuple[np.ndarray, np.ndarray]:
        """Ranges [0, 1), [1, 2), [2, 4), …, [2^m, ∞) with 2^m beyond 64 e-folds of the slowest mode."""
        m = int(min(53, max(1, math.ceil(math.log2(64.0 * self.settling_cycles + 1.0)))))
        e = np.concatenate([[0.0], 2.0 ** np.arange(m + 1), [math.inf]])
        return e[:-1], e[1:]

    def extrema(self, names, *, rtol: float = 1e-9) -> tuple[np.ndarray, np.ndarray]:
        """Lowest and highest value of each probe over the whole start-up, each of shape (m,).

        The infimum and supremum over every cycle k ≥ 0 and every instant, the
        periodic steady state included (it is the limit k → ∞), to ``rtol`` of the
        probe's scale (its largest magnitude).
        """
        return self._search(list(names), rtol, peak=False)

    def peak(self, names, *, rtol: float = 1e-9) -> np.ndarray:
        """Largest magnitude |y| of each probe over the whole start-up (as :meth:`extrema`), shape (m,)."""
        lo, hi = self._search(list(names), rtol, peak=True)
        return np.maximum(hi, -lo)

    def _search(self, names, rtol: float, peak: bool):
        """Branch and bound over the cycle ranges (class notes) for the extremes or the peak magnitude."""
        a, b = self._initial_ranges()
        first = True
        while a.size:
            if first:  # the periodic steady state (the limit k → ∞) in the same batch as the first ranges
                lo, hi, lo_b, hi_b, lo_p, hi_p = self._bounds(a, b, names, extra=self.xss[None, :])
                lo_best, hi_best = lo_p[0].min(axis=0), hi_p[0].max(axis=0)
            else:
                lo, hi, lo_b, hi_b = self._bounds(a, b, names)  # (n, P, m)
            lo_best = np.minimum(lo_best, lo.min(axis=(0, 1)))
            hi_best = np.maximum(hi_best, hi.max(axis=(0, 1)))
            if first:  # the scale: the largest magnitude the start-up can reach
                tol = rtol * np.maximum(np.abs(lo_b).max(axis=(0, 1)), np.abs(hi_b).max(axis=(0, 1))) + 1e-300
                first = False
            if peak:
                top = np.maximum(hi_best, -lo_best)
                open_ = (np.maximum(hi_b, -lo_b) > top + tol).any(axis=(1, 2))
            else:
                open_ = ((hi_b > hi_best + tol) | (lo_b < lo_best - tol)).any(axis=(1, 2))
            keep = open_ & (b - a > 1.0) & (a < MAX_STARTUP_CYCLES)
            n_open = np.count_nonzero(keep)
            if n_open == 0:
                break
            if n_open > _MAX_OPEN:  # bounded work: settle for the (conservative) bounds
                lo_best = np.minimum(lo_best, lo_b[keep].min(axis=(0, 1)))
                hi_best = np.maximum(hi_best, hi_b[keep].max(axis=(0, 1)))
                break
            a, b = self._split(a[keep], b[keep])
        return lo_best, hi_best

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
        sgn = -1.0 if below else 1.0
        thr = sgn * float(threshold)
        k = self._first_pass(name, thr, sgn)
        if k is not None:
            k, ext = k
            return k, float(k * self.period + self._first_in_cycle(k, name, float(threshold), sgn, ext))
        best = math.inf
        a, b = self._initial_ranges()
        while a.size:
            lo, hi, lo_b, hi_b = self._bounds(a, b, [name])
            top = hi[..., 0] if sgn > 0 else -lo[..., 0]  # (n, P)
            top_b = hi_b[..., 0] if sgn > 0 else -lo_b[..., 0]
            hit = (top >= thr).any(axis=1)
            if hit.any():
                best = min(best, float(a[hit].min()))
            b = np.minimum(b, best)
            keep = ~hit & (b - a > 1.0) & (a < best) & (a < MAX_STARTUP_CYCLES) & (top_b >= thr).any(axis=1)
            a, b = a[keep], b[keep]
            guess = self._guess(a, top[keep], name, thr, sgn)
            if a.size > _MAX_OPEN:  # the earliest ranges first; the later ones wait (the first crossing is sought)
                order = np.argsort(a)
                a, b = a[order], b[order]
                wait_a, wait_b = a[_MAX_OPEN:], b[_MAX_OPEN:]
                a, b, guess = a[:_MAX_OPEN], b[:_MAX_OPEN], guess[order][:_MAX_OPEN]
            else:
                wait_a = wait_b = np.zeros(0)
            a, b = self._split(a, b, guess)
            a, b = np.concatenate([a, wait_a]), np.concatenate([b, wait_b])
        if math.isinf(best):
            return None, None
        k = int(best)
        t = k * self.period + self._first_in_cycle(k, name, float(threshold), sgn)
        return k, float(t)

    def _first_pass(self, name: str, thr: float, sgn: float):
        """(k, (lo, hi, z)): the first cycle whose exact extremes reach sgn·thr, its phase extrema (P, 1) each and
        its phase-start states (P, n_z), from a cheap scan of the first cycles, or None.

        A short start-up (tens of cycles) would pay the search's fixed cost many times
        over. The states at the starts of the first :data:`_FIRST_PASS` cycles come in one
        vectorised step (:meth:`states`) and the probe at every phase boundary with them;
        those values are among the candidates of the exact phase extrema, so the first cycle
        in which one reaches the threshold bounds the answer from above. The exact in-cycle
        extrema of that cycle and every earlier one (at most :data:`_FIRST_EXACT`) then give
        the first cycle that reaches it, as the search would. None (the search decides) when
        no boundary value reaches it in the scan, the candidate is later than that, or rounding
        lets the exact extrema disagree with the boundary values.
        """
        if self.settling_cycles <= 0.0 and not self.modal:
            return None
        k = np.arange(_FIRST_PASS, dtype=float)
        z = self._solution(self.states(k), self.u).z0  # (n, P, n_z)
        K = self.net.probe_rows([name])[:, 0, :]  # (P, n_z)
        y0 = (z * K).sum(axis=-1)  # (n, P)
        y1 = (z * (K[:, None, :] @ self.E)[:, 0, :]).sum(axis=-1)  # K·E_p·z
        cand = np.flatnonzero((np.maximum(sgn * y0, sgn * y1) >= thr).any(axis=1))
        if cand.size == 0 or cand[0] >= _FIRST_EXACT:
            return None
        zc = z[:cand[0] + 1]
        lo, hi = PeriodicSolution(net=self.net, durations=np.broadcast_to(self.durations, zc.shape[:2]), z0=zc,
                                  E=self.E, S=self.S).phase_extrema([name])
        top = hi[..., 0] if sgn > 0 else -lo[..., 0]  # (n, P)
        hit = np.flatnonzero((top >= thr).any(axis=1))
        if not hit.size:
            return None
        h = int(hit[0])
        return h, (lo[h], hi[h], zc[h])

    def _guess(self, a: np.ndarray, top: np.ndarray, name: str, thr: float, sgn: float) -> np.ndarray:
        """Cycles near the predicted crossing after each a, shape (len(a), 4), to split the ranges at.

        Only a guide for the search (the bounds decide): with the slowest mode μ alone, the
        phase maximum tends to its steady-state value f_∞ as f_∞ − (f_∞ − f(a))·μ^{k−a}, so it
        reaches the threshold at k̂ = a + ln((f_∞ − thr)/(f_∞ − f(a)))/ln μ.
        """
        out = np.full((a.size, 4), np.nan)
        if not self.modal or a.size == 0:
            return out
        m = np.abs(self.mu)
        m = m[m < 1.0]
        mu = float(m.max(initial=0.0))
        if not 0.0 < mu < 1.0:
            return out
        lo, hi = self.periodic.phase_extrema([name])
        f_inf = (hi if sgn > 0 else -lo)[0, :, 0]  # (P,)
        with np.errstate(divide="ignore", invalid="ignore"):
            k = a[:, None] + np.log((f_inf - thr) / (f_inf - top)) / math.log(mu)
        k = np.where((f_inf > thr) & (top < thr) & np.isfinite(k), k, np.inf).min(axis=1)
        k = np.where(np.isfinite(k), k, np.nan)
        return k[:, None] + np.array([-1.0, 0.0, 1.0, 2.0])[None, :]

    def _first_in_cycle(self, k: int, name: str, thr: float, sgn: float, ext=None) -> float:
        """Exact first instant within cycle k at which sgn·(probe − thr) ≥ 0 [s from the cycle start].

        In the first phase whose extremes reach the threshold, the probe
        y(t) = Σ_i k_i·(e^{λ_i t}·w_i + φ₁(λ_i t)·t·g_i) + k_u·u is monotone between the
        zeros of y′ (:func:`_exp_sum_roots`); the first monotone piece that reaches
        the threshold holds the crossing, solved by Brent's method to rounding. ``ext``:
        the cycle's phase extrema (lo, hi), each (P, 1), and its phase-start states (P, n_z),
        when already at hand.
        """
        net = self.net
        nx = net.n_x
        lam, V, Vinv, VN = net.modes
        if ext is None:
            sol = self._solution(self.states([k]), self.u)
            lo, hi = sol.phase_extrema([name])
            zk = sol.z0[0]
        else:
            lo, hi, zk = ext[0][None], ext[1][None], ext[2]
        top = (hi if sgn > 0 else -lo)[0, :, 0]
        reach = np.flatnonzero(top >= sgn * thr)
        if reach.size == 0:
            return self.period  # not reached (rounding at a tangency): the cycle's end
        p = int(reach[0])
        t_start = float(self.durations[:p].sum())
        dur = float(self.durations[p])
        z0 = zk[p]
        K = net.probe_rows([name])[p, 0, :]
        w = Vinv[p] @ z0[:nx]
        g = VN[p] @ self.u
        kk = K[:nx] @ V[p]
        ku = float(K[nx:] @ self.u)
        terms = [(float(lp), float(a), float(c)) for lp, a, c in zip(lam[p], kk * w, kk * g)]

        def y(t):
            acc = ku - thr
            for lp, a, c in terms:
                x = lp * t
                acc += a * math.exp(x) + c * (math.expm1(x) / lp if x != 0.0 else t)
            return sgn * acc

        if y(0.0) >= 0.0:
            return t_start
        roots = _exp_sum_roots(kk * (lam[p] * w + g), lam[p], np.asarray(dur))
        edges = np.concatenate([[0.0], np.sort(roots[~np.isnan(roots)]), [dur]])
        for lo_t, hi_t in zip(edges[:-1], edges[1:]):
            if y(hi_t) >= 0.0:  # monotone between the zeros of y′: one crossing
                if y(lo_t) >= 0.0:
                    return t_start + float(lo_t)
                return t_start + brentq(y, float(lo_t), float(hi_t), xtol=1e-300, rtol=4 * np.finfo(float).eps)
        return t_start + dur  # the phase's extremum sits at its end only by rounding

# --------------------------------------------------------------------------- SPICE

def to_spice(net: Network, durations, u, *, cycles: int, x0=None, title: str = "switched-capacitor network",
             points_per_phase: int = 200, reltol: float = 1e-5) -> str:
    """A SPICE netlist of the same network for an independent transient check (ngspice).

    Capacitors become C (with ``ic=``) plus a series R for the ESR; switches
    become voltage-controlled switches (``sw`` model, ron = r, roff = 1e6 Ω, the largest value with
    which ngspice 39 does not find the first step singular while a flying capacitor floats;
    it leaks V/1e6 through each open switch)
    driven by one pulse source per phase, so a switch closed in phase p
    conducts exactly during that phase; sources and loads become DC sources.
    Phase 0 of the first cycle starts at t = ``t0`` = 1e-2 of the shortest
    phase after the start (switches are open before), the time the control
    pulses need to rise; :func:`spice_t0` returns it. The text ends with a
    ``.tran … uic`` line and no ``.end`` (as :func:`explorer.spice.run_transient`
    expects).

    Parameters
    ----------
    durations : array_like (n_phases,) [s]
    u : array_like (n_u,) [V]/[A]
    cycles : int
        Cycles to simulate.
    x0 : array_like (n_x,), optional
        Initial capacitor voltages [V] (default 0).
    """
    from .spice import spice_number as n

    if net.batch_shape != ():
        raise DesignError("network", "a netlist takes one network (scalar element values)", net.batch_shape)
    d = np.asarray(durations, float)
    T = float(d.sum())
    x0 = np.zeros(net.n_x) if x0 is None else np.asarray(x0, float)
    u = np.asarray(u, float)
    t0 = spice_t0(d)
    tr = t0
    lines = [f"* {title}", "* written by explorer.scnet.to_spice from the model's own parameters"]
    starts = np.concatenate(([0.0], np.cumsum(d)[:-1])) + t0
    used = sorted({p for e in net.elements if isinstance(e, Res) and e.closed is not None for p in e.closed})
    for p in used:
        if d[p] <= 0:
            continue
        lines.append(f"VPH{p} ph{p} 0 PULSE(0 1 {n(starts[p] - tr / 2)} {n(tr)} {n(tr)} {n(d[p] - tr)} {n(T)})")
    inp = {name: i for i, name in enumerate(net.inputs)}
    for e in net.elements:
        if isinstance(e, Cap):
            k = net.caps.index(e)
            if e.esr > 0:
                mid = f"{e.name}_esr"
                lines.append(f"C{e.name} {e.a} {mid} {n(e.c)} ic={n(x0[k])}")
                lines.append(f"R{e.name}_esr {mid} {e.b} {n(e.esr)}")
            else:
                lines.append(f"C{e.name} {e.a} {e.b} {n(e.c)} ic={n(x0[k])}")
        elif isinstance(e, Res):
            if e.closed is None:
                lines.append(f"R{e.name} {e.a} {e.b} {n(e.r)}")
                continue
            lines.append(f".model SWM_{e.name} sw(vt=0.5 vh=0 ron={n(e.r)} roff=1e6)")
            for p in e.closed:
                if d[p] > 0:
                    lines.append(f"S{e.name}_{p} {e.a} {e.b} ph{p} 0 SWM_{e.name}")
        elif isinstance(e, VSrc):
            lines.append(f"V{e.name} {e.a} {e.b} DC {n(u[inp[e.input]])}")
        elif isinstance(e, ISrc):
            lines.append(f"I{e.name} {e.a} {e.b} DC {n(u[inp[e.input]])}")
    step = float(d[d > 0].min()) / points_per_phase
    lines.append(f".options reltol={n(reltol)} abstol=1e-12 vntol=1e-9 method=gear")
    lines.append(f".tran {n(step)} {n(t0 + cycles * T)} 0 {n(step)} uic")
    return "\n".join(lines) + "\n"


def spice_t0(durations) -> float:
    """Start of phase 0 of the first cycle in a :func:`to_spice` netlist [s]."""
    d = np.asarray(durations, float)
    return 1e-2 * float(d[d > 0].min())
