"""The DC operating point: Newton–Raphson on the circuit's DC view.

The DC view of a :class:`~solver.circuit.model.Circuit` is its elements with
capacitors open (they stamp only into C, which a DC solve ignores), inductors
shorted (their stamp at s = 0), the signal zeroed (a voltage signal is a 0 V
source behind its rs, a current signal an open with its rs), the supplies at
their values and the load in place.

Each Newton iteration replaces every nonlinear device by its linear companion
model at the present terminal voltages u0: the terminal currents
I(u) ~ I(u0) + J (u - u0) become VCCS primitives (the Jacobian entries J) and
a CurrentSource (I(u0) - J u0), all from :mod:`solver.circuit.elements`, and
:func:`solver.engine.mna.assemble` stamps them with everything else, so every element
keeps its one stamp definition. Junction voltages are limited between
iterations; when plain Newton fails the solve retries with gmin stepping
(a conductance from every node to ground, reduced decade by decade to zero)
and then with source stepping (supplies ramped from zero).

References
----------
J. Vlach, K. Singhal, *Computer Methods for Circuit Analysis and Design*, 2nd ed.,
chapters on nonlinear DC analysis (companion models, limiting, continuation) (from memory).
F. N. Najm, *Circuit Simulation*, Wiley 2010, chapter 5 (gmin and source stepping)
(from memory).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from solver.circuit import dcmodels as dm
from solver.circuit.devices import DeviceError, needs_bias, small_signal, thermal_voltage
from solver.diagnostics import Diagnostic, InputError, Loc
from solver.circuit.elements import (CCVS, VCCS, VCVS, Capacitor, CurrentSource, Element, Inductor, Nullor,
                                     Resistor, VoltageSource)
from solver.circuit.views import dc_elements
from solver.engine.mna import SingularSystem, assemble
from solver.circuit.model import Circuit, Device

MAX_NEWTON = 100        # iterations of plain Newton before the fallbacks
MAX_STEP_NEWTON = 50    # iterations per continuation step
VNTOL = 1e-9            # volts: absolute step tolerance
RELTOL = 1e-9           # relative step tolerance
ABSTOL = 1e-15          # amperes: companion current mismatch tolerance
TIE_OHMS = 1e12         # ties a node without a DC path to ground
GMIN_KEEP = 1e-12       # siemens: the smallest gmin step, kept when gmin = 0 will not converge
AMPLIFYING = {"bjt": "active", "mos": "saturation"}
HIGH_NODE_VOLTS = 120.0  # IEC 61140 ripple-free d.c. extra-low-voltage limit (from memory)


class BiasError(Exception):
    """The bias solve did not converge; ``where`` is the device or node furthest from settling."""

    def __init__(self, message: str, loc: Loc | None = None):
        super().__init__(message)
        self.loc = loc


# --- nonlinear devices -------------------------------------------------------------
class _Nonlinear:
    """A device as Newton sees it: currents into ``terms`` (leaving at ``ref``), controlled by
    the voltages of ``terms`` against ``ref``."""

    dev: Device
    ref: str
    terms: tuple[str, ...]

    def start(self) -> np.ndarray:
        raise NotImplementedError

    def evaluate(self, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        raise NotImplementedError

    def limit(self, u_new: np.ndarray, u_old: np.ndarray) -> np.ndarray:
        return u_new

    def op(self, u: np.ndarray) -> dict:
        raise NotImplementedError

    def controls(self, v: dict[str, float]) -> np.ndarray:
        r = v.get(self.ref, 0.0)
        return np.array([v.get(t, 0.0) - r for t in self.terms])

    def companion(self, u0: np.ndarray) -> list[Element]:
        """VCCS for each Jacobian entry plus the equivalent current source, at ``u0``."""
        i0, jac = self.evaluate(u0)
        name, out = self.dev.name, []
        ieq = i0 - jac @ u0
        for a, ta in enumerate(self.terms):
            for b, tb in enumerate(self.terms):
                out.append(VCCS(f"{name}.dc{a}{b}", (ta, self.ref), float(jac[a, b]), None, name,
                                self.dev.loc, ctrl=(tb, self.ref)))
            out.append(CurrentSource(f"{name}.dc{a}", (ta, self.ref), float(ieq[a]), None, name, self.dev.loc))
        return out


def _vt(dev: Device) -> float:
    temp = dev.params.get("temp", 300.0)
    if not temp > 0:
        raise _param_error(dev, "temp", "temp must be positive (kelvin)")
    return thermal_voltage(temp)


def _param_error(dev: Device, key: str, message: str) -> InputError:
    return InputError([Diagnostic("error", dev.loc, f"{dev.name}: {message}")])


def _positive(dev: Device, key: str, default: float, allow_inf: bool = False) -> float:
    v = dev.params.get(key, default)
    if not (v > 0) or (math.isinf(v) and not allow_inf):
        raise _param_error(dev, key, f"{key} must be positive for the bias solve, got {v:g}")
    return v


class _BJT(_Nonlinear):
    def __init__(self, dev: Device):
        self.dev = dev
        self.pol = 1 if dev.kind == "npn" else -1
        self.m = dm.BJTModel(_positive(dev, "is", 1e-15), _positive(dev, "beta", 100.0),
                             _positive(dev, "beta_r", 1.0), _positive(dev, "va", math.inf, True),
                             _vt(dev), self.pol)
        self.vcrit = dm.critical_voltage(self.m.i_s, self.m.vt)
        self.ref, self.terms = dev.nodes["E"], (dev.nodes["C"], dev.nodes["B"])

    def start(self):
        vbe = self.pol * self.m.vt * math.log1p(1e-4 / self.m.i_s)  # where the junction carries 0.1 mA
        return np.array([vbe, vbe])  # (V_CE, V_BE) with V_BC = 0

    def evaluate(self, u):
        vce, vbe = u
        p = dm.bjt(vbe, vbe - vce, self.m)
        # u = (V_CE, V_BE) and V_BC = V_BE - V_CE
        jac = np.array([[-p.dic_dvbc, p.dic_dvbe + p.dic_dvbc],
                        [-p.dib_dvbc, p.dib_dvbe + p.dib_dvbc]])
        return np.array([p.ic, p.ib]), jac

    def limit(self, u_new, u_old):
        s = self.pol
        vbe = s * dm.limit_junction(s * u_new[1], s * u_old[1], self.m.vt, self.vcrit)
        vbc_old, vbc_new = u_old[1] - u_old[0], u_new[1] - u_new[0]
        vbc = s * dm.limit_junction(s * vbc_new, s * vbc_old, self.m.vt, self.vcrit)
        return np.array([vbe - vbc, vbe])

    def op(self, u):
        vce, vbe = (float(x) for x in u)
        p = dm.bjt(vbe, vbe - vce, self.m)
        return {"region": dm.bjt_region(vbe, vbe - vce, self.pol, self.m.i_s, self.m.vt), "ic": p.ic, "ib": p.ib,
                "ie": -(p.ic + p.ib), "vbe": vbe, "vbc": vbe - vce, "vce": vce,
                "power": p.ic * vce + p.ib * vbe}


class _Diode(_Nonlinear):
    def __init__(self, dev: Device):
        self.dev = dev
        self.m = dm.DiodeModel(_positive(dev, "is", 1e-14), _positive(dev, "n", 1.0), _vt(dev))
        self.nvt = self.m.n * self.m.vt
        self.vcrit = dm.critical_voltage(self.m.i_s, self.nvt)
        self.ref, self.terms = dev.nodes["K"], (dev.nodes["A"],)

    def start(self):
        return np.array([self.nvt * math.log1p(1e-4 / self.m.i_s)])

    def evaluate(self, u):
        i, g = dm.diode(float(u[0]), self.m)
        return np.array([i]), np.array([[g]])

    def limit(self, u_new, u_old):
        return np.array([dm.limit_junction(u_new[0], u_old[0], self.nvt, self.vcrit)])

    def op(self, u):
        v = float(u[0])
        i, _ = dm.diode(v, self.m)
        # conducting from the 0.5 V cut-in of a silicon junction at 1 mA scale (common practice, no source)
        on = v >= self.nvt * math.log1p(1e-6 / self.m.i_s)
        return {"region": "forward" if on else "reverse" if v < 0 else "off", "id": i, "vd": v,
                "power": i * v}


class _MOS(_Nonlinear):
    def __init__(self, dev: Device):
        self.dev = dev
        self.pol = 1 if dev.kind == "nmos" else -1
        missing = [k for k in ("k", "vth") if k not in dev.params]
        if missing:
            raise _param_error(dev, missing[0], "the bias solve needs k= (A/V², k'·W/L) and vth= "
                               f"(missing: {', '.join(m + '=' for m in missing)})")
        lam = dev.params.get("lambda", 0.0)
        if lam < 0:
            raise _param_error(dev, "lambda", "lambda must not be negative")
        # the threshold enters the mirrored (n-type) model as a magnitude for a pmos:
        # vth=-0.8 V (the textbook sign) and vth=0.8 V both mean |V_tp| = 0.8 V
        vth = dev.params["vth"] if self.pol > 0 else abs(dev.params["vth"])
        self.m = dm.MOSModel(_positive(dev, "k", 0.0), vth, lam, self.pol)
        self.ref, self.terms = dev.nodes["S"], (dev.nodes["D"], dev.nodes["G"])

    def start(self):
        vgs = self.pol * (self.m.vth + 1.0)
        return np.array([vgs, vgs])  # (V_DS, V_GS): on and saturated

    def evaluate(self, u):
        vds, vgs = u
        p = dm.mos(vgs, vds, self.m)
        return np.array([p.id, 0.0]), np.array([[p.gds, p.gm], [0.0, 0.0]])

    def limit(self, u_new, u_old):
        return np.array([dm.limit_mos(u_new[0], u_old[0], 4.0), dm.limit_mos(u_new[1], u_old[1], 2.0)])

    def op(self, u):
        vds, vgs = (float(x) for x in u)
        p = dm.mos(vgs, vds, self.m)
        return {"region": p.region, "id": p.id, "vgs": vgs, "vds": vds, "vov": p.vov,
                "power": p.id * vds, "_gm": p.gm, "_gds": p.gds}


def nonlinear_devices(c: Circuit) -> list[_Nonlinear]:
    """Every transistor and diode of the circuit as a Newton companion-model generator."""
    out = []
    for d in c.devices:
        out.append(_BJT(d) if d.is_bjt else _MOS(d) if d.is_mos else _Diode(d))
    return out


# --- the DC view ----------------------------------------------------------------------
def _conducting(e: Element, ground: set[str]):
    """Node pairs an element joins at DC (for the no-DC-path check)."""
    if isinstance(e, Capacitor) or isinstance(e, CurrentSource):
        return []
    if isinstance(e, (Resistor, Inductor, VoltageSource, VCVS, CCVS)):
        return [(e.nodes[0], e.nodes[1])]
    if isinstance(e, Nullor):
        return [(e.nodes[0], next(iter(ground)))]
    return []  # VCCS, CCCS: a current, no voltage path


def floating_ties(c: Circuit, linear: list[Element]) -> tuple[list[Element], list[Diagnostic]]:
    """A 1 TΩ tie to ground for each group of nodes without a DC path to ground, with a warning."""
    parent: dict[str, str] = {}

    def find(n):
        parent.setdefault(n, n)
        while parent[n] != n:
            parent[n] = parent[parent[n]]
            n = parent[n]
        return n

    def join(a, b):
        parent[find(a)] = find(b)

    gnd = "{ground}"
    node_loc: dict[str, Loc | None] = {}
    for e in linear:
        for n in list(e.nodes) + list(getattr(e, "ctrl", ())):
            node_loc.setdefault(n, e.loc)
            find(n)
        for a, b in _conducting(e, c.ground):
            join(a, b)
    for d in c.devices:
        for n in d.nodes.values():
            node_loc.setdefault(n, d.loc)
            find(n)
        ts = list(d.nodes.values()) if not d.is_mos else [d.nodes["D"], d.nodes["S"]]
        for t in ts[1:]:
            join(ts[0], t)
    for g in c.ground:
        join(g, gnd)
    groups: dict[str, list[str]] = {}
    for n in parent:
        if n != gnd and n not in c.ground and find(n) != find(gnd):
            groups.setdefault(find(n), []).append(n)
    ties, warns = [], []
    for nodes in groups.values():
        nodes.sort()
        shown = [n for n in nodes if not n.startswith("{")] or nodes
        ties.append(Resistor(f"{{tie}}{nodes[0]}", (nodes[0], next(iter(c.ground))), TIE_OHMS))
        warns.append(Diagnostic("warning", node_loc.get(nodes[0]),
                                f"node{'s' if len(shown) > 1 else ''} {', '.join(shown)} "
                                f"{'have' if len(shown) > 1 else 'has'} no DC path to ground "
                                "(only capacitors, current sources or gates); the bias solve ties "
                                f"{'them' if len(shown) > 1 else 'it'} to ground through 1 TΩ"))
    return ties, warns


# --- Newton–Raphson ---------------------------------------------------------------------
@dataclass
class _Outcome:
    converged: bool
    v: dict[str, float]
    branches: dict[str, float]
    u: list[np.ndarray]
    iterations: int
    worst_node: tuple[str, float] | None = None
    worst_device: tuple[str, float] | None = None
    reason: str = ""


def _newton(linear, devs, ground, u_start, max_iter, gmin=0.0) -> _Outcome:
    # a wild iterate may overflow to inf or nan: no comparison with it holds, so it never
    # counts as converged, and the next strategy (or the failure message) takes over quietly
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        return _newton_steps(linear, devs, ground, u_start, max_iter, gmin)


def _newton_steps(linear, devs, ground, u_start, max_iter, gmin) -> _Outcome:
    u = [np.array(x, float) for x in u_start]
    v_prev: dict[str, float] | None = None
    extra: list[Element] = []
    if gmin > 0:
        names = {n for e in linear for n in e.nodes} | {n for d in devs for n in d.dev.nodes.values()}
        extra = [Resistor(f"{{gmin}}{n}", (n, next(iter(ground))), 1.0 / gmin)
                 for n in sorted(names - set(ground))]
    worst_node = worst_dev = None
    for it in range(1, max_iter + 1):
        els = linear + extra + [e for d, u0 in zip(devs, u) for e in d.companion(u0)]
        sys_ = assemble(els, ground)
        try:
            x = sys_.solve(0).real
        except SingularSystem:
            return _Outcome(False, v_prev or {}, {}, u, it, worst_node, worst_dev, "singular")
        v = {n: float(x[i]) for n, i in sys_.stamper.nodes.items()}
        branches = {n: float(x[i]) for n, i in sys_.stamper.branches.items()}
        # how far each node moved and how well each companion matched the device
        dv = {n: abs(val - (v_prev or {}).get(n, 0.0)) for n, val in v.items()}
        worst_node = max(dv.items(), key=lambda kv: kv[1]) if dv else None
        ok = v_prev is not None and all(d <= VNTOL + RELTOL * abs(v[n]) for n, d in dv.items())
        new_u, limited, mism = [], False, []
        for d, u0 in zip(devs, u):
            raw = d.controls(v)
            i_true, _ = d.evaluate(raw)
            i0, jac = d.evaluate(u0)
            i_lin = i0 + jac @ (raw - u0)
            err = float(np.max(np.abs(i_true - i_lin)))
            scale = float(np.max(np.abs(i_true))) if i_true.size else 0.0
            mism.append((d.dev.name, err / max(scale, 1e-12)))
            if err > RELTOL * scale + ABSTOL:
                ok = False
            lim = d.limit(raw, u0)
            if np.any(lim != raw):
                limited = True
            new_u.append(lim)
        worst_dev = max(mism, key=lambda kv: kv[1]) if mism else None
        if ok and not limited:
            return _Outcome(True, v, branches, new_u, it, worst_node, worst_dev)
        u, v_prev = new_u, v
    return _Outcome(False, v_prev or {}, {}, u, max_iter, worst_node, worst_dev, "iterations")


@dataclass
class BiasResult:
    """The DC operating point.

    nodes       -- node voltages (V) of the circuit's own nodes
    devices     -- each device's operating point: region, currents (signed), voltages, power
    supplies    -- each voltage supply's current delivered out of its P node (A)
    iterations  -- Newton iterations in all, over every strategy tried
    method      -- "newton", "gmin stepping" or "source stepping"
    warnings    -- Diagnostics found on the way (nodes tied to ground)
    notes       -- cautions and region warnings for the reports
    """

    nodes: dict[str, float]
    devices: dict[str, dict]
    supplies: dict[str, float]
    iterations: int
    method: str
    warnings: list[Diagnostic] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def solve_bias(c: Circuit, strategy: str = "auto", max_iter: int = MAX_NEWTON) -> BiasResult:
    """Solve the DC operating point of a circuit.

    Parameters
    ----------
    c : Circuit
    strategy : {"auto", "newton", "gmin", "source"}
        "auto" tries plain Newton, then gmin stepping, then source stepping;
        the others run just that one (for tests and diagnosis).
    max_iter : int
        Iteration limit of plain Newton.

    Returns
    -------
    BiasResult

    Raises
    ------
    BiasError
        No strategy converged; the message names the node and the device
        furthest from settling.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads('''supply VCC (vcc, gnd) 10 V
    ... signal VS (a, gnd) 1 V, rs=1k
    ... resistor R1 (vcc, a) 9k3
    ... diode D1 (a, gnd)
    ... output (a, gnd)''')
    >>> r = solve_bias(c)
    >>> round(r.nodes["a"], 3), r.devices["D1"]["region"]
    (0.63, 'forward')
    """
    from solver.circuit.topology import check_bias  # source loops, current cut sets, undefined gates: named first
    linear = dc_elements(c)
    errors = [d for d in check_bias(c, linear) if d.severity == "error"]
    if errors:
        raise InputError(errors)
    devs = nonlinear_devices(c)
    ties, warns = floating_ties(c, linear)
    linear = linear + ties
    starts = [d.start() for d in devs]
    total = 0
    tried: list[_Outcome] = []

    def finish(o: _Outcome, method: str) -> BiasResult:
        return _result(c, devs, o, total, method, warns)

    if strategy in ("auto", "newton"):
        o = _newton(linear, devs, c.ground, starts, max_iter)
        total += o.iterations
        if o.converged:
            return finish(o, "newton")
        tried.append(o)
    if strategy in ("auto", "gmin"):
        last, n = _gmin_stepping(linear, devs, c.ground, starts, tried)
        total += n
        if last is not None and last[1] == 0.0:
            return finish(last[0], "gmin stepping")
        if last is not None and last[1] <= GMIN_KEEP:
            # a node the device models leave undetermined (e.g. every device at it cut off):
            # keep the last conductance and say so
            r = finish(last[0], "gmin stepping")
            r.notes.append(f"note: the bias point needed {last[1] * 1e12:g} pS from every node to ground "
                           "to converge (a node is not fixed by the devices, e.g. all of them cut off "
                           "there); treat the voltages of such nodes as undetermined.")
            return r
    if strategy in ("auto", "source"):
        o, n = _source_stepping(c, ties, devs, tried)
        total += n
        if o is not None:
            return finish(o, "source stepping")
    raise _failure(c, tried, total)


def _gmin_stepping(linear, devs, ground, starts, tried) -> tuple[tuple | None, int]:
    """Newton with a conductance from every node to ground, reduced decade by decade to zero.

    Returns ((last converged outcome, its gmin) or None, iterations); failures go to ``tried``.
    """
    u, last, total = starts, None, 0
    for gmin in [10.0 ** -k for k in range(2, 13)] + [0.0]:
        o = _newton(linear, devs, ground, u, MAX_STEP_NEWTON, gmin)
        total += o.iterations
        if not o.converged:
            tried.append(o)
            break
        u, last = o.u, (o, gmin)
    return last, total


def _source_stepping(c: Circuit, ties, devs, tried) -> tuple[_Outcome | None, int]:
    """Newton with the supplies ramped from zero: the step cut by 4 on failure, doubled on success.

    Returns (the outcome at full supply or None, iterations); failures go to ``tried``.
    """
    u, lam, step, total = [d.start() * 0 for d in devs], 0.0, 0.1, 0
    while step >= 1e-4:
        nxt = min(1.0, lam + step)
        o = _newton(dc_elements(c, nxt) + ties, devs, c.ground, u, MAX_STEP_NEWTON)
        total += o.iterations
        if o.converged:
            lam, u = nxt, o.u
            step = min(step * 2, 0.25)
            if lam >= 1.0:
                return o, total
        else:
            tried.append(o)
            step /= 4
    return None, total


def _failure(c: Circuit, tried: list[_Outcome], total: int) -> BiasError:
    o = tried[0] if tried else None
    parts = [f"the bias solve did not converge ({total} Newton iterations: plain Newton, gmin stepping, "
             "source stepping)"]
    loc = None
    if o is not None:
        if o.reason == "singular":
            parts.append("the DC circuit is singular (a loop of voltage sources or a node fed only by "
                         "current sources?)")
        if o.worst_node:
            parts.append(f"node '{o.worst_node[0]}' moved {o.worst_node[1]:.3g} V in the last iteration")
        if o.worst_device:
            name = o.worst_device[0]
            parts.append(f"{name} is furthest from settling (current mismatch {o.worst_device[1]:.3g} of its current)")
            dev = next((d for d in c.devices if d.name == name), None)
            loc = dev.loc if dev else None
    return BiasError("; ".join(parts), loc)


def _result(c, devs, o: _Outcome, total, method, warns) -> BiasResult:
    devices = {}
    for d in devs:
        u = d.controls(o.v)
        devices[d.dev.name] = d.op(u)
    nodes = {n: v for n, v in sorted(o.v.items()) if not n.startswith("{")}
    supplies = {s.name: -o.branches[s.name] for s in c.supplies if s.kind == "V" and s.name in o.branches}
    return BiasResult(nodes, devices, supplies, total, method, list(warns))


# --- from the operating point to small-signal parameters ---------------------------------
def amplifying(dev: Device, op: dict) -> bool:
    """True when the device's operating point is in its amplifying region (BJT active, MOS saturation)."""
    region = op.get("region")
    if dev.is_bjt:
        return region == AMPLIFYING["bjt"]
    if dev.is_mos:
        return region == AMPLIFYING["mos"]
    return True


