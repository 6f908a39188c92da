"""Exact sensitivities through the bias point: the DC solution differentiated implicitly.

At the operating point the DC equations F(x; p) = G(p)·x + S·i(u(x); p) − b(p) = 0 hold
(G, b the linear DC view, i the devices' terminal currents at their control voltages u,
S the scatter of each current into its terminal rows). Differentiating,

    J · dx/dp = −∂F/∂p,   J = G + S·(∂i/∂u)·(∂u/∂x)   (the Newton Jacobian at the solution),

so every DC parameter costs one solve with the factorised J (J. Vlach, K. Singhal,
*Computer Methods for Circuit Analysis and Design*, 2nd ed., chapter on sensitivity, DC
sensitivities of nonlinear networks; from memory). ∂F/∂p of a bias resistor, the load, the
source resistance or a supply comes from the elements' own stamps with dual numbers
(:class:`solver.engine.batch.DualStamper`); of a device parameter (β, β_R, I_S, V_A; k,
V_th, λ; I_S, n) from the closed-form derivative of the device model
(:meth:`solver.analysis.batchbias._Dev.dparam`). The change of each device's current then
moves its small-signal parameters by the bias form (gm = I_C/V_T, rπ = β/gm, re = α/gm,
ro = V_A/I_C; gm = 2 I_D/V_ov, ro = 1/(λ I_D); rd = n V_T/I_D), and the port quantity follows
by the chain rule with the adjoint gradients of those small-signal values
(:func:`solver.analysis.sensitivity.adjoint`), plus the parameter's own small-signal term
when it is also an element of the AC circuit (RC, the load).
"""
from __future__ import annotations

import math

import numpy as np

from solver.analysis import batchbias
from solver.circuit.devices import needs_bias
from solver.engine.batch import DualStamper


def _element_name(k) -> str | None:
    if k.kind in ("element", "load", "supply"):
        return k.target
    if k.kind == "rs":
        return f"{k.target}.rs"
    return None


def bias_chains(c, knobs, linear, start: dict) -> dict:
    """{knob name: (its own AC symbol or None, {small-signal symbol: d(value)/dp})}.

    dQ/dp of any port quantity is then dQ/d(own) + the sum of dQ/dv · dv/dp over the
    small-signal values v (:func:`combine`), so the DC part is solved once for all quantities.

    Parameters
    ----------
    c : Circuit
        As elaborated (devices given by their DC parameters).
    knobs : list of Knob
    linear : list of Element
        The DC view's linear elements (with any floating-node ties).
    start : dict
        The nominal node voltages (the Newton start; the solve converges in a few steps).

    Returns
    -------
    dict
        A knob left out (a MOSFET outside saturation, a parameter without a closed-form
        derivative here) is for the caller to take another way.
    """
    params = {}
    for k in knobs:
        name = _element_name(k)
        if name is not None:
            params[name] = k.name
    st = DualStamper(linear, c.ground, params).stamp_all()
    m = st.size
    G = np.zeros((m, m))
    for r, col, v in st._g:
        G[r, col] += v
    dev_params = {d.name: dict(d.params) for d in c.devices}
    conv, ops, x_all, bst, devs = batchbias.solve(c, linear, {}, dev_params, 1, start)
    if not conv[0] or bst.nodes != st.nodes or bst.branches != st.branches:
        return {}
    x = x_all[0]
    A = G[None].copy()
    scratch = np.zeros((1, m))
    state = []
    for d in devs:
        u = d.controls(x[None])
        i0, jac = d.evaluate(u)
        d.stamp(A, scratch, u, i0, jac)
        state.append((d, u, i0, jac))
    import scipy.linalg as la
    try:
        lu = la.lu_factor(A[0])
    except (ValueError, np.linalg.LinAlgError):
        return {}
    out = {}
    for k in knobs:
        rhs = np.zeros(m)
        own = None
        if k.kind == "device":
            d = next(s for s in state if s[0].dev.name == k.target)
            di = d[0].dparam(d[1], k.key)
            if di is None:
                continue
            own = (k.target, di[0])
            for a, ta in enumerate(d[0].terms):
                if ta is not None:
                    rhs[ta] += di[0, a]
                if d[0].ref is not None:
                    rhs[d[0].ref] -= di[0, a]
        elif k.name in st.dG or k.name in st.db or _element_name(k) is not None:
            for r, col, v in st.dG.get(k.name, ()):
                rhs[r] += v * x[col]
            for r, v in st.db.get(k.name, ()):
                rhs[r] -= v
        else:
            continue
        dx = -la.lu_solve(lu, rhs)
        chain: dict[str, float] = {}
        ok = True
        for d, u, i0, jac in state:
            if not needs_bias(d.dev):
                continue
            du = d.controls(dx[None])[0] - d.controls(np.zeros((1, m)))[0]
            di = jac[0] @ du
            if own is not None and own[0] == d.dev.name:
                di = di + own[1]
            dss = _dss(d, u[0], i0[0], di, du, k)
            if dss is None:
                ok = False
                break
            for key, v in dss.items():
                chain[f"{d.dev.name}.{key}"] = v
        if ok:
            out[k.name] = (_element_name(k) if k.kind in ("element", "load", "rs") else None, chain)
    return out


