"""Small-signal noise by the adjoint method: output noise, input-referred noise, en and in, noise figure.

Every noise generator is a further excitation of the system that the main gain (Gv, or Zt for
a current signal) already solves: the scenario table's loaded, signal-driven configuration
(:func:`solver.analysis.scenarios.noise_measurement`), stamped once. A current generator
between two nodes, or the voltage generator in series with an op-amp input, is a right-hand
side b_k; its transfer to a read-out y = r . x is r . A^-1 b_k = (A^-T r) . b_k. So one
solve of the transposed (adjoint) system per frequency, for the three read-outs v_out, v_in
and i_in, gives the transfer of every generator at once (:func:`solver.analysis.frequency.
solve_many_adjoint`, vectorised over frequency like the sweep).

Generators (one-sided power spectral densities; k and q are the exact SI values, T the
element's temperature, 300 K unless it gives temp=):

==========  =====================================  ==========================================
element     generator                              placed
==========  =====================================  ==========================================
resistor    thermal 4kT/R (A^2/Hz)                 across it (also the load and the signal's rs)
BJT         collector shot 2q I_C                  collector to emitter
            base shot 2q I_B, I_B = I_C/beta       internal base B' to emitter
            base flicker 2q I_B fc/f (fc=)         internal base B' to emitter
            thermal of rx 4kT/rx                   base to B'
MOSFET      channel thermal 4kT gamma gm           drain to source (gamma= default 2/3)
            flicker 4kT gamma gm fc/f (fc=)        drain to source
diode       shot 2q I_D                            anode to cathode
op-amp      en^2 (1 + fce/f) (V^2/Hz)              in series with the + input
            in^2 (1 + fci/f) (A^2/Hz)              from each input to ground (two generators)
==========  =====================================  ==========================================

rpi, re, ro, rd are small-signal slopes, not resistors: no thermal noise. Controlled sources,
capacitors and inductors are noiseless. All generators are taken as uncorrelated: the
collector and base shot noise (two currents of one junction, whose correlation grows only
near f_T), a base's shot and flicker noise, the two input currents of an op-amp and its en.

Equivalent input generators. With the input port terminated by the source, a generator k
gives the output H_k and the port voltage and current (into P) v_k, j_k. The two-port
equivalent (noiseless two-port with e in series and i across its input) of generator k is

    e_k = H_k / Av - v_k,        i_k = H_k / (Av Rin) - j_k,

with Av = v_out/v_in and Rin = v_in/i_in of the same (loaded) solve: e_k is the output
with the input shorted referred by Av, i_k the short-circuit current with the part e_k
drives through Rin removed. Then for any source resistance Rs the input-referred noise
is en^2 + 2 Rs Re(C) + Rs^2 in^2, with en^2 = sum S_k |e_k|^2, in^2 = sum S_k |i_k|^2,
C = sum S_k e_k conj(i_k) (every generator except the source's own rs).

Noise figure (IEEE definition, the source at T0 = 290 K):
F = 1 + (output noise of every other generator) / (output noise of rs at T0), NF = 10 log10 F.
Over a band, F_avg is the ratio of the integrals. For a resistive source the minimum is at
Rs_opt = en/in with F_min = 1 + (en in + Re C)/(2 k T0).

References
----------
R. Rohrer, L. Nagel, R. Meyer, L. Weber, "Computationally efficient electronic-circuit noise
calculations", IEEE J. Solid-State Circuits 6(4), 1971 (the adjoint network).
P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, *Analysis and Design of Analog Integrated
Circuits*, 5th ed., chapter 11 (device noise models, equivalent input generators, noise
figure and optimum source resistance), from memory.
C. D. Motchenbacher, J. A. Connelly, *Low-Noise Electronic System Design*, Wiley, 1993,
chapters 2 and 4 (en-in model with correlation, optimum source resistance), from memory.
IEEE Std 161-1963 / H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32, 1944
(noise factor at T0 = 290 K), from memory.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solver.analysis import frequency as fq
from solver.analysis import scenarios as table
from solver.circuit.devices import BOLTZMANN, ELEMENTARY_CHARGE, thermal_voltage
from solver.circuit.elements import VCCS, VCVS, Nullor, Resistor
from solver.circuit.model import Circuit
from solver.circuit.views import SIG_INT, small_signal_elements
from solver.engine.mna import assemble

#: the temperature of every element without temp= (the one V_T = kT/q uses)
T_DEFAULT = 300.0
#: the reference temperature of the noise figure (IEEE)
T0 = 290.0
#: the channel-noise factor of a long-channel MOSFET in saturation (Gray et al., ch. 11, from memory)
GAMMA_LONG = 2.0 / 3.0
#: the kinds of generator, as the contributions table names them
KINDS = ("thermal", "shot", "flicker", "en", "in")
#: what the analysis assumes, for the reports
ASSUMPTIONS = ("all noise generators are uncorrelated: collector and base shot noise of a BJT "
               "(their correlation matters only near f_T), a base's shot and flicker noise, an "
               "op-amp's en and the in of its two inputs; en and in of the circuit share "
               "generators (one collector current appears in both), and that correlation is computed",
               "rpi, re, ro and rd are small-signal slopes and carry no thermal noise; controlled "
               "sources, capacitors and inductors are noiseless",
               "densities are one-sided; elements are at 300 K unless they give temp=, the source "
               "at T0 = 290 K for the noise figure")
_BATCH_BYTES = 48 * 2 ** 20
#: the generators' transfers are worked on in blocks of about this size (within a CPU cache)
_BLOCK_BYTES = 2 ** 20


@dataclass(frozen=True)
class Source:
    """One noise generator: its density and where it enters the stamped system.

    psd(f) = white * (flat + corner / f): a white generator has flat=1 (and an optional
    flicker corner folded in, as for an op-amp's en), a flicker generator flat=0.
    ``injection`` is the right-hand side b_k as (unknown index, coefficient) pairs.
    """

    element: str
    kind: str
    where: str
    white: float
    injection: tuple
    flat: float = 1.0
    corner: float = 0.0
    temp: float | None = None
    is_signal: bool = False

    def psd(self, f: np.ndarray) -> np.ndarray:
        f = np.asarray(f, float)
        return self.white * (self.flat + self.corner / f)


# --- the generators ----------------------------------------------------------------------------
def _between(st, a: str, b: str) -> tuple:
    """A current generator from node a through itself to node b: b = -e_a + e_b."""
    out = []
    ia, ib = st.node(a), st.node(b)
    if ia is not None:
        out.append((ia, -1.0))
    if ib is not None:
        out.append((ib, 1.0))
    return tuple(out)


class _ControlColumn:
    """A stamper that records one element's coefficients of one control node's voltage.

    A voltage generator e in series with a controlling input turns v(inp) into v(inp) + e in
    that element's equations, i.e. adds (column of inp) * e on the left: the excitation is
    minus that column. Recording the element's own stamp keeps this true for every form of
    op-amp (nullor, flat gain, single pole) without restating their stamps.
    """

    def __init__(self, st, target: str):
        self.st, self.target, self.entries = st, target, {}

    def node(self, name):
        return "ctrl" if name == self.target else self.st.node(name)

    def branch(self, e):
        return self.st.branch(e)

    def value(self, e):
        return e.value

    def recip(self, e):
        return 1.0 / e.value

    def g(self, r, c, v):
        if c == "ctrl" and r is not None and r != "ctrl":
            self.entries[r] = self.entries.get(r, 0.0) + v

    c = g

    def rhs(self, r, v):
        pass


def _thermal(c: Circuit, name: str, element: str, where: str, r: float, st, a: str, b: str) -> Source | None:
    spec = c.noise.get(name, {})
    if spec.get("off"):
        return None
    t = spec.get("temp", T_DEFAULT)
    return Source(element, "thermal", where, 4 * BOLTZMANN * t / abs(r), _between(st, a, b), temp=t,
                  is_signal=where == "rs")


def noise_sources(c: Circuit, st) -> list[Source]:
    """Every noise generator of the circuit, its injection numbered by the stamper ``st``.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 1k, noise=off\\n"
    ...           "load RL (a, gnd) 1k\\n")
    >>> sorted((s.element, s.kind, s.where) for s in noise_sources(c, _system(c)[0].stamper))
    [('RL', 'thermal', ''), ('VS', 'thermal', 'rs')]
    """
    out: list[Source | None] = []
    q = ELEMENTARY_CHARGE
    sig = c.signal
    if sig is not None:
        p, n = sig.nodes
        if sig.kind == "V" and sig.rs > 0:
            out.append(_thermal(c, f"{sig.name}.rs", sig.name, "rs", sig.rs, st, SIG_INT, p))
        elif sig.kind == "A" and math.isfinite(sig.rs):
            out.append(_thermal(c, f"{sig.name}.rs", sig.name, "rs", sig.rs, st, p, n))
    for e in c.elements:
        if isinstance(e, Resistor) and e.origin == e.name:  # a netlist resistor, not a model's
            out.append(_thermal(c, e.name, e.name, "", e.value, st, *e.nodes))
    if c.load is not None:
        out.append(_thermal(c, c.load.name, c.load.name, "", c.load.value, st, *c.load.nodes))
    for d in c.devices:
        if d.params.get("noise") == 0.0:
            continue
        ss, name = d.ss, d.name
        t = d.params.get("temp", T_DEFAULT)
        if d.is_bjt:
            col, base, em = d.nodes["C"], d.nodes["B"], d.nodes["E"]
            rx = ss.get("rx", 0.0)
            bi = f"{name}:b" if rx > 0 else base
            ib = ss["ic"] / ss["beta"]
            out.append(Source(name, "shot", "collector", 2 * q * ss["ic"], _between(st, col, em)))
            out.append(Source(name, "shot", "base", 2 * q * ib, _between(st, bi, em)))
            if d.params.get("fc", 0.0) > 0:
                out.append(Source(name, "flicker", "base", 2 * q * ib, _between(st, bi, em), 0.0, d.params["fc"]))
            if rx > 0:
                out.append(Source(name, "thermal", "rx", 4 * BOLTZMANN * t / rx, _between(st, base, bi), temp=t))
        elif d.is_mos:
            dr, so = d.nodes["D"], d.nodes["S"]
            white = 4 * BOLTZMANN * t * d.params.get("gamma", GAMMA_LONG) * ss["gm"]
            out.append(Source(name, "thermal", "channel", white, _between(st, dr, so), temp=t))
            if d.params.get("fc", 0.0) > 0:
                out.append(Source(name, "flicker", "channel", white, _between(st, dr, so), 0.0, d.params["fc"]))
        else:
            i_d = ss.get("id")
            if i_d is None:  # rd= given: the forward current that makes that slope, n V_T / rd
                i_d = d.params.get("n", 1.0) * thermal_voltage(t) / ss["rd"]
            out.append(Source(name, "shot", "diode", 2 * q * abs(i_d), _between(st, d.nodes["A"], d.nodes["K"])))
    out.extend(_opamp_sources(c, st))
    return [s for s in out if s is not None and s.injection and s.white > 0]


def _opamp_sources(c: Circuit, st) -> list[Source]:
    out = []
    for name, spec in c.noise.items():
        if spec.get("off") or not ("en" in spec or "in" in spec):
            continue
        el = next(e for e in st.elements
                  if (e.name == name and isinstance(e, (Nullor, VCVS))) or (e.name == f"{name}.gp" and isinstance(e, VCCS)))
        inp, inn = (el.nodes[1], el.nodes[2]) if isinstance(el, Nullor) else el.ctrl
        if spec.get("en", 0.0) > 0:
            col = _ControlColumn(st, inp)
            el.stamp(col)
            inj = tuple((r, -v) for r, v in col.entries.items() if v != 0)
            out.append(Source(name, "en", "+input", spec["en"] ** 2, inj, 1.0, spec.get("fce", 0.0)))
        if spec.get("in", 0.0) > 0:
            gnd = next(iter(sorted(c.ground)))
            for where, node in (("+input", inp), ("-input", inn)):
                out.append(Source(name, "in", where, spec["in"] ** 2, _between(st, node, gnd), 1.0,
                                  spec.get("fci", 0.0)))
    return out


def _system(c: Circuit):
    """The stamped system of the main gain's configuration and its read-out matrix (n, 3)."""
    cfg, reads = table.noise_measurement(c, small_signal_elements(c))
    sys_ = assemble(list(cfg.elements), c.ground)
    ros = [fq._readout(sys_, reads[k]) for k in table.NOISE_READOUTS]
    return sys_, np.stack([r.r for r in ros], 1), np.array([r.r0 for r in ros], complex)


