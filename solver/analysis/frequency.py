"""Frequency response of a port quantity: sweeps, midband, band edges, poles and zeros.

Every port quantity of the scenario table (:mod:`solver.analysis.scenarios`) is a
ratio of two linear read-outs of one stamped system (G + sC) x = b u with u the
unit excitation:

    H(s) = (n . x + n0 u) / (d . x + d0 u)

(:class:`Readout`), so one scenario is stamped ONCE (:func:`scenario`) and then
solved for all s_k = j 2 pi f_k: batched dense solves for small systems,
sparse LU per point for large ones (:func:`response`).

Poles and zeros come from matrix pencils, not from curve fitting. The
transfer from u to a read-out y = r . x + r0 u vanishes where the Rosenbrock
system matrix

    [[G + sC, -b], [r, r0]]

is singular, so the finite generalized eigenvalues of that pencil are the
zeros of the read-out (for r = 0, r0 = 1 they are the natural frequencies,
the eigenvalues of (G, -C)). H's zeros are those of its numerator read-out,
its poles those of its denominator read-out; pole/zero pairs that coincide
(uncontrollable or unobservable modes) cancel.

References
----------
H. H. Rosenbrock, *State-Space and Multivariable Theory*, Nelson, 1970,
chapter 3 (system matrix and its zeros), from memory.
G. H. Golub, C. F. Van Loan, *Matrix Computations*, 4th ed., section 7.7
(the generalized eigenvalue problem, infinite eigenvalues), from memory.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from solver.analysis import scenarios as table
from solver.circuit.model import Circuit
from solver.circuit.views import is_reactive, small_signal_elements
from solver.engine.mna import SingularSystem, System, assemble

QUANTITIES = table.QUANTITIES
#: above this many unknowns the sweep uses sparse LU per point instead of batched dense solves
DENSE_LIMIT = 150
#: sparse systems whose bandwidth after reverse Cuthill-McKee is at most this use banded LU
BAND_LIMIT = 40
#: above this many unknowns poles and zeros are not computed (dense QZ is O(n^3))
EIG_LIMIT = 300
_BATCH_BYTES = 64 * 2 ** 20
#: a flat top has a log-log slope below this somewhere (0.25 = 5 dB/decade; common practice, no source)
FLAT_SLOPE = 0.25


class ResponseError(Exception):
    """A quantity that the circuit does not define (e.g. Ai without a load)."""


@dataclass
class Readout:
    """y = r . x + r0 * u as a dense coefficient vector and a feedthrough."""

    r: np.ndarray
    r0: complex = 0.0

    def __call__(self, x: np.ndarray) -> np.ndarray:
        """Apply to one solution (n,) or a batch (..., n)."""
        return x @ self.r + self.r0


@dataclass
class Scenario:
    """One stamped system and the read-outs whose ratio is the quantity."""

    quantity: str
    system: System
    num: Readout
    den: Readout | None = None  # None: H = num (per unit excitation)
    #: a common-mode or supply read-out: values at the round-off level of the solution are 0
    #: (the rule of solver.analysis.ports.CANCELLED)
    cancel: bool = False
    #: the denominator is branch currents only (solver.analysis.scenarios.branch_only)
    den_currents: bool = False

    @property
    def size(self) -> int:
        return self.system.stamper.size


# --- stamping a measurement of the scenario table -------------------------------------------------
def _readout(sys_: System, terms) -> Readout:
    """The dense coefficient vector of a read-out of :mod:`solver.analysis.scenarios`."""
    r = np.zeros(sys_.stamper.size, complex)
    r0 = 0j
    for t in terms:
        k = 1.0 / t.per.value if t.per is not None else 1.0
        if t.kind == "node":
            i = sys_.stamper.node(t.name)
            if i is not None:
                r[i] += t.sign * k
        elif t.kind == "branch":
            r[sys_.stamper.branches[t.name]] += t.sign * k
        else:
            r0 += t.sign * k
    return Readout(r, r0)


#: a frequency away from any pole, to tell a structurally singular system (the table's Rout rule)
PROBE_S = 2j * math.pi * 1234.567 + 321.0


def scenario(c: Circuit, quantity: str) -> Scenario:
    """Stamp the system that defines ``quantity`` (:mod:`solver.analysis.scenarios`) and its read-outs.

    Parameters
    ----------
    c : Circuit
    quantity : str
        One of Gv Av Avo Gvo Rin Rout Ai Zt Zto (Zt, Zto for a current signal).

    Returns
    -------
    Scenario

    Raises
    ------
    ResponseError
        When the circuit does not define the quantity.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, gnd) 1u\\noutput (a, gnd)\\n")
    >>> sc = scenario(c, "Gv")
    >>> h = response(sc, np.array([1 / (2 * np.pi * 1e-3)]))
    >>> round(float(abs(h[0])), 4)
    0.7071
    """
    why = table.why_undefined(c, quantity)
    if why:
        raise ResponseError(why)
    if quantity in table.DECIBELS:
        raise ResponseError(f"{quantity} is the ratio of {' and '.join(table.DECIBELS[quantity])} in dB: "
                            "sweep those two (or a supply's rejection with --supply)")
    return measured_scenario(c, quantity, small_signal_elements(c))


def measured_scenario(c: Circuit, quantity: str, base: list) -> Scenario:
    """The scenario table's measurement of ``quantity`` on the element list ``base``, stamped.

    Of Rout's two measurements the first whose system is not singular at :data:`PROBE_S`
    (:data:`solver.analysis.scenarios.ROUT_ORDER`); :func:`scenario` is this on the
    small-signal network after checking the quantity is defined.
    """
    systems = {}

    def stamped(m):
        if m.config.key not in systems:
            systems[m.config.key] = assemble(list(m.config.elements), c.ground)
        return systems[m.config.key]

    def singular(m):
        try:
            stamped(m).solve(PROBE_S)
            return False
        except SingularSystem:
            return True

    m = table.chosen(c, quantity, singular, base)
    sys_ = stamped(m)
    return Scenario(quantity, sys_, _readout(sys_, m.num), None if m.den is None else _readout(sys_, m.den),
                    m.config.drive == "common", m.den is not None and table.branch_only(m.den))


def supply_scenario(c: Circuit, name: str) -> Scenario:
    """Stamp the gain from supply ``name`` to v_out (:func:`solver.analysis.scenarios.supply_measurement`).

    Raises
    ------
    ResponseError
        When the circuit has no such supply.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nsignal VS (b, gnd) 1 V\\nresistor RB (b, gnd) 1k\\n"
    ...           "resistor R1 (vcc, a) 1k\\ncapacitor C1 (a, gnd) 1u\\noutput (a, gnd)\\n")
    >>> h = response(supply_scenario(c, "VCC"), np.array([1 / (2 * np.pi * 1e-3)]))
    >>> complex(np.round(h[0], 6))
    (0.5-0.5j)
    """
    try:
        m = table.supply_measurement(c, name)
    except table.QuantityError as e:
        raise ResponseError(str(e)) from None
    sys_ = assemble(list(m.config.elements), c.ground)
    return Scenario(m.quantity, sys_, _readout(sys_, m.num), None, True)


def default_quantity(c: Circuit) -> str:
    return table.main_gain(c)


# --- evaluation over many frequencies ------------------------------------------------------------
class _SparseSweep:
    """G and C on one common CSC pattern, with a fill-reducing column order chosen once.

    The pattern, the value arrays and the ordering depend only on the circuit, so
    they are built on the first call and reused for every frequency: each point
    then costs one array update and one sparse LU.
    """

    def __init__(self, sys_: System):
        from scipy.sparse.csgraph import reverse_cuthill_mckee
        n = sys_.stamper.size
        P = (abs(sys_.G) + abs(sys_.C)).tocsr()
        # reverse Cuthill-McKee on the symmetrized pattern: MNA matrices are nearly structurally
        # symmetric, and a banded order lets SuperLU skip its own ordering (natural order)
        perm = reverse_cuthill_mckee((P + P.T).tocsr(), symmetric_mode=True)
        self.perm = perm
        self.inv = np.empty_like(perm)
        self.inv[perm] = np.arange(n)
        Gp = sys_.G.tocsr()[perm][:, perm].tocsc()
        Cp = sys_.C.tocsr()[perm][:, perm].tocsc()
        Pp = (abs(Gp) + abs(Cp)).tocsc()
        Pp.sort_indices()
        cols = np.repeat(np.arange(n), np.diff(Pp.indptr))
        self.indices, self.indptr, self.n = Pp.indices, Pp.indptr, n
        self.g = np.asarray(Gp.tocsr()[Pp.indices, cols]).ravel().astype(complex)
        self.c = np.asarray(Cp.tocsr()[Pp.indices, cols]).ravel().astype(complex)
        self.b = sys_.b.astype(complex)[perm]
        self.spec = None  # "NATURAL" (banded order) or "COLAMD", fixed at the first point
        # a chain-like circuit is banded after RCM: then LAPACK's banded LU (partial pivoting)
        # does the same elimination without the general sparse bookkeeping
        rows = Pp.indices
        self.kl = int(max(0, (rows - cols).max(initial=0)))
        self.ku = int(max(0, (cols - rows).max(initial=0)))
        self.banded = self.kl + self.ku <= BAND_LIMIT
        if self.banded:
            self.band_index = (self.ku + rows - cols, cols)
        self.rows, self.cols = rows, cols
        self.band_index_t = None

    def solve_transposed(self, s: complex, R: np.ndarray, permuted: bool = False) -> np.ndarray:
        """Y with (G + sC)^T Y = R, R of shape (n, m): the adjoint system, on the same pattern and
        ordering (P A P^T transposed is P A^T P^T, so the permutation carries over).
        ``permuted``: R is already in this ordering (R[perm])."""
        Rp = R if permuted else R[self.perm]
        if self.banded:
            from scipy.linalg import LinAlgError, solve_banded
            ab = np.zeros((self.kl + self.ku + 1, self.n), complex)
            if self.band_index_t is None:
                # A^T has lower bandwidth ku and upper kl; its entry (j, i) is A's (i, j)
                self.band_index_t = (self.kl + self.cols - self.rows, self.rows)
            ab[self.band_index_t] = self.g + s * self.c
            try:
                with np.errstate(all="ignore"):
                    y = solve_banded((self.ku, self.kl), ab, Rp, check_finite=False)
            except LinAlgError:
                raise RuntimeError("singular") from None
            return y[self.inv]
        import scipy.sparse as sp, scipy.sparse.linalg as spla
        A = sp.csc_matrix((self.g + s * self.c, self.indices, self.indptr), shape=(self.n, self.n))
        with np.errstate(all="ignore"):
            if self.spec is None:
                lus = {spec: spla.splu(A, permc_spec=spec) for spec in ("NATURAL", "COLAMD")}
                self.spec = min(lus, key=lambda k: lus[k].L.nnz + lus[k].U.nnz)
                lu = lus[self.spec]
            else:
                lu = spla.splu(A, permc_spec=self.spec)
            return lu.solve(Rp, trans="T")[self.inv]

    def solve(self, s: complex) -> np.ndarray:
        if self.banded:
            from scipy.linalg import LinAlgError, solve_banded
            ab = np.zeros((self.kl + self.ku + 1, self.n), complex)
            ab[self.band_index] = self.g + s * self.c
            try:
                with np.errstate(all="ignore"):
                    x = solve_banded((self.kl, self.ku), ab, self.b, check_finite=False)
            except LinAlgError:
                raise RuntimeError("singular") from None
            return x[self.inv]
        import scipy.sparse as sp, scipy.sparse.linalg as spla
        A = sp.csc_matrix((self.g + s * self.c, self.indices, self.indptr), shape=(self.n, self.n))
        with np.errstate(all="ignore"):
            if self.spec is None:  # keep whichever order fills in less
                lus = {spec: spla.splu(A, permc_spec=spec) for spec in ("NATURAL", "COLAMD")}
                self.spec = min(lus, key=lambda k: lus[k].L.nnz + lus[k].U.nnz)
                lu = lus[self.spec]
            else:
                lu = spla.splu(A, permc_spec=self.spec)
            return lu.solve(self.b)[self.inv]


def solve_many(sys_: System, s: np.ndarray, dense: bool | None = None,
               banded: bool | None = None) -> np.ndarray:
    """Solutions x_k of (G + s_k C) x = b for every s_k, shape (len(s), n).

    Singular points give rows of nan. ``dense`` forces the method (default: by size);
    ``banded`` forces or forbids banded LU on the sparse path (default: by bandwidth).
    """
    n = sys_.stamper.size
    s = np.asarray(s, complex)
    out = np.full((s.size, n), np.nan, complex)
    if n == 0:
        return out
    if dense is None:
        dense = n <= DENSE_LIMIT
    b = sys_.b.astype(complex)
    if dense:
        G = sys_.dense("G").astype(complex)
        C = sys_.dense("C").astype(complex)
        step = max(1, _BATCH_BYTES // (16 * n * n))
        ri, ci = np.nonzero(C)  # only C's entries move with s: copy G, then add s*C there
        cv = C[ri, ci]
        for k0 in range(0, s.size, step):
            sk = s[k0:k0 + step]
            A = np.repeat(G[None, :, :], sk.size, axis=0)
            A[:, ri, ci] += sk[:, None] * cv[None, :]
            try:
                with np.errstate(all="ignore"):
                    out[k0:k0 + step] = np.linalg.solve(A, np.broadcast_to(b, (sk.size, n))[..., None])[..., 0]
            except np.linalg.LinAlgError:  # one singular point spoils the batch: redo it point by point
                for k, sv in enumerate(sk):
                    try:
                        out[k0 + k] = np.linalg.solve(A[k], b)
                    except np.linalg.LinAlgError:
                        pass
        bad = ~np.all(np.isfinite(out), axis=1)
        out[bad] = np.nan
        return out
    sweep = getattr(sys_, "_sparse_sweep", None)
    if sweep is None:
        sweep = sys_._sparse_sweep = _SparseSweep(sys_)
    if banded is not None:
        sweep.banded = banded and sweep.kl + sweep.ku < sweep.n
    for k, sv in enumerate(s):
        try:
            out[k] = sweep.solve(sv)
        except RuntimeError:  # exactly singular at this point
            pass
    return out


def solve_many_adjoint(sys_: System, s: np.ndarray, R: np.ndarray, dense: bool | None = None) -> np.ndarray:
    """Solutions of the adjoint (transposed) system (G + s_k C)^T Y = R for every s_k.

    R (n, m) holds m read-out vectors r; then r . x = y . b for EVERY excitation b of the
    system, so one solve per frequency gives the transfer of any number of sources to the
    read-outs (the adjoint network; Rohrer, Nagel, Meyer, Weber, IEEE J. Solid-State Circuits
    6(4), 1971). Dense systems: one generalized Schur form for many points (:func:`_adjoint_qz`),
    a batched LU for a few; above :data:`DENSE_LIMIT` unknowns the sweep's sparse or banded LU
    of the same pattern and ordering (:class:`_SparseSweep`).

    Returns
    -------
    ndarray, shape (len(s), m, n)
        ``Y[k, j]`` is the adjoint solution of read-out j at frequency k (each one contiguous,
        so that gathering many sources' entries is cheap); nan at singular points.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, gnd) 1u\\noutput (a, gnd)\\n")
    >>> sc = scenario(c, "Gv")
    >>> f = np.array([159.15494309189535])
    >>> y = solve_many_adjoint(sc.system, 2j * np.pi * f, sc.num.r[:, None])
    >>> bool(np.isclose(y[0, 0] @ sc.system.b, response(sc, f)[0]))
    True
    """
    n = sys_.stamper.size
    s = np.asarray(s, complex)
    R = np.asarray(R, complex).reshape(n, -1)
    m = R.shape[1]
    if n == 0:
        return np.zeros((s.size, m, 0), complex)
    if dense is None:
        dense = n <= DENSE_LIMIT
    if dense and s.size >= QZ_MIN_POINTS:
        out = _adjoint_qz(sys_, s, R)
        # every point's residual against the matrices themselves: where the Schur route lost
        # accuracy (or met an eigenvalue of the pencil), an LU solve of that point decides.
        # The measure is max |residual| / max (|Y| (|G| + |s| |C|) + |R|) per read-out: about
        # 1e-16 for an LU solve, up to 1e-10 for the Schur route on stiff circuits (an op-amp
        # gain of 1e5 beside 1 ohm), 5e-4 for an answer wrong by 0.1 %.
        G, C = sys_.dense("G"), sys_.dense("C")
        with np.errstate(all="ignore"):
            F, m = out.shape[:2]
            flat = out.reshape(F * m, n)  # one matrix product each, not one per frequency

            def times(a, M):
                return np.dot(a, M).reshape(F, m, n)
            res = np.abs(times(flat, G) + s[:, None, None] * times(flat, C) - R.T[None, :, :])
            ay = np.abs(flat)
            scale = times(ay, np.abs(G)) + np.abs(s)[:, None, None] * times(ay, np.abs(C)) \
                + np.abs(R.T)[None, :, :]
            err = res.max(axis=2) / scale.max(axis=2)
            bad = ~(err.max(axis=1) <= QZ_RESIDUAL)
        if bad.any():
            out[bad] = _adjoint_lu(sys_, s[bad], R)
        return out
    if dense:
        return _adjoint_lu(sys_, s, R)
    out = np.empty((s.size, m, n), complex)
    sweep = getattr(sys_, "_sparse_sweep", None)
    if sweep is None:
        sweep = sys_._sparse_sweep = _SparseSweep(sys_)
    Rp = R[sweep.perm]  # the right-hand sides in the sweep's ordering, permuted once
    for k, sv in enumerate(s):
        try:
            out[k] = sweep.solve_transposed(sv, Rp, permuted=True).T
        except RuntimeError:
            out[k] = np.nan
    return out


#: from this many frequencies on, a dense adjoint solve reduces the pencil once (QZ) instead of an
#: LU per point
QZ_MIN_POINTS = 8
#: the largest scaled residual a Schur-route solution may leave before LU redoes its point
QZ_RESIDUAL = 1e-9


def _adjoint_qz(sys_: System, s: np.ndarray, R: np.ndarray) -> np.ndarray:
    """(G + s C)^T Y = R for many s through one generalized Schur form of the pencil.

    QZ gives unitary Q, Z with G^T = Q T_G Z^H and C^T = Q T_C Z^H, T_G and T_C upper
    triangular, so each frequency costs one triangular solve (T_G + s T_C) W = Q^H R,
    Y = Z W, done for a batch of frequencies at once, row by row: O(n^2) per frequency
    instead of an O(n^3) LU. Rows and columns are first scaled to unit size (MNA mixes
    siemens and farads), which leaves the solution exact and the reduction well balanced.
    Frequencies go in batches of :data:`_QZ_BATCH_ENTRIES`. Returns shape (len(s), m, n).

    References
    ----------
    A. J. Laub, "Efficient multivariable frequency response computations", IEEE Trans.
    Automatic Control 26(2), 1981 (one reduction, then a cheap solve per frequency);
    C. B. Moler, G. W. Stewart, "An algorithm for generalized matrix eigenvalue problems",
    SIAM J. Numer. Anal. 10(2), 1973 (the QZ algorithm); both from memory.
    """
    import scipy.linalg as sla
    n = sys_.stamper.size
    G = sys_.dense("G").T
    C = sys_.dense("C").T
    # equilibrate the pencil: rows, then columns, by the largest entry of |G| + |C|
    M = np.abs(G) + np.abs(C)
    dr = M.max(axis=1)
    dr[dr == 0] = 1.0
    dc = (M / dr[:, None]).max(axis=0)
    dc[dc == 0] = 1.0
    Gs = G / dr[:, None] / dc[None, :]
    Cs = C / dr[:, None] / dc[None, :]
    TG, TC, Q, Z = sla.qz(Gs, Cs, output="complex")
    TG, TC, Z = np.ascontiguousarray(TG), np.ascontiguousarray(TC), np.ascontiguousarray(Z)
    QR = Q.conj().T @ (R / dr[:, None])
    m = R.shape[1]
    out = np.empty((s.size, m, n), complex)
    batch = max(4, _QZ_BATCH_ENTRIES // (m * n))
    for k0 in range(0, s.size, batch):
        sk = s[k0:k0 + batch]
        F = sk.size
        # column-oriented back substitution over a batch of frequencies: once unknown i is
        # known, its part is taken off every row above it. numpy broadcasting, not one BLAS
        # call per row: OpenBLAS threads even these small products, and a hundred thread
        # hand-offs per batch cost more than the arithmetic, far more on a shared machine
        acc = np.repeat(QR[:, :, None], F, axis=2)  # (n, m, F)
        with np.errstate(all="ignore"):
            for i in range(n - 1, -1, -1):
                w = acc[i] / (TG[i, i] + sk * TC[i, i])[None, :]
                acc[i] = w
                if i:
                    acc[:i] -= TG[:i, i, None, None] * w[None]
                    acc[:i] -= TC[:i, i, None, None] * (sk[None, :] * w)[None]
            Y = np.dot(Z, acc.reshape(n, m * F)).reshape(n, m, F) / dc[:, None, None]  # one gemm
        out[k0:k0 + F] = Y.transpose(2, 1, 0)
    return out


#: entries (unknowns x read-outs x frequencies) per batch of the Schur route (4 MB)
_QZ_BATCH_ENTRIES = 2 ** 18


def _adjoint_lu(sys_: System, s: np.ndarray, R: np.ndarray) -> np.ndarray:
    """(G + s C)^T Y = R by a batched dense LU per frequency; shape (len(s), m, n)."""
    n, m = sys_.stamper.size, R.shape[1]
    out = np.full((s.size, n, m), np.nan, complex)
    G = sys_.dense("G").astype(complex).T
    C = sys_.dense("C").astype(complex).T
    step = max(1, _BATCH_BYTES // (16 * n * n))
    ri, ci = np.nonzero(C)
    cv = C[ri, ci]
    for k0 in range(0, s.size, step):
        sk = s[k0:k0 + step]
        A = np.repeat(G[None, :, :], sk.size, axis=0)
        A[:, ri, ci] += sk[:, None] * cv[None, :]
        try:
            with np.errstate(all="ignore"):
                out[k0:k0 + step] = np.linalg.solve(A, np.broadcast_to(R, (sk.size, n, m)))
        except np.linalg.LinAlgError:  # one singular point spoils the batch: point by point
            for k in range(sk.size):
                try:
                    out[k0 + k] = np.linalg.solve(A[k], R)
                except np.linalg.LinAlgError:
                    pass
    bad = ~np.all(np.isfinite(out), axis=(1, 2))
    out[bad] = np.nan
    return np.ascontiguousarray(out.transpose(0, 2, 1))


def response(sc: Scenario, freqs: np.ndarray, dense: bool | None = None) -> np.ndarray:
    """The quantity at every frequency (Hz) as a complex array; nan where the system is singular.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\ncapacitor C1 (a, b) 1u\\nresistor R1 (b, gnd) 1k\\n"
    ...           "output (b, gnd)\\n")
    >>> h = response(scenario(c, "Gv"), np.array([1 / (2 * np.pi * 1e-3)]))
    >>> complex(np.round(h[0], 6))
    (0.5+0.5j)
    """
    s = 2j * np.pi * np.asarray(freqs, float)
    x = solve_many(sc.system, s, dense)
    num = sc.num(x)
    if sc.cancel:
        n = len(sc.system.stamper.nodes)
        scale = np.max(np.abs(x[:, :n]), axis=1) if n else np.zeros(len(s))
        num = np.where(np.abs(num) <= table.CANCELLED * scale, 0j, num)
    if sc.den is None:
        return num
    den = sc.den(x)
    if sc.den_currents:  # the rule of solver.analysis.scenarios.branch_only
        n = len(sc.system.stamper.nodes)
        scale = np.max(np.abs(x[:, n:]), axis=1) if x.shape[1] > n else np.zeros(len(s))
        den = np.where(np.abs(den) <= table.CANCELLED * scale, 0j, den)
    with np.errstate(all="ignore"):
        return np.where(den != 0, num / np.where(den != 0, den, 1), np.complex128(complex(np.inf, 0)))


def frequencies(f_from: float, f_to: float, points: int | None = None, per_decade: int | None = None):
    """Log-spaced frequencies from f_from to f_to inclusive.

    Parameters
    ----------
    f_from, f_to : float
        Hz, 0 < f_from < f_to.
    points : int, optional
        Number of points in all; otherwise ``per_decade`` (default 20) per decade.

    Examples
    --------
    >>> [round(float(f), 3) for f in frequencies(10, 1000, per_decade=2)]
    [10.0, 31.623, 100.0, 316.228, 1000.0]
    """
    if not (0 < f_from < f_to):
        raise ValueError("a log sweep needs 0 < from < to")
    if points is None:
        per_decade = per_decade or 20
        points = max(2, int(math.ceil(per_decade * math.log10(f_to / f_from))) + 1)
    return np.logspace(math.log10(f_from), math.log10(f_to), int(points))


# --- midband and band edges ---------------------------------------------------------------------
@dataclass
class Band:
    midband_hz: float
    midband: complex
    f_low_hz: float | None
    f_high_hz: float | None

    @property
    def bandwidth_hz(self) -> float | None:
        if self.f_high_hz is None:
            return None
        return self.f_high_hz - (self.f_low_hz or 0.0)


def _flat_run(freqs: np.ndarray, h: np.ndarray) -> list[int] | None:
    """Indices of the flat top: among points within 3 dB of the largest magnitude, the run of the
    flattest ones (log-log slope |d ln|H| / d ln f| within 0.001 of the least)."""
    mag = np.abs(h)
    ok = np.isfinite(mag) & (mag > 0)
    if ok.sum() < 3:
        return None
    m = np.where(ok, mag, 0.0)
    near = ok & (m >= m.max() / math.sqrt(2))
    lf, lm = np.log(freqs), np.log(np.where(ok, m, 1.0))
    slope = np.where(near, np.abs(np.gradient(lm, lf)), np.inf)
    if slope.min() > FLAT_SLOPE:  # e.g. an integrator: no flat top, so no midband or corners
        return None
    flat = np.flatnonzero(near & (slope <= slope.min() + 1e-3))
    run = [int(flat[0])]
    for k in flat[1:]:
        if k != run[-1] + 1:
            break
        run.append(int(k))
    return run


def midband_index(freqs: np.ndarray, h: np.ndarray) -> int | None:
    """Index of the flat top: the geometric middle of the flattest run, or its end point when the
    run reaches an end of the sweep (a low-pass is flattest at its lowest frequency)."""
    run = _flat_run(freqs, h)
    if run is None:
        return None
    if run[0] == 0:
        return 0
    if run[-1] == len(freqs) - 1:
        return run[-1]
    return run[len(run) // 2]


def flat_top(sc: Scenario, freqs: np.ndarray, h: np.ndarray) -> tuple[float, complex] | None:
    """(frequency, value) of the midband: DC itself when the response is flat down to the bottom of
    the sweep and finite at DC (a direct-coupled response), else the point from midband_index."""
    k = midband_index(freqs, h)
    if k is None:
        return None
    if k == 0:
        h0 = complex(response(sc, np.array([0.0]))[0])
        if np.isfinite(h0) and h0 != 0 and abs(abs(h0) / abs(h[0]) - 1) < 0.01:
            return 0.0, h0
        return float(freqs[0]), complex(h[0])
    if k == len(freqs) - 1:
        # flat up to the top of the sweep (a high-pass shape): take the lowest point from which the
        # magnitude stays within 0.1 % of the top value, not the far end, where a real amplifier
        # is no longer described and the matrix grows ill-conditioned
        mag = np.abs(h)
        flat = np.isfinite(mag) & (np.abs(mag / mag[k] - 1) < 1e-3)
        j = k
        while j > 0 and flat[j - 1]:
            j -= 1
        j = min(k, j + 10)  # one decade (at 10 points per decade) into the flat part
        # the level stays the top value: the -3 dB edges are measured from the flat asymptote
        return float(freqs[j]), complex(h[k])
    # an interior flat top is a maximum of |H| (zero slope): refine it between the neighbours
    # (a resonant peak falls between sweep points)
    lo, hi = math.log10(freqs[k - 1]), math.log10(freqs[k + 1])

    def neg(logf):
        v = abs(response(sc, np.array([10.0 ** logf]))[0])
        return -v if np.isfinite(v) else 0.0

    x, fx = golden_minimum(neg, lo, hi, 1e-10)
    if -fx > abs(h[k]):
        f = 10.0 ** x
        return f, complex(response(sc, np.array([f]))[0])
    return float(freqs[k]), complex(h[k])


_INV_PHI = (math.sqrt(5.0) - 1.0) / 2.0


def golden_minimum(fn, a: float, b: float, tol: float) -> tuple[float, float]:
    """(x, fn(x)) at a minimum of a unimodal ``fn`` on [a, b], to within ``tol`` in x.

    Golden-section search: each step keeps the bracket that holds the smaller of two inner
    points, which shrinks it by 0.618 and reuses one of the points. Written out here so that
    finding the midband (every ``portwise solve`` of a reactive circuit) does not import
    scipy.optimize, which costs more than the whole rest of a small solve.

    References
    ----------
    J. Kiefer, "Sequential minimax search for a maximum", Proc. Amer. Math. Soc. 4(3), 1953;
    W. H. Press et al., *Numerical Recipes*, 3rd ed., section 10.2 (from memory).

    Examples
    --------
    >>> x, fx = golden_minimum(lambda x: (x - 0.3) ** 2, 0.0, 1.0, 1e-10)
    >>> round(x, 8), fx < 1e-18
    (0.3, True)
    """
    c = b - _INV_PHI * (b - a)
    d = a + _INV_PHI * (b - a)
    fc, fd = fn(c), fn(d)
    while abs(b - a) > tol:
        if fc < fd:
            b, d, fd = d, c, fc
            c = b - _INV_PHI * (b - a)
            fc = fn(c)
        else:
            a, c, fc = c, d, fd
            d = a + _INV_PHI * (b - a)
            fd = fn(d)
    return (c, fc) if fc < fd else (d, fd)


def band(sc: Scenario, freqs: np.ndarray, h: np.ndarray) -> Band | None:
    """Midband value and the -3 dB edges, located by root finding between sweep points.

    Returns None when no flat top is found (nowhere flat, or too few finite points).

    References
    ----------
    R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973,
    chapter 4 (the root finder behind scipy.optimize.brentq), from memory.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, gnd) 1u\\noutput (a, gnd)\\n")
    >>> sc = scenario(c, "Gv")
    >>> f = frequencies(1, 1e5, per_decade=5)
    >>> round(band(sc, f, response(sc, f)).f_high_hz, 6)
    159.154943
    """
    from scipy.optimize import brentq
    top = flat_top(sc, freqs, h)
    if top is None:
        return None
    fm, hm = top
    k = min(int(np.searchsorted(freqs, fm)), len(freqs) - 1) if fm > 0 else 0
    target = abs(hm) / math.sqrt(2)
    mag = np.abs(h)

    def excess(logf):
        return abs(response(sc, np.array([10.0 ** logf]), dense=True if sc.size <= DENSE_LIMIT else None)[0]) \
            - target

    def edge(indices):
        for i, j in indices:
            if np.isfinite(mag[i]) and np.isfinite(mag[j]) and (mag[i] - target) * (mag[j] - target) <= 0 \
                    and mag[i] >= target:
                a, b = math.log10(freqs[i]), math.log10(freqs[j])
                if mag[j] == target:
                    return float(freqs[j])
                return 10.0 ** brentq(excess, a, b, xtol=1e-12, rtol=1e-12)
        return None

    f_low = edge([(i, i - 1) for i in range(k, 0, -1)])
    f_high = edge([(i, i + 1) for i in range(k, len(freqs) - 1)])
    return Band(fm, hm, f_low, f_high)


# --- poles and zeros --------------------------------------------------------------------------
def _finite_eigs(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    """Finite s with det(A + s B) = 0, via the QZ algorithm on a frequency-scaled pencil.

    An eigenvalue is finite when |beta| is not negligible against |alpha|, and it is kept
    only when its eigenvector v makes (A + s B) v small against (|A| + |s| |B|) |v|:
    that rejects the large spurious values that round-off makes of infinite eigenvalues.
    """
    import scipy.linalg as sla
    if A.shape[0] == 0:
        return np.zeros(0, complex)
    na, nb = np.abs(A).max(), np.abs(B).max()
    if nb == 0:
        return np.zeros(0, complex)
    w0 = na / nb if na > 0 else 1.0  # s = w0 * z keeps the pencil entries of one size
    Bs = B * w0
    w, vr = sla.eig(A, -Bs, right=True, homogeneous_eigvals=True)
    alpha, beta = w[0], w[1]
    norm_a, norm_b = np.linalg.norm(A, 1), np.linalg.norm(Bs, 1)
    out = []
    for k, (a, b) in enumerate(zip(alpha, beta)):
        if abs(b) <= 1e-9 * abs(a):  # infinite eigenvalue
            continue
        z = a / b
        v = vr[:, k]
        resid = np.linalg.norm((A + z * Bs) @ v, 1)
        if resid <= 1e-8 * (norm_a + abs(z) * norm_b) * np.linalg.norm(v, 1):
            out.append(0j if abs(z) < 1e-10 else z * w0)  # a pole/zero at the origin
    return np.array(out, complex)


def pencil_roots(sys_: System, r: Readout) -> np.ndarray:
    """Zeros of the read-out y = r.x + r0 u, from its Rosenbrock system pencil."""
    n = sys_.stamper.size
    G = sys_.G.toarray().astype(complex)
    C = sys_.C.toarray().astype(complex)
    if not np.any(r.r) and r.r0 != 0:  # constant read-out: det(G + sC) itself
        return _finite_eigs(G, C)
    A = np.zeros((n + 1, n + 1), complex)
    B = np.zeros((n + 1, n + 1), complex)
    A[:n, :n] = G
    A[:n, n] = -sys_.b
    A[n, :n] = r.r
    A[n, n] = r.r0
    B[:n, :n] = C
    return _finite_eigs(A, B)


def _cancel(poles: np.ndarray, zeros: np.ndarray, rel: float = 1e-6):
    poles, zeros = list(poles), list(zeros)
    kept = []
    for p in poles:
        hit = next((i for i, z in enumerate(zeros) if abs(z - p) <= rel * max(abs(p), 1e-30) + 1e-12), None)
        if hit is None:
            kept.append(p)
        else:
            zeros.pop(hit)
    return np.array(kept, complex), np.array(zeros, complex)


def _tidy(v: np.ndarray) -> np.ndarray:
    """Snap round-off imaginary parts to zero and sort by magnitude."""
    v = np.array([complex(z.real, 0.0) if abs(z.imag) <= 1e-9 * abs(z) else z for z in v], complex)
    return v[np.lexsort((v.imag, np.abs(v)))] if v.size else v


def poles_zeros(sc: Scenario) -> tuple[np.ndarray, np.ndarray]:
    """Poles and zeros of the quantity in rad/s (finite ones; coinciding pairs cancelled).

    Raises ResponseError for systems larger than EIG_LIMIT unknowns.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, gnd) 1u\\noutput (a, gnd)\\n")
    >>> p, z = poles_zeros(scenario(c, "Gv"))
    >>> round(float(p[0].real), 6), len(z)
    (-1000.0, 0)
    """
    if sc.size > EIG_LIMIT:
        raise ResponseError(f"poles and zeros are not computed above {EIG_LIMIT} unknowns "
                            f"(this system has {sc.size})")
    zeros = pencil_roots(sc.system, sc.num)
    den = sc.den or Readout(np.zeros(sc.size, complex), 1.0)
    poles = pencil_roots(sc.system, den)
    poles, zeros = _cancel(poles, zeros)
    return _tidy(poles), _tidy(zeros)


def q_factor(p: complex) -> float | None:
    """Q of a complex pole pair: |p| / (2 |Re p|); None for a real pole."""
    if p.imag == 0:
        return None
    return abs(p) / (2 * abs(p.real)) if p.real != 0 else math.inf


# --- the midband frequency used by `portwise solve` ---------------------------------------------
def midband_frequency(c: Circuit, f_from: float = 1e-2, f_to: float = 1e12) -> float | None:
    """The flat-top frequency of the circuit's main gain (Gv, or Zt for a current signal).

    None when the circuit has no reactive elements or no flat top is found.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, b) 10u\\n"
    ...           "resistor R1 (b, gnd) 1k\\ncapacitor C2 (b, gnd) 1n\\noutput (b, gnd)\\n")
    >>> 100 < midband_frequency(c) < 10000
    True
    """
    if not is_reactive(c):
        return None
    sc = scenario(c, default_quantity(c))
    f = frequencies(f_from, f_to, per_decade=10)
    top = flat_top(sc, f, response(sc, f))
    return None if top is None else top[0]
