"""The DC operating point of many value sets at once: batched Newton–Raphson.

The same method as :mod:`solver.analysis.bias` (companion models of the nonlinear
devices at the present junction voltages, stamped with the linear DC view; logarithmic
junction limiting; the convergence tests of that module), with every quantity an array
over the samples: the linear part is stamped once (:class:`solver.engine.batch.BatchStamper`),
the devices' currents and Jacobians are the models of :mod:`solver.circuit.dcmodels`
written over arrays, and each iteration solves all stacked systems in one LAPACK call.
A sample that has converged drops out of the iteration; one that does not converge in
:data:`MAX_ITER` iterations is reported (the caller falls back to the one-at-a-time solve
with its gmin and source stepping).

Small-signal parameters follow from the operating points by the bias form of
:func:`solver.circuit.devices.small_signal` (gm = |I_C|/V_T, rπ = β/gm, ro = V_A/|I_C|;
MOSFET gm = 2|I_D|/V_ov, ro = 1/(λ|I_D|); diode rd = n V_T/|I_D|), also over arrays.

References
----------
J. Vlach, K. Singhal, *Computer Methods for Circuit Analysis and Design*, 2nd ed.,
chapters on nonlinear DC analysis (from memory); Sedra & Smith, *Microelectronic
Circuits*, 7th ed., sections 6.1-6.4 (the models and regions), from memory.
"""
from __future__ import annotations

import math

import numpy as np

from solver.analysis import bias as B
from solver.circuit import dcmodels as dm
from solver.circuit.devices import BOLTZMANN, ELEMENTARY_CHARGE
from solver.engine.batch import BatchStamper, solve_stacked

MAX_ITER = 60


def _vt(temp):
    """V_T = k T / q, written as solver.circuit.devices.thermal_voltage (bit for bit), over arrays."""
    return BOLTZMANN * temp / ELEMENTARY_CHARGE


def _threshold(v_ref, i_s, vt):
    """dcmodels' region threshold (the junction voltage carrying v_ref's reference current) over arrays."""
    return v_ref * vt / dm._VT_REF + vt * np.log(dm._I_S_REF / i_s)


def _exp_lin(x):
    cap = dm.EXP_MAX
    e = np.exp(np.minimum(x, cap))
    return np.where(x <= cap, e, e * (1.0 + x - cap)), e


def _limit_junction(v_new, v_old, nvt, vcrit):
    """dm.limit_junction over arrays."""
    big = (v_new > vcrit) & (np.abs(v_new - v_old) > 2.0 * nvt)
    with np.errstate(invalid="ignore", divide="ignore"):
        arg = 1.0 + (v_new - v_old) / nvt
        from_old = np.where(arg > 0, v_old + nvt * np.log(np.where(arg > 0, arg, 1.0)), vcrit)
        from_zero = nvt * np.log(np.where(v_new > 0, v_new, 1.0) / nvt)
    limited = np.where(v_old > 0, from_old, from_zero)
    return np.where(big, limited, v_new)