# --- the analysis -------------------------------------------------------------------------------
@dataclass
class Noise:
    """The noise of a circuit at the frequencies ``freqs`` (Hz), all densities one-sided.

    gain            -- Gv (V/V) or, for a current signal, Zt (ohm): the output per unit signal
    output_psd      -- output noise, V^2/Hz, every generator, load in place
    input_psd       -- output_psd / |gain|^2: V^2/Hz (A^2/Hz for a current signal)
    en2, in2, corr  -- the equivalent input generators (V^2/Hz, A^2/Hz) and C = E[e conj(i)] (V A/Hz)
    nf_db           -- spot noise figure for the signal's rs (inf without a noisy rs)
    rs_opt, nf_min_db -- the optimum source resistance en/in and the noise figure there
    power           -- per generator: output noise power over the band (V^2), or at the one
                       frequency (V^2/Hz) when there is no band
    """

    freqs: np.ndarray
    sources: list[Source]
    gain: np.ndarray
    output_psd: np.ndarray
    input_psd: np.ndarray
    en2: np.ndarray
    in2: np.ndarray
    corr: np.ndarray
    nf_db: np.ndarray
    rs_opt: np.ndarray
    nf_min_db: np.ndarray
    power: np.ndarray
    signal_psd_t0: np.ndarray  # the output noise of rs at T0 (V^2/Hz), zero without rs
    totals: dict = field(default_factory=dict)
    at_index: int = 0
    current_signal: bool = False

    @property
    def band(self) -> bool:
        return len(self.freqs) > 1