def bias_small_signal(dev: Device, op: dict) -> dict[str, float]:
    """Small-signal parameters of a bias-solved device at its operating point ``op``.

    In its amplifying region the core's bias form applies with the solved
    operating point (gm = |I_C|/V_T, rπ = β/gm, ro = V_A/|I_C|; MOSFET
    gm = 2|I_D|/V_ov, ro = 1/(λ|I_D|); diode rd = n V_T/|I_D|), so a netlist
    that states the solved ic= gives the same port quantities. A MOSFET in
    triode or cutoff (reached only with --force) takes the exact derivatives
    of the square law instead, since 2 I_D/V_ov has no meaning there.
    """
    if dev.is_mos and op.get("region") != "saturation":
        gds = op["_gds"]
        return {"gm": op["_gm"], "ro": math.inf if gds == 0 else 1.0 / gds,
                "gmb": dev.params.get("gmb", 0.0), "cgs": dev.params.get("cgs", 0.0),
                "cgd": dev.params.get("cgd", 0.0), "id": abs(op["id"]), "vov": op["vov"]}
    shadow = replace(dev, params={k: v for k, v in dev.params.items()
                                  if k not in ("k", "vth", "is", "beta_r", "pmax")}, ss={})
    point = dict(op)
    if dev.is_bjt and op["ic"] == 0:
        point["ic"] = 1e-30  # a device with no current at all: gm = 0 in effect
    if not dev.is_bjt and not dev.is_mos and op["id"] == 0:
        point["id"] = 1e-30
    try:
        return small_signal(shadow, point)
    except DeviceError as e:
        raise InputError([Diagnostic("error", dev.loc, f"{dev.name}: {e}")]) from None


