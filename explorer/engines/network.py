"""Switched-capacitor networks: nodal analysis per phase and the exact phase maps.

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
capacitors without ESR and voltage sources with no resistance, has no solut
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property, lru_cache

import numpy as np

from ..errors import DesignError
from .elements import Cap, GROUND, ISrc, Res, VSrc
from .expm import expm, identity, phi12

__all__ = ["PhaseSystem", "solve_checked", "Network", "cycle_map"]


@dataclass(frozen=True)
class PhaseSystem:
    """State equations of one phase: dz/dt = F·z, probes y = K·z, z = [x; u]."""

    F: np.ndarray
    K: np.ndarray


def solve_checked(A: np.ndarray, B: np.ndarray, cond_max: float, problem: str) -> np.ndarray:
    """A⁻¹·B over leading batch dimensions; DesignError(problem) when any A has a 1-norm
    condition number above cond_max (cheaper than the SVD condition number over a batch,
    and within a factor n of it)."""
    try:
        inv = np.linalg.inv(A)
    except np.linalg.LinAlgError:
        raise DesignError("network", problem) from None
    cond = np.abs(A).sum(axis=-2).max(axis=-1) * np.abs(inv).sum(axis=-2).max(axis=-1)
    if not (cond <= cond_max).all():
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
    shape = x.shape[:-1]  # lam's batch and phases broadcast with d's
    E = np.empty(shape + (nz, nz))
    E[...] = _input_rows(nx, nu)  # the inputs' rows [0, I]; the states' rows follow
    E[..., :nx, :nx] = (V * e[..., None, :]) @ Vinv
    f1, f2 = phi12(x, second=integrals)
    if not integrals:
        E[..., :nx, nx:] = (V * (f1 * t)[..., None, :]) @ VN
        return E, None
    p1 = f1 * t
    p2 = f2 * t * t
    E[..., :nx, nx:] = (V * p1[..., None, :]) @ VN
    S = np.zeros(shape + (nz, nz))
    S[..., :nx, :nx] = (V * p1[..., None, :]) @ Vinv
    S[..., :nx, nx:] = (V * p2[..., None, :]) @ VN
    iu = np.arange(nx, nz)
    S[..., iu, iu] = d[..., None]
    return E, S


@lru_cache(maxsize=32)
def _input_rows(nx: int, nu: int) -> np.ndarray:
    """The (n_z, n_z) matrix whose last n_u rows are [0, I_{n_u}] (the inputs are constant within a phase),
    zeros above; read-only (value-independent structure, kept per size)."""
    out = np.zeros((nx + nu, nx + nu))
    out[nx:, nx:] = identity(nu)
    out.flags.writeable = False
    return out


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
    each capacitor's branch-current row of W; ``tail`` (P, 1 + n_z, n_z): the rows [0; I_{n_z}] below W;
    ``ph`` (P, 1): the phase index that goes with ``k_rows`` and ``cap_rows``; ``res_val_list``:
    ``res_val`` as a tuple.
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
    tail: np.ndarray
    ph: np.ndarray
    res_val_list: tuple


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
    tail = np.zeros((P, 1 + n_z, n_z))
    tail[:, 1:, :] = identity(n_z)
    out = _Stamps(size=n, Y0=Y0, R0=R0, real=real, res_p=np.array(res_p, np.intp),
                  res_row=np.array(res_row, np.intp), res_val=np.array(res_val, np.intp), k_rows=k_rows,
                  cap_rows=cap_rows, tail=tail, ph=np.arange(P)[:, None], res_val_list=tuple(res_val))
    for a in (Y0, R0, real, k_rows, cap_rows, tail, out.ph):
        a.flags.writeable = False
    if len(_STAMPS) > 256:
        _STAMPS.clear()
    _STAMPS[topology] = out
    return out


def _solve_phases(Y: np.ndarray, R: np.ndarray, real: np.ndarray, cond_max: float, problem: str) -> np.ndarray:
    """Y⁻¹·R for every phase (axis −3) over leading batch dimensions, in one batched inversion.

    ``real`` (P, n) marks each phase's own unknowns; the rest are identity padding, left out of
    the 1-norm condition number (of the phase's own block, as :func:`solve_checked`). Raises
    DesignError("phase p " + problem) for the first phase whose matrix is singular or whose
    condition number exceeds ``cond_max``.
    """
    try:
        inv = np.linalg.inv(Y)
    except np.linalg.LinAlgError:
        inv = None
    if inv is not None:  # column sums over the rows, the phase's own columns only: (..., P)
        cond = (np.where(real, np.abs(Y).sum(axis=-2), 0.0).max(axis=-1)
                * np.where(real, np.abs(inv).sum(axis=-2), 0.0).max(axis=-1))
        if (cond <= cond_max).all():
            return inv @ R
    # some phase is singular or ill-conditioned (or only its padded form is, by rounding): phase by phase
    W = np.zeros(np.broadcast_shapes(Y.shape[:-2], R.shape[:-2]) + R.shape[-2:])
    for p in range(Y.shape[-3]):
        sel = real[p]
        W[..., p, sel, :] = solve_checked(Y[..., p, :, :][..., sel, :][..., :, sel], R[p][sel], cond_max,
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
            if isinstance(e, Cap):
                if not (_all_above(e.c, 0.0, True) and _all_above(e.esr, 0.0, False)):
                    raise DesignError(f"network.{e.name}", "expected c > 0 F and esr \u2265 0 \u03a9", (e.c, e.esr))
            elif isinstance(e, Res):
                if not _all_above(e.r, 0.0, True):
                    raise DesignError(f"network.{e.name}", "expected r > 0 \u03a9", e.r)
            elif isinstance(e, (VSrc, ISrc)) and e.input not in self.inputs:
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

    @cached_property
    def _values(self) -> tuple[list, list, bool]:
        """The element values in one pass: (capacitances in state order, branch resistances (capacitor
        ESRs and resistances in element order), whether all of them are plain numbers)."""
        cs, rs = [], []
        for e in self.elements:
            if isinstance(e, Cap):
                cs.append(e.c)
                rs.append(e.esr)
            elif isinstance(e, Res):
                rs.append(e.r)
        return cs, rs, all([type(v) in (float, int) for v in cs + rs])

    def _shape_of(self, resistive_only: bool) -> tuple:
        cs, rs, plain = self._values
        if plain:
            return ()
        vals = rs if resistive_only else cs + rs
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
            Y = st.Y0.copy() if bs == () else np.array(np.broadcast_to(st.Y0, bs + st.Y0.shape))
            if st.res_p.size:
                rs = self._values[1]
                if bs == ():  # plain floats: −R of each stamp without two numpy calls
                    Y[st.res_p, st.res_row, st.res_row] = [-float(rs[i]) for i in st.res_val_list]
                else:
                    Y[..., st.res_p, st.res_row, st.res_row] = -_stack_values(rs, bs)[..., st.res_val]
            W = _solve_phases(Y, st.R0, st.real, 1e13, "has a loop of capacitors without ESR and voltage "
                              "sources with no resistance in it (no unique solution)")
        else:
            W = np.zeros(bs + (P, 0, nz))
        ext = np.concatenate([W, st.tail if bs == () else np.broadcast_to(st.tail, bs + st.tail.shape)], axis=-2)
        K = ext[..., st.ph, st.k_rows, :]  # (*g, P, n_probes, n_z)
        F = np.zeros(self.batch_shape + (P, nz, nz))
        if nx:
            icap = W[..., st.ph, st.cap_rows, :]  # (*g, P, nx, n_z)
            F[..., :nx, :] = icap / self._c[..., None, :, None]
        return F, K

    @cached_property
    def _c(self) -> np.ndarray:
        """Capacitances in state order, shape (*batch, n_x) [F]."""
        return _stack_values(self._values[0], self.batch_shape)

    @cached_property
    def _topology(self) -> tuple:
        """The network without its element values: what the nodal analysis's structure depends on."""
        els = tuple([(type(e).__name__, e.name, e.a, e.b, getattr(e, "closed", None), getattr(e, "input", None))
                     for e in self.elements])
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
        if not ((d >= 0.0).all() and np.isfinite(d).all()):
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
        B = expm(A)
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
        Mt = Ms.swapaxes(-1, -2)
        asym = np.abs(Ms - Mt).max(initial=0.0)
        if asym > 1e-9 * max(np.abs(Ms).max(initial=0.0), 1e-300):
            return None
        lam, Q = np.linalg.eigh(0.5 * (Ms + Mt))
        V = Q / sq[..., :, None]
        Vinv = Q.swapaxes(-1, -2) * sq[..., None, :]
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