def band_integral(freqs: np.ndarray, psd: np.ndarray) -> np.ndarray:
    """The integral of ``psd`` over ``freqs`` (along axis 0), exact for piecewise power laws.

    Between two grid points the density is taken as S = S_a (f/f_a)^alpha through both end
    values (a straight line on log-log axes), which is what white, 1/f and the 1/f^2 roll-off
    of a pole are. With P = S f that integral is ln(f_b/f_a) times the logarithmic mean of
    P_a and P_b, (P_b - P_a)/ln(P_b/P_a); where an end value is zero, the arithmetic mean
    (the trapezoid in ln f).

    Examples
    --------
    >>> f = np.logspace(0, 3, 7)
    >>> round(float(band_integral(f, 1.0 / f)), 12) == round(3 * math.log(10), 12)   # 1/f: exact
    True
    >>> round(float(band_integral(f, np.ones(7))), 9)   # white: f_b - f_a
    999.0
    """
    f = np.asarray(freqs, float)
    S = np.asarray(psd, float)
    if f.size < 2:
        return np.zeros(S.shape[1:])
    P = S * f.reshape((-1,) + (1,) * (S.ndim - 1))
    pa, pb = P[:-1], P[1:]
    lr = np.log(f[1:] / f[:-1]).reshape((-1,) + (1,) * (S.ndim - 1))
    with np.errstate(all="ignore"):
        lp = np.log(P)
        d = lp[1:] - lp[:-1]
        mean = np.where(np.abs(d) > 1e-9, (pb - pa) / d, 0.5 * (pa + pb))
    mean = np.where(np.isfinite(d), mean, 0.5 * (pa + pb))  # a zero end value: the trapezoid
    return np.sum(lr * mean, axis=0)