def biased(c: Circuit, res: BiasResult) -> Circuit:
    """The circuit with every bias-solved device's small-signal parameters from ``res``.

    A new :class:`~solver.circuit.model.Circuit` (and new devices); ``c`` is left as it was.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads('''supply VCC (vcc, gnd) 12 V
    ... signal VS (b, gnd) 1 mV, rs=1k
    ... resistor RB (vcc, b) 470k
    ... resistor RC (vcc, c) 2k2
    ... npn Q1 (c, b, gnd) beta=100
    ... output (c, gnd)''')
    >>> r = solve_bias(c); b = biased(c, r)
    >>> b.values["Q1.gm"] == r.devices["Q1"]["ic"] / thermal_voltage(300.0), c.devices[0].ss
    (True, {})
    """
    devices, values = [], dict(c.values)
    for d in c.devices:
        if needs_bias(d):
            ss = bias_small_signal(d, res.devices[d.name])
            d = replace(d, ss=ss)
            values.update({f"{d.name}.{k}": v for k, v in ss.items()})
        devices.append(d)
    resolver = c.resolver.rebound(devices) if c.resolver is not None else None
    return replace(c, devices=devices, values=values, resolver=resolver)


def cautions(c: Circuit, res: BiasResult) -> list[str]:
    """Power beyond a user's pmax= and node voltages beyond the extra-low-voltage band."""
    out = []
    for d in c.devices:
        pmax = d.params.get("pmax")
        power = res.devices[d.name].get("power", 0.0)
        if pmax is not None and abs(power) > pmax:
            out.append(f"caution: {d.name} dissipates {power:.4g} W, above its pmax={pmax:g} W.")
    high = [(n, v) for n, v in res.nodes.items() if abs(v) > HIGH_NODE_VOLTS]
    # a high supply is flagged by solver.output.report.safety_notes; this catches stacked supplies
    # and current supplies, whose voltage is only known after the bias solve
    if high and not any(s.kind == "V" and abs(s.value) > HIGH_NODE_VOLTS for s in c.supplies):
        n, v = max(high, key=lambda kv: abs(kv[1]))
        out.append(f"caution: node {n} sits at {v:.4g} V, above the {HIGH_NODE_VOLTS:g} V d.c. "
                   "extra-low-voltage limit (IEC 61140): hazardous voltage, follow local codes.")
    return out