class _Dev:
    """One device over the samples: parameters as arrays, terminals as unknown indices."""

    def __init__(self, dev, params: dict, st):
        self.dev, self.p = dev, params
        if dev.is_bjt:
            self.kind, self.pol = "bjt", 1 if dev.kind == "npn" else -1
            ref, terms = dev.nodes["E"], (dev.nodes["C"], dev.nodes["B"])
            self.vt = _vt(params.get("temp", 300.0))
            self.i_s = params.get("is", 1e-15)
            self.bf, self.br = params.get("beta", 100.0), params.get("beta_r", 1.0)
            self.va = params.get("va", math.inf)
            self.vcrit = self.vt * np.log(self.vt / (math.sqrt(2.0) * self.i_s))
        elif dev.is_mos:
            self.kind, self.pol = "mos", 1 if dev.kind == "nmos" else -1
            ref, terms = dev.nodes["S"], (dev.nodes["D"], dev.nodes["G"])
            vth = params["vth"]
            self.vth = vth if self.pol > 0 else np.abs(vth)
            self.k, self.lam = params["k"], params.get("lambda", 0.0)
        else:
            self.kind, self.pol = "diode", 1
            ref, terms = dev.nodes["K"], (dev.nodes["A"],)
            self.vt = _vt(params.get("temp", 300.0))
            self.i_s, self.n = params.get("is", 1e-14), params.get("n", 1.0)
            self.nvt = self.n * self.vt
            self.vcrit = self.nvt * np.log(self.nvt / (math.sqrt(2.0) * self.i_s))
        self.ref = st.node(ref)
        self.terms = [st.node(t) for t in terms]

    def take(self, idx):
        """The same device restricted to samples ``idx`` (array parameters sliced)."""
        new = object.__new__(_Dev)
        for k, v in self.__dict__.items():
            setattr(new, k, v[idx] if isinstance(v, np.ndarray) and v.ndim == 1 else v)
        return new

    def controls(self, x):
        r = x[:, self.ref] if self.ref is not None else 0.0
        return np.stack([(x[:, t] if t is not None else 0.0) - r + np.zeros(x.shape[0]) for t in self.terms], 1)

    def evaluate(self, u):
        """Currents into the terminals (n, nt) and the Jacobian (n, nt, nt) in the controls."""
        if self.kind == "bjt":
            s = self.pol
            vce, vbe = u[:, 0], u[:, 1]
            vbe_n, vbc_n = s * vbe, s * (vbe - vce)
            ebe, dbe = _exp_lin(vbe_n / self.vt)
            ebc, dbc = _exp_lin(vbc_n / self.vt)
            dbe, dbc = dbe / self.vt, dbc / self.vt
            inv_va = np.where(np.isinf(self.va), 0.0, 1.0 / self.va)
            early = 1.0 + (vbe_n - vbc_n) * inv_va
            transport = self.i_s * (ebe - ebc)
            ic = transport * early - self.i_s / self.br * (ebc - 1.0)
            ib = self.i_s / self.bf * (ebe - 1.0) + self.i_s / self.br * (ebc - 1.0)
            dic_dvbe = self.i_s * dbe * early + transport * inv_va
            dic_dvbc = -self.i_s * dbc * early - transport * inv_va - self.i_s / self.br * dbc
            dib_dvbe = self.i_s / self.bf * dbe
            dib_dvbc = self.i_s / self.br * dbc
            jac = np.stack([np.stack([-dic_dvbc, dic_dvbe + dic_dvbc], 1),
                            np.stack([-dib_dvbc, dib_dvbe + dib_dvbc], 1)], 1)
            return np.stack([s * ic, s * ib], 1), jac
        if self.kind == "mos":
            s = self.pol
            i, gm, gds = self._nmos(s * u[:, 1], s * u[:, 0])[:3]
            z = np.zeros_like(i)
            jac = np.stack([np.stack([gds, gm], 1), np.stack([z, z], 1)], 1)
            return np.stack([s * i, z], 1), jac
        e, de = _exp_lin(u[:, 0] / self.nvt)
        return (self.i_s * (e - 1.0))[:, None], (self.i_s * de / self.nvt)[:, None, None]

    def dparam(self, u, key):
        """d(terminal currents)/d(parameter ``key``) at fixed controls u, shape (n, nt); None when
        the model has no closed form here (a MOSFET with source and drain exchanged)."""
        if self.kind == "bjt":
            s = self.pol
            vbe_n, vbc_n = s * u[:, 1], s * (u[:, 1] - u[:, 0])
            ebe, _ = _exp_lin(vbe_n / self.vt)
            ebc, _ = _exp_lin(vbc_n / self.vt)
            inv_va = np.where(np.isinf(self.va), 0.0, 1.0 / self.va)
            early = 1.0 + (vbe_n - vbc_n) * inv_va
            transport = self.i_s * (ebe - ebc)
            z = np.zeros_like(ebe)
            if key == "is":
                dic = (ebe - ebc) * early - (ebc - 1.0) / self.br
                dib = (ebe - 1.0) / self.bf + (ebc - 1.0) / self.br
            elif key == "beta":
                dic, dib = z, -self.i_s / self.bf ** 2 * (ebe - 1.0)
            elif key == "beta_r":
                dic = self.i_s / self.br ** 2 * (ebc - 1.0)
                dib = -dic
            elif key == "va":
                dic, dib = transport * -(vbe_n - vbc_n) * inv_va * inv_va, z
            else:
                return None
            return np.stack([s * dic, s * dib], 1)
        if self.kind == "mos":
            s = self.pol
            vgs_n, vds_n = s * u[:, 1], s * u[:, 0]
            if np.any(vds_n < 0):
                return None
            vov = vgs_n - self.vth
            clm = 1.0 + self.lam * vds_n
            sat = (vov > 0) & (vds_n >= vov)
            if not np.all(sat):
                return None
            z = np.zeros_like(vov)
            if key == "k":
                d = 0.5 * vov * vov * clm
            elif key == "vth":  # of the magnitude; a pmos's negative vth= flips the sign
                d = -self.k * vov * clm * (np.sign(self.p["vth"]) if self.pol < 0 else 1.0)
            elif key == "lambda":
                d = 0.5 * self.k * vov * vov * vds_n
            else:
                return None
            return np.stack([s * d, z], 1)
        if key == "is":
            e, _ = _exp_lin(u[:, 0] / self.nvt)
            return (e - 1.0)[:, None]
        if key == "n":
            e, de = _exp_lin(u[:, 0] / self.nvt)
            return (-self.i_s * de * u[:, 0] / (self.n * self.nvt))[:, None]
        return None

    def _nmos(self, vgs, vds):
        """dm._nmos over arrays: (id, gm, gds, saturated, vov)."""
        fwd = vds >= 0
        vgs_f = np.where(fwd, vgs, vgs - vds)
        vds_f = np.where(fwd, vds, -vds)
        vov = vgs_f - self.vth
        on = vov > 0
        sat = on & (vds_f >= vov)
        clm = 1.0 + self.lam * vds_f
        core_s = 0.5 * self.k * vov * vov
        core_t = self.k * (vov * vds_f - 0.5 * vds_f * vds_f)
        i = np.where(sat, core_s * clm, core_t * clm)
        g1 = np.where(sat, self.k * vov * clm, self.k * vds_f * clm)
        g2 = np.where(sat, core_s * self.lam, self.k * (vov - vds_f) * clm + core_t * self.lam)
        i, g1, g2 = (np.where(on, a, 0.0) for a in (i, g1, g2))
        return (np.where(fwd, i, -i), np.where(fwd, g1, -g1), np.where(fwd, g2, g1 + g2), sat, vov)

    def limit(self, u_new, u_old):
        if self.kind == "bjt":
            s = self.pol
            fe, fc = s * u_new[:, 1], s * (u_new[:, 1] - u_new[:, 0])
            le = _limit_junction(fe, s * u_old[:, 1], self.vt, self.vcrit)
            lc = _limit_junction(fc, s * (u_old[:, 1] - u_old[:, 0]), self.vt, self.vcrit)
            # only a junction the limiting moved changes the controls (V_BE - V_BC does not give
            # V_CE back bit for bit, which would count as a limited step for ever)
            moved = ((le != fe) | (lc != fc))[:, None]
            return np.where(moved, np.stack([s * le - s * lc, s * le], 1), u_new)
        if self.kind == "mos":
            return np.stack([np.clip(u_new[:, 0], u_old[:, 0] - 4.0, u_old[:, 0] + 4.0),
                             np.clip(u_new[:, 1], u_old[:, 1] - 2.0, u_old[:, 1] + 2.0)], 1)
        return _limit_junction(u_new[:, :1], u_old[:, :1], self.nvt, self.vcrit)

    def operating(self, u):
        """(in the amplifying region, the bias current's magnitude, vov or None) per sample."""
        i, _ = self.evaluate(u)
        if self.kind == "bjt":
            s = self.pol
            vbe, vbc = s * u[:, 1], s * (u[:, 1] - u[:, 0])
            on = vbe >= _threshold(dm.V_BE_ON, self.i_s, self.vt)
            sat = vbc > _threshold(dm.V_BC_SAT, self.i_s, self.vt)
            return on & ~sat, np.abs(i[:, 0]), None
        if self.kind == "mos":
            s = self.pol
            _, _, _, sat, vov = self._nmos(s * u[:, 1], s * u[:, 0])
            return sat, np.abs(i[:, 0]), vov
        return np.ones(u.shape[0], bool), np.abs(i[:, 0]), None

    def stamp(self, A, b, u0, i0, jac):
        """The companion model (VCCS per Jacobian entry, current source) into A, b."""
        ref = self.ref
        ieq = i0 - np.einsum("kab,kb->ka", jac, u0)
        for a, ta in enumerate(self.terms):
            for c, tc in enumerate(self.terms):
                g = jac[:, a, c]
                for row, sr in ((ta, 1), (ref, -1)):
                    if row is None:
                        continue
                    if tc is not None:
                        A[:, row, tc] += sr * g
                    if ref is not None:
                        A[:, row, ref] -= sr * g
            if ta is not None:
                b[:, ta] -= ieq[:, a]
            if ref is not None:
                b[:, ref] += ieq[:, a]