def analyse(c: Circuit, freqs, dense: bool | None = None) -> Noise:
    """The noise of ``c`` (small-signal parameters known) at ``freqs`` (Hz, positive).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R2 (a, gnd) 1k\\noutput (a, gnd)\\n")
    >>> nz = analyse(c, np.array([1e3]))
    >>> round(float(np.sqrt(nz.output_psd[0]) * 1e9), 4)  # sqrt(4 k 300 K * 500 ohm), nV/rtHz
    2.8782
    >>> round(float(nz.nf_db[0]), 4)  # R2 at 300 K against rs at 290 K: F = 1 + 300/290
    3.0845
    """
    freqs = np.atleast_1d(np.asarray(freqs, float))
    if not np.all(freqs > 0):
        raise ValueError("noise is computed at positive frequencies")
    sys_, R, r0 = _system(c)
    plan = _TransferPlan(noise_sources(c, sys_.stamper))
    srcs = plan.srcs  # in the plan's order: two-node generators, then one-node, then the rest
    n, K, F = sys_.stamper.size, len(srcs), freqs.size
    white = np.array([s.white for s in srcs])[None, :]
    flat = np.array([s.flat for s in srcs])[None, :]
    corner = np.array([s.corner for s in srcs])[None, :]
    sig_idx = [k for k, s in enumerate(srcs) if s.is_signal]
    t_sig = srcs[sig_idx[0]].temp if sig_idx else None

    gain = np.empty(F, complex)
    out_psd = np.zeros(F)
    sig_t0 = np.zeros(F)
    en2, in2 = np.zeros(F), np.zeros(F)
    corr = np.zeros(F, complex)
    power = np.zeros(K)
    last = None  # each generator's output PSD at the previous batch's last point (band integral)
    b = sys_.b
    step = max(1, _BATCH_BYTES // (16 * 3 * max(n, 1)))
    for k0 in range(0, F, step):
        fk = freqs[k0:k0 + step]
        nf = fk.size
        sl = slice(k0, k0 + nf)
        Y = fq.solve_many_adjoint(sys_, 2j * np.pi * fk, R, dense)  # (f, 3, n)
        sig = Y @ b + r0[None, :]  # the signal's v_out, v_in, i_in per unit, (f, 3)
        gain[sl] = sig[:, 0]
        with np.errstate(all="ignore"):
            a_e = sig[:, 1] / sig[:, 0]            # 1/Av
            a_i = sig[:, 2] / sig[:, 0]            # 1/(Av Rin)
            # the adjoint vectors of e_k = H_k/Av - v_k and i_k = H_k/(Av Rin) - j_k: the
            # combination is made once on n-vectors, not on every generator's transfers
            Y[:, 1] = Y[:, 0] * a_e[:, None] - Y[:, 1]
            Y[:, 2] = Y[:, 0] * a_i[:, None] - Y[:, 2]
        # the generators a block at a time, so that each block's transfers stay in cache
        kstep = max(4, _BLOCK_BYTES // (16 * 3 * nf))
        for j0 in range(0, K, kstep):
            j1 = min(K, j0 + kstep)
            H = plan.apply(Y, j0, j1)  # (f, 3, block)
            H0, e, i = H[:, 0], H[:, 1], H[:, 2]
            S = white[:, j0:j1] * (flat[:, j0:j1] + corner[:, j0:j1] / fk[:, None])  # (f, block)
            p_out = S * (H0.real ** 2 + H0.imag ** 2)
            out_psd[sl] += p_out.sum(axis=1)
            if F == 1:
                power[j0:j1] += p_out[0]
            elif last is None:
                power[j0:j1] += band_integral(fk, p_out)
            else:
                power[j0:j1] += band_integral(np.r_[freqs[k0 - 1], fk], np.vstack([last[None, j0:j1], p_out]))
            if j0 == 0:
                last_next = np.empty(K)
            last_next[j0:j1] = p_out[-1]
            own = [k - j0 for k in sig_idx if j0 <= k < j1]
            if own:
                sig_t0[sl] += p_out[:, own].sum(axis=1) * (T0 / t_sig)
                S[:, own] = 0.0  # the source's own rs is not part of en, in
            en2[sl] += (S * (e.real ** 2 + e.imag ** 2)).sum(axis=1)
            in2[sl] += (S * (i.real ** 2 + i.imag ** 2)).sum(axis=1)
            corr[sl] += (S * e * np.conj(i)).sum(axis=1)
        if K:
            last = last_next
    en2, in2, corr = _negligible(c, en2, in2, corr)
    with np.errstate(all="ignore"):
        input_psd = out_psd / np.abs(gain) ** 2
        sig_out = out_psd - sig_t0 * (t_sig / T0) if sig_idx else out_psd
        f_spot = np.where(sig_t0 > 0, 1 + sig_out / np.where(sig_t0 > 0, sig_t0, 1), np.inf)
        nf_db = 10 * np.log10(f_spot)
        rs_opt = np.sqrt(en2 / in2)
        f_min = 1 + (np.sqrt(en2 * in2) + corr.real) / (2 * BOLTZMANN * T0)
        nf_min_db = 10 * np.log10(f_min)
    nz = Noise(freqs, srcs, gain, out_psd, input_psd, en2, in2, corr, nf_db, rs_opt, nf_min_db, power,
               sig_t0, current_signal=c.signal.kind == "A")
    nz.at_index = _midband(freqs, gain)
    nz.totals = _totals(c, nz)
    return nz


class _TransferPlan:
    """B^T Y, the transfers of every generator from the adjoint solutions, as gathers.

    Most generators are a current between two nodes (b = e_b - e_a: H = Y[b] - Y[a]) or from a
    node to ground (H = +-Y[a]); those take one or two gathers and no products. The rest (an
    op-amp's en, whose injection is its own stamp's column) are summed entry by entry. The
    generators are put in that order (``srcs``), so each kind fills one slice of H.
    """

    def __init__(self, srcs: list[Source]):
        def kind(s):
            inj = s.injection
            if len(inj) == 2 and inj[0][1] == -1.0 and inj[1][1] == 1.0:
                return 0
            if len(inj) == 1 and inj[0][1] in (1.0, -1.0):
                return 1
            return 2
        kinds = [kind(s) for s in srcs]
        self.srcs = [s for k in (0, 1, 2) for s, kk in zip(srcs, kinds) if kk == k]
        self.n_pair = kinds.count(0)
        self.n_single = kinds.count(1)
        pairs = self.srcs[:self.n_pair]
        singles = self.srcs[self.n_pair:self.n_pair + self.n_single]
        self.rb = np.array([s.injection[1][0] for s in pairs], dtype=np.intp)
        self.ra = np.array([s.injection[0][0] for s in pairs], dtype=np.intp)
        self.r1 = np.array([s.injection[0][0] for s in singles], dtype=np.intp)
        self.neg = np.array([s.injection[0][1] < 0 for s in singles], dtype=bool)
        self.other = self.srcs[self.n_pair + self.n_single:]

    def apply(self, Y: np.ndarray, lo: int = 0, hi: int | None = None) -> np.ndarray:
        """Y (f, m, n) -> H (f, m, hi - lo), the transfers of generators lo to hi."""
        hi = len(self.srcs) if hi is None else hi
        p, q = self.n_pair, self.n_pair + self.n_single
        H = np.empty(Y.shape[:2] + (hi - lo,), complex)
        a, z = max(lo, 0), min(hi, p)
        if a < z:
            np.subtract(np.take(Y, self.rb[a:z], axis=2), np.take(Y, self.ra[a:z], axis=2),
                        out=H[:, :, a - lo:z - lo])
        a, z = max(lo, p), min(hi, q)
        if a < z:
            part = np.take(Y, self.r1[a - p:z - p], axis=2)
            neg = self.neg[a - p:z - p]
            if neg.any():
                part[:, :, neg] *= -1
            H[:, :, a - lo:z - lo] = part
        for k in range(max(lo, q), hi):
            H[:, :, k - lo] = sum(v * Y[:, :, r] for r, v in self.srcs[k].injection)
        return H


def _negligible(c: Circuit, en2, in2, corr):
    """Zero a generator that is round-off against the other one.

    An input at a virtual ground (an ideal op-amp's summing node) has Av -> infinity: its en
    is zero in the limit, and what the arithmetic leaves is round-off (1e-40 V/√Hz) that
    would make a meaningless correlation. Likewise in for an input that draws no current.
    The scale is the source resistance (or |Rin| when there is none): a generator whose
    share en^2 or Rs^2 in^2 is below 1e-20 of the other is taken as zero.
    """
    rs = c.signal.rs
    r = rs if 0 < rs < math.inf else 1.0
    tiny_e = en2 < 1e-20 * in2 * r * r
    tiny_i = in2 * r * r < 1e-20 * en2
    en2 = np.where(tiny_e, 0.0, en2)
    in2 = np.where(tiny_i, 0.0, in2)
    return en2, in2, np.where(tiny_e | tiny_i, 0j, corr)


def _midband(freqs: np.ndarray, gain: np.ndarray) -> int:
    """The index where the optimum is reported: the middle of the flat top of |gain| on the grid
    (the whole sweep for a frequency-independent circuit), else the sweep's middle point."""
    if freqs.size == 1:
        return 0
    run = fq._flat_run(freqs, gain)
    if run is None:
        return freqs.size // 2
    return run[len(run) // 2]


def _totals(c: Circuit, nz: Noise) -> dict:
    """Integrated band totals (None without a band) and the signal-to-noise ratio.

    The output power is the sum of the generators' own band integrals (so the contributions
    add up to it); the average noise factor is the ratio of the band integrals of the other
    generators' and of the source's (at T0) output noise (IEEE average noise figure).
    """
    if not nz.band:
        return {"band_hz": [float(nz.freqs[0])] * 2, "output_rms": None, "input_rms": None,
                "nf_db": float(nz.nf_db[0]), "snr_db": None}
    out2 = float(np.sum(nz.power))
    in2 = float(band_integral(nz.freqs, nz.input_psd))
    own = float(sum(p for s, p in zip(nz.sources, nz.power) if s.is_signal))
    t_sig = next((s.temp for s in nz.sources if s.is_signal), None)
    s0 = own * T0 / t_sig if t_sig else 0.0
    nf = 10 * math.log10(1 + (out2 - own) / s0) if s0 > 0 else math.inf
    g = abs(nz.gain[nz.at_index])
    amp = abs(c.signal.value)
    snr = 20 * math.log10(g * amp / math.sqrt(2) / math.sqrt(out2)) if out2 > 0 and amp > 0 and g > 0 else None
    return {"band_hz": [float(nz.freqs[0]), float(nz.freqs[-1])], "output_rms": math.sqrt(out2),
            "input_rms": math.sqrt(in2), "nf_db": nf, "snr_db": snr}


def contributions(nz: Noise) -> list[dict]:
    """Each generator's share of the output noise power (over the band, or at the one frequency),
    largest first; generators of one element, kind and place are one row."""
    total = float(np.sum(nz.power))
    rows: dict[tuple, float] = {}
    for s, p in zip(nz.sources, nz.power):
        key = (s.element, s.kind, s.where)
        rows[key] = rows.get(key, 0.0) + float(p)
    out = [{"element": e, "kind": k, "where": w, "share": (p / total if total > 0 else 0.0), "power": p}
           for (e, k, w), p in rows.items()]
    out.sort(key=lambda r: -r["share"])
    return out