def region_problems(c: Circuit, res: BiasResult) -> list[Device]:
    """Bias-solved transistors that are not in their amplifying region."""
    return [d for d in c.transistors if needs_bias(d) and not amplifying(d, res.devices[d.name])]


def region_text(d: Device, op: dict) -> str:
    if d.is_bjt:
        return (f"{d.name} is in {op['region']} (V_BE = {op['vbe']:.4g} V, V_CE = {op['vce']:.4g} V, "
                f"I_C = {op['ic']:.4g} A)")
    return (f"{d.name} is in {op['region']} (V_GS = {op['vgs']:.4g} V, V_DS = {op['vds']:.4g} V, "
            f"I_D = {op['id']:.4g} A)")


def bias_circuit(c: Circuit, force: bool = False) -> tuple[Circuit, BiasResult]:
    """Solve the bias and check the regions (what every small-signal command runs first).

    Parameters
    ----------
    c : Circuit
    force : bool
        Accept transistors outside their amplifying region (the notes warn).

    Returns
    -------
    (Circuit, BiasResult)
        The biased circuit (:func:`biased`) and the operating point, whose notes carry
        the cautions and any region warnings. ``c`` itself is not changed.

    Raises
    ------
    InputError
        The solve did not converge, or a transistor is outside its amplifying
        region and ``force`` is false (one diagnostic per device, at its line).
    """
    try:
        res = solve_bias(c)
    except BiasError as e:
        raise InputError([Diagnostic("error", e.loc or Loc(c.file, 1, 1), str(e))]) from None
    res.notes.extend(cautions(c, res))
    bad = region_problems(c, res)
    if bad and not force:
        raise InputError([Diagnostic("error", d.loc, region_text(d, res.devices[d.name]) + "; the small-signal "
                                     f"model needs the {'active' if d.is_bjt else 'saturation'} region. Fix the "
                                     "bias (see 'portwise bias FILE') or use --force to compute anyway (force=True from Python)")
                          for d in bad])
    for d in bad:
        res.notes.append(f"WARNING: {region_text(d, res.devices[d.name])}: outside its amplifying region, the "
                         "small-signal results below do not describe this circuit (computed because forced).")
    return biased(c, res), res


def needs_bias_solve(c: Circuit) -> bool:
    """True when some device is given by DC parameters only (its operating point is solved)."""
    return any(needs_bias(d) for d in c.devices)