def solve(c, linear, values: dict, dev_params: dict, n: int, start: dict[str, float]):
    """The operating points of ``n`` samples.

    Parameters
    ----------
    c : Circuit
    linear : list of Element
        The DC view's linear elements (with the floating-node ties).
    values : dict
        Element name -> per-sample values of the linear elements.
    dev_params : dict
        Device name -> its parameters, each a number or a per-sample array.
    start : dict
        Node voltages to start from (the nominal operating point).

    Returns
    -------
    (converged, {device name: (amplifying, |I|, vov)}, x, stamper, devices)
        ``converged`` a boolean array; the device arrays are valid where it is true; x the
        solution vectors (n, size) in the stamper's numbering; the devices as Newton saw them.
    """
    st = BatchStamper(linear, c.ground, values, n).stamp_all()
    G, b0 = st.matrix(0, float), st.rhs_stack(float)
    devs = [_Dev(d, dev_params[d.name], st) for d in c.devices]
    x0 = np.zeros(st.size)
    for name, i in st.nodes.items():
        x0[i] = start.get(name, 0.0)
    u_all = [np.repeat(d.controls(x0[None, :]), n, 0) for d in devs]
    x_all = np.repeat(x0[None, :], n, 0)
    done = np.zeros(n, bool)
    active = np.arange(n)
    first = True
    with np.errstate(all="ignore"):
        for _ in range(MAX_ITER):
            if active.size == 0:
                break
            sub = [d.take(active) for d in devs]
            A, b = G[active], b0[active]  # (fancy indexing: copies)
            us = [u[active] for u in u_all]
            evals = [d.evaluate(u) for d, u in zip(sub, us)]
            for d, u, (i0, jac) in zip(sub, us, evals):
                d.stamp(A, b, u, i0, jac)
            x = solve_stacked(A, b)
            ok = np.all(np.abs(x - x_all[active]) <= B.VNTOL + B.RELTOL * np.abs(x), 1) & (not first)
            ok &= np.all(np.isfinite(x), 1)
            limited = np.zeros(active.size, bool)
            for k, (d, u, (i0, jac)) in enumerate(zip(sub, us, evals)):
                raw = d.controls(x)
                i_true, _ = d.evaluate(raw)
                i_lin = i0 + np.einsum("kab,kb->ka", jac, raw - u)
                err = np.max(np.abs(i_true - i_lin), 1)
                scale = np.max(np.abs(i_true), 1)
                ok &= err <= B.RELTOL * scale + B.ABSTOL
                lim = d.limit(raw, u)
                limited |= np.any(lim != raw, 1)
                u_all[k][active] = lim
            x_all[active] = x
            fin = ok & ~limited
            done[active[fin]] = True
            active = active[~fin]
            first = False
    out = {}
    for d, u in zip(devs, u_all):
        out[d.dev.name] = d.operating(u)
    return done, out, x_all, st, devs