def combine(chain, ac_grads: dict) -> complex:
    """dQ/dp from a knob's chain (:func:`bias_chains`) and the adjoint gradients dQ/dv."""
    own, parts = chain
    total = complex(ac_grads.get(own, 0j)) if own is not None else 0j
    for sym, v in parts.items():
        g = ac_grads.get(sym)
        if g is not None:
            total += g * v
    return total


def _dss(d, u, i0, di, du, k):
    """d(small-signal parameter)/dp of one device from the change di of its currents."""
    p = d.dev.params
    mine = k.kind == "device" and k.target == d.dev.name
    cur = abs(i0[0])
    dcur = math.copysign(1.0, i0[0]) * di[0] if i0[0] != 0 else di[0]
    if cur == 0:
        return None
    if d.kind == "bjt":
        vt = float(d.vt)
        beta = p.get("beta", 100.0)
        dbeta = 1.0 if mine and k.key == "beta" else 0.0
        gm, dgm = cur / vt, dcur / vt
        out = {"gm": dgm, "rpi": dbeta / gm - beta * dgm / gm ** 2}
        alpha, dalpha = beta / (beta + 1), dbeta / (beta + 1) ** 2
        out["alpha"] = dalpha
        out["re"] = dalpha / gm - alpha * dgm / gm ** 2
        if "ro" not in p and "va" in p and math.isfinite(p["va"]):
            dva = 1.0 if mine and k.key == "va" else 0.0
            out["ro"] = dva / cur - p["va"] * dcur / cur ** 2
        if "ft" in p:
            out["cpi"] = dgm / (2 * math.pi * p["ft"])
        return out
    if d.kind == "mos":
        s = d.pol
        vov = s * u[1] - float(d.vth)
        if not vov > 0:
            return None
        dvth = 0.0
        if mine and k.key == "vth":
            dvth = math.copysign(1.0, p["vth"]) if d.pol < 0 else 1.0
        dvov = s * du[1] - dvth
        out = {"gm": 2 * dcur / vov - 2 * cur * dvov / vov ** 2}
        lam = p.get("lambda", 0.0)
        if "ro" not in p and lam > 0:
            dlam = 1.0 if mine and k.key == "lambda" else 0.0
            out["ro"] = -(dlam * cur + lam * dcur) / (lam * cur) ** 2
        return out
    n = p.get("n", 1.0)
    vt = float(d.vt)
    dn = 1.0 if mine and k.key == "n" else 0.0
    return {"rd": dn * vt / cur - n * vt * dcur / cur ** 2}


def op_chains(c, knobs) -> dict:
    """Chains (as :func:`bias_chains`) of the parameters of devices given by their operating
    point: the bias form's small-signal parameters differentiated in ``ic=``, ``beta=``,
    ``va=`` (BJT) and ``id=``, ``vov=``, ``lambda=`` (MOSFET). A knob not covered is left out."""
    from solver.circuit.devices import thermal_voltage
    out = {}
    for k in knobs:
        if k.kind != "device":
            continue
        dev = c.device(k.target)
        if dev is None or needs_bias(dev):
            continue
        p, ss, key, n = dev.params, dev.ss, k.key, dev.name
        chain = {}
        if dev.is_bjt and "ic" in p and "rpi" not in p:
            vt = thermal_voltage(p.get("temp", 300.0))
            ic, gm, beta, alpha = abs(p["ic"]), ss["gm"], ss["beta"], ss["alpha"]
            sign = math.copysign(1.0, p["ic"])
            if key == "ic":
                dgm = sign / vt
                chain = {"gm": dgm, "rpi": -beta * dgm / gm ** 2, "re": -alpha * dgm / gm ** 2}
                if "va" in p and "ro" not in p and math.isfinite(p["va"]):
                    chain["ro"] = -p["va"] * sign / ic ** 2
                if "ft" in p:
                    chain["cpi"] = dgm / (2 * math.pi * p["ft"])
            elif key == "beta":
                chain = {"rpi": 1.0 / gm, "alpha": 1.0 / (beta + 1) ** 2, "re": 1.0 / ((beta + 1) ** 2 * gm)}
            elif key == "va" and "ro" not in p:
                chain = {"ro": 1.0 / ic}
        elif dev.is_mos and "id" in p and "vov" in p:
            i_d, vov = abs(p["id"]), p["vov"]
            sign = math.copysign(1.0, p["id"])
            lam = p.get("lambda", 0.0)
            if key == "id":
                chain = {"gm": 2 * sign / vov}
                if lam > 0 and "ro" not in p:
                    chain["ro"] = -sign / (lam * i_d ** 2)
            elif key == "vov":
                chain = {"gm": -2 * i_d / vov ** 2}
            elif key == "lambda" and lam > 0 and "ro" not in p:
                chain = {"ro": -1.0 / (lam ** 2 * i_d)}
        if chain:
            out[k.name] = (None, {f"{n}.{s}": v for s, v in chain.items()})
    return out