def small_signal(dev, params: dict, current=None, vov=None) -> dict:
    """The small-signal parameters over arrays (the bias form of solver.circuit.devices).

    ``current`` is the solved |I_C| or |I_D| (None: the device gives its own operating point
    in ``params``); ``vov`` the solved overdrive of a MOSFET.
    """
    p = params
    if dev.is_bjt:
        vt = _vt(p.get("temp", 300.0))
        if current is not None:
            ic = current
            gm = ic / vt
        elif "ic" in p:
            ic = np.abs(p["ic"])
            gm = ic / vt
        else:
            gm = p["gm"]
            ic = gm * vt
        if "rpi" in p:
            rpi = p["rpi"]
            beta = gm * rpi
        else:
            beta = p.get("beta", 100.0)
            rpi = beta / gm
        ro = p["ro"] if "ro" in p else (p["va"] / ic if "va" in p else math.inf)
        cmu = p.get("cmu", 0.0)
        cpi = gm / (2 * math.pi * p["ft"]) - cmu if "ft" in p else p.get("cpi", 0.0)
        alpha = beta / (beta + 1)
        return {"gm": gm, "rpi": rpi, "ro": ro, "re": alpha / gm, "beta": beta, "alpha": alpha,
                "rx": p.get("rx", 0.0), "cpi": cpi, "cmu": cmu, "ic": ic, "vt": vt}
    if dev.is_mos:
        if current is not None:
            i_d, v = current, vov
            gm = 2 * i_d / v
        elif "id" in p:
            i_d, v = np.abs(p["id"]), p["vov"]
            gm = 2 * i_d / v
        else:
            gm, i_d = p["gm"], p.get("id")
        if "ro" in p:
            ro = p["ro"]
        elif "lambda" in p and i_d is not None:
            with np.errstate(divide="ignore"):
                ro = np.where(np.asarray(p["lambda"]) == 0, math.inf, 1.0 / (p["lambda"] * i_d))
        else:
            ro = math.inf
        return {"gm": gm, "ro": ro, "gmb": p.get("gmb", 0.0), "cgs": p.get("cgs", 0.0), "cgd": p.get("cgd", 0.0)}
    if "rd" in p and current is None:
        return {"rd": p["rd"], "cj": p.get("cj", 0.0)}
    i_d = current if current is not None else np.abs(p["id"])
    vt = _vt(p.get("temp", 300.0))
    return {"rd": p.get("n", 1.0) * vt / i_d, "cj": p.get("cj", 0.0)}
