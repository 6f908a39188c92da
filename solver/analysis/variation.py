"""Port quantities for many sets of part values at once: the engine of spread, sensitivity and tune.

A *knob* is one value of the netlist that may move: an element (``RC``), a supply
(``VCC``), the load, the signal's ``VS.rs``, a device parameter (``Q1.beta``,
``M1.vth``) or a ``let`` name (every value that uses it moves with it). An
:class:`Evaluator` takes per-sample values of some knobs and returns every asked
port quantity for every sample, exactly as ``portwise solve`` would compute it for a
netlist with those values:

1. the netlist's values per sample: the knobs themselves, and, for a knob that other
   values refer to (a ``let``), those values re-evaluated from their expressions;
2. when a device is biased from the supplies, the operating point of every sample by
   batched Newton (:mod:`solver.analysis.batchbias`), a sample that does not converge
   there by the one-at-a-time solve with its fallbacks (:func:`solver.analysis.bias.solve_bias`);
   samples with a transistor outside its amplifying region are marked, not mixed in;
3. the small-signal parameters of each sample (a β spread moves gm, rπ and ro together
   through the bias point, as on a real board);
4. the scenario table's configurations (:mod:`solver.analysis.scenarios`), stamped once
   with per-sample values (:class:`solver.engine.batch.BatchStamper`) and solved as
   stacked matrices, then read out as the table says.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from solver.analysis import bias as B
from solver.analysis import batchbias
from solver.analysis import scenarios as sc
from solver.analysis.ports import _Solves
from solver.circuit.devices import needs_bias
from solver.circuit.elements import CurrentSource
from solver.circuit.model import Circuit, SpreadSpec
from solver.circuit.views import dc_elements
from solver.diagnostics import InputError, Loc, error
from solver.engine.batch import BatchStamper, solve_stacked
from solver.engine.mna import SingularSystem
from solver.language import expr as ex

#: samples per block of stacked matrices, at most; fewer for a large system, so that one block
#: of complex matrices stays within BLOCK_BYTES (16 size^2 bytes per sample)
CHUNK = 2048
BLOCK_BYTES = 64_000_000
#: device parameters that only the bias solve reads (left out of the small-signal bias form)
_DC_ONLY = ("k", "vth", "is", "beta_r", "pmax")


@dataclass(frozen=True)
class Knob:
    """One value that may move. ``kind``, ``target``, ``key`` as in :class:`SpreadSpec`."""

    name: str
    kind: str
    target: str
    key: str | None
    nominal: float

    @property
    def slot(self) -> tuple:
        return (self.kind, self.target, self.key)


def knob(c: Circuit, name: str, what: str = "--vary") -> Knob:
    """The knob a name means (``RC``, ``Q1.beta``, ``VS.rs``, a let); a bad name is bad input."""
    from solver.circuit.elaborate import SPECS
    from solver.circuit.spreads import spread_spec
    from solver.language.statements import Spread
    parts = tuple(name.split("."))
    loc = Loc(c.file, 1, 1)
    if not all(p.isidentifier() for p in parts):
        raise error(None, f"{what}: '{name}' is not a name of the netlist")
    stmt = Spread(ex.Ref(parts, loc), ex.Num(0.0, None, loc, "0"), None, [], loc)
    try:
        s = spread_spec(c.resolver, stmt, c.resolver.top, SPECS, c.source)
    except InputError as e:
        raise error(None, f"{what}: {e.diagnostics[0].message}") from None
    return Knob(s.name, s.kind, s.target, s.key, s.nominal)


def spread_knob(s: SpreadSpec) -> Knob:
    return Knob(s.name, s.kind, s.target, s.key, s.nominal)


def _entry(res, full: str):
    parts = full.split(".")
    e = res.top.names.get(parts[0])
    for p in parts[1:]:
        if e is None or e.kind != "instance":
            return None
        e = e.scope.names.get(p)
    return e


@dataclass
class Outcome:
    """Per-sample results: quantities (complex arrays), and which samples count.

    valid         -- solved, and every bias-solved transistor in its amplifying region
    out_of_region -- the bias point left a transistor outside its amplifying region
    failed        -- the bias solve did not converge (or a singular system)
    """

    quantities: dict[str, np.ndarray]
    valid: np.ndarray
    out_of_region: np.ndarray
    failed: np.ndarray
    devices: dict = field(default_factory=dict)


class Evaluator:
    """Port quantities of one circuit for per-sample knob values.

    Parameters
    ----------
    c : Circuit
        As elaborated.
    prepared : solver.analysis.pipeline.Prepared
        Its prepared form (the nominal bias point, the biased circuit).
    frequency_hz : float
    quantities : list of str
        Port quantities the circuit defines.

    Examples
    --------
    >>> from solver import loads
    >>> from solver.analysis.pipeline import prepare
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nresistor R2 (b, gnd) 1k\\n"
    ...           "output (b, gnd)\\n")
    >>> ev = Evaluator(c, prepare(c), 0.0, ["Gv"])
    >>> out = ev.run({knob(c, "R1"): np.array([1e3, 3e3])}, 2)
    >>> out.quantities["Gv"].real.tolist()
    [0.5, 0.25]
    """

    def __init__(self, c: Circuit, prepared, frequency_hz: float, quantities):
        self.src = c
        self.circuit = prepared.circuit
        self.bias = prepared.bias
        self.f = float(frequency_hz)
        self.s = 2j * math.pi * self.f
        self.quantities = list(quantities)
        self.biased = B.needs_bias_solve(c)
        bc = self.circuit
        solves = _Solves(bc, self.s)

        singular = solves.singular

        # a ratio in dB (CMRR) is formed from its two rows' samples
        rows = [q for q in self.quantities if q not in sc.DECIBELS]
        rows += [r for q in self.quantities if q in sc.DECIBELS for r in sc.DECIBELS[q] if r not in rows]
        self.measurements = {q: sc.chosen(bc, q, singular, solves.base) for q in rows}
        from solver.analysis.ports import measure
        self.finite = {}
        for q in self.quantities:
            try:
                self.finite[q] = bool(np.isfinite(measure(bc, q, self.s, solves)))
            except SingularSystem:
                self.finite[q] = False
        if self.biased:
            linear = dc_elements(c)
            ties, _ = B.floating_ties(c, linear)
            self.linear = linear + ties
        self._deps: dict | None = None
        from solver.engine.mna import Stamper
        sizes = [Stamper(list(m.config.elements), bc.ground).size for m in self.measurements.values()]
        if self.biased:
            sizes.append(Stamper(self.linear, c.ground).size)
        self.chunk = max(1, min(CHUNK, BLOCK_BYTES // (16 * max(sizes + [1]) ** 2)))

    # --- 1. the netlist's values per sample -------------------------------------------------
    def _slots(self):
        """Every value slot of the netlist with its entry: (slot key, entry, attr or param)."""
        c, res = self.src, self.src.resolver
        out = []
        for e in c.elements:
            if e.origin == e.name and e.name in c.values:
                out.append((("element", e.name, None), _entry(res, e.name), None))
        for s in c.supplies:
            out.append((("supply", s.name, None), _entry(res, s.name), None))
        if c.load is not None:
            out.append((("load", c.load.name, None), _entry(res, c.load.name), None))
        if c.signal is not None:
            out.append((("rs", c.signal.name, "rs"), _entry(res, c.signal.name), "rs"))
        for d in c.devices:
            ent = _entry(res, d.name)
            for p in (ent.stmt.params if ent is not None else ()):
                if p.key in d.params:
                    out.append((("device", d.name, p.key), ent, p))
        return out

    def _dependencies(self):
        """Slot -> the set of full names its expression reaches (let, element, param names)."""
        if self._deps is not None:
            return self._deps
        res = self.src.resolver
        memo: dict[str, set] = {}

        def reach(expr, scope, seen):
            out = set()
            for r in ex.refs(expr):
                try:
                    entry, _ = res.resolve(r, scope)
                except InputError:
                    continue
                if entry is None or entry.kind == "device":
                    continue
                out.add(entry.full)
                if entry.full not in seen:
                    out |= of_entry(entry, seen | {entry.full})
            return out

        def of_entry(entry, seen):
            if entry.full in memo:
                return memo[entry.full]
            got = set()
            if entry.kind in ("let", "param") and entry.expr is not None:
                got = reach(entry.expr, entry.scope, seen)
            elif entry.kind == "element" and entry.stmt is not None and entry.stmt.value is not None:
                got = reach(entry.stmt.value, entry.scope, seen)
            memo[entry.full] = got
            return got

        self._of_entry = of_entry
        deps = {}
        for slot, entry, extra in self._slots():
            if entry is None:
                continue
            if slot[0] == "device":
                deps[slot] = (entry, extra, reach(extra.value, entry.scope, set()))
            elif slot[0] == "rs":
                p = next((p for p in entry.stmt.params if p.key == "rs"), None)
                deps[slot] = (entry, "rs", reach(p.value, entry.scope, set()) if p else set())
            else:
                deps[slot] = (entry, None, of_entry(entry, {entry.full}))
        self._deps = deps
        return deps

    def _reach_of(self, entry) -> set:
        """The full names a let's or an element's expression reaches (after _dependencies)."""
        return self._of_entry(entry, {entry.full})

    def _values(self, settings: dict, n: int) -> dict:
        """Slot -> per-sample array (or the nominal number) for the slots that move."""
        out = {}
        named = {}
        for k, arr in settings.items():
            arr = np.asarray(arr, float)
            if k.kind != "let":
                out[k.slot] = arr
            if k.kind in ("let", "element", "supply", "load"):
                named[k.target] = arr
        if not named:
            return out
        deps = self._dependencies()
        moving = [(slot, info) for slot, info in deps.items()
                  if slot not in out and info[2] & set(named)]
        if not moving:
            return out
        res = self.src.resolver
        moving_names = set(named)

        def moves(entry):
            return entry.full in moving_names or bool(self._reach_of(entry) & moving_names)

        def vec(e, scope):
            """The expression over the samples: the arithmetic of solver.language.expr.evaluate
            on arrays (dimensions were checked at elaboration; a value outside a function's
            domain becomes nan, and its sample is dropped)."""
            if isinstance(e, ex.Num):
                return e.value
            if isinstance(e, ex.Ref):
                entry, attr = res.resolve(e, scope)
                if entry is None:
                    return ex.CONSTANTS[attr]
                if attr is None and entry.full in named:
                    return named[entry.full]
                if attr is None and entry.kind in ("let", "param") and moves(entry):
                    return vec(entry.expr, entry.scope)
                if attr is None and entry.kind == "element" and moves(entry):
                    return vec(entry.stmt.value, entry.scope)
                return res.value_of(entry, attr, e.loc).x
            if isinstance(e, ex.Unary):
                return -vec(e.operand, scope)
            if isinstance(e, ex.Call):
                v = np.asarray(vec(e.arg, scope), float)
                f = {"sqrt": np.sqrt, "abs": np.abs, "exp": np.exp, "ln": np.log, "log10": np.log10}[e.func]
                return f(v)
            a, b = np.asarray(vec(e.left, scope), float), np.asarray(vec(e.right, scope), float)
            op = e.op
            if op == "+":
                return a + b
            if op == "-":
                return a - b
            if op == "*":
                return a * b
            if op == "/":
                return a / b
            if op == "^":
                return np.power(a, b)
            return np.where(np.isinf(a), b, np.where(np.isinf(b), a, a * b / (a + b)))  # ||
        arrays = {}
        with np.errstate(all="ignore"):
            for slot, (entry, extra, _) in moving:
                if slot[0] == "device":
                    v = vec(extra.value, entry.scope)
                elif slot[0] == "rs":
                    v = vec(next(p for p in entry.stmt.params if p.key == "rs").value, entry.scope)
                else:
                    v = vec(entry.stmt.value if entry.kind == "element" else entry.expr, entry.scope)
                arrays[slot] = np.broadcast_to(np.asarray(v, float), (n,)).copy()
        out.update(arrays)
        return out

    # --- the whole evaluation ---------------------------------------------------------------
    def run(self, settings: dict, n: int) -> Outcome:
        """Every quantity for ``n`` samples; ``settings`` maps a :class:`Knob` to its n values."""
        qs = {q: np.empty(n, complex) for q in self.quantities}
        valid = np.zeros(n, bool)
        oor = np.zeros(n, bool)
        failed = np.zeros(n, bool)
        for lo in range(0, n, self.chunk):
            hi = min(n, lo + self.chunk)
            part = {k: np.asarray(v, float)[lo:hi] for k, v in settings.items()}
            got = self._run(part, hi - lo)
            for q in qs:
                qs[q][lo:hi] = got.quantities[q]
            valid[lo:hi], oor[lo:hi], failed[lo:hi] = got.valid, got.out_of_region, got.failed
        return Outcome(qs, valid, oor, failed)

    def _run(self, settings: dict, n: int) -> Outcome:
        c, bc = self.src, self.circuit
        vals = self._values(settings, n)
        common: dict[str, object] = {}
        dc_only: dict[str, object] = {}
        dev_params = {d.name: dict(d.params) for d in c.devices}
        for (kind, target, key), arr in vals.items():
            if kind in ("element", "load"):
                common[target] = arr
            elif kind == "rs":
                common[f"{target}.rs"] = arr
            elif kind == "supply":
                dc_only[target] = arr
            elif kind == "device":
                dev_params[target][key] = arr
        moved_devices = {t for (kind, t, _) in vals if kind == "device"}
        ok = np.ones(n, bool)
        oor = np.zeros(n, bool)
        failed = np.zeros(n, bool)
        ac = dict(common)
        ops = {}
        if self.biased:
            ops, conv = self._bias(dict(common, **dc_only), dev_params, n)
            failed |= ~conv
        for d_src, d in zip(c.devices, bc.devices):
            if needs_bias(d_src):
                amp, current, vov = ops[d.name]
                if d.kind != "diode":
                    oor |= ~amp & ~failed
                params = {k: v for k, v in dev_params[d.name].items() if k not in _DC_ONLY}
                with np.errstate(all="ignore"):
                    cur = np.where(current > 0, current, 1e-30)
                    ss = batchbias.small_signal(d, params, cur, vov)
            elif d.name in moved_devices:
                with np.errstate(all="ignore"):
                    ss = batchbias.small_signal(d, dev_params[d.name])
            else:
                continue
            for key, v in ss.items():
                ac[f"{d.name}.{key}"] = v
        for arr in vals.values():  # a value outside a function's domain (sqrt of a negative...)
            failed |= ~np.isfinite(np.broadcast_to(arr, (n,)))
        quantities = self._ports(ac, n)
        for q, v in quantities.items():  # a singular sample: no solution, counted as failed
            if self.finite[q]:  # (Av of a virtual-ground input is infinite for every sample)
                failed |= ~np.isfinite(v)
        oor &= ~failed
        ok &= ~failed & ~oor
        return Outcome(quantities, ok, oor, failed)

    def _bias(self, values, dev_params, n):
        start = self.bias.nodes if self.bias is not None else {}
        conv, ops, *_ = batchbias.solve(self.src, self.linear, values, dev_params, n, start)
        if not np.all(conv):  # the one-at-a-time solve, with gmin and source stepping
            for i in np.flatnonzero(~conv):
                got = self._one_bias(values, dev_params, i)
                if got is None:
                    continue
                conv[i] = True
                for name, (amp, cur, vov) in got.items():
                    a, c_, v_ = ops[name]
                    a[i], c_[i] = amp, cur
                    if v_ is not None and vov is not None:
                        v_[i] = vov
        return ops, conv

    def _one_bias(self, values, dev_params, i):
        c = self.src

        def pick(v):
            return float(v[i]) if isinstance(v, np.ndarray) else v
        els = [replace(e, value=pick(values[e.name])) if e.name in values else e for e in c.elements]
        sups = [replace(s, value=pick(values[s.name])) if s.name in values else s for s in c.supplies]
        load = c.load and (replace(c.load, value=pick(values[c.load.name])) if c.load.name in values else c.load)
        sig = c.signal
        if sig is not None and f"{sig.name}.rs" in values:
            sig = replace(sig, rs=pick(values[f"{sig.name}.rs"]))
        devs = [replace(d, params={k: pick(v) for k, v in dev_params[d.name].items()}) for d in c.devices]
        one = replace(c, elements=els, supplies=sups, load=load, signal=sig, devices=devs)
        try:
            res = B.solve_bias(one)
        except (B.BiasError, InputError):
            return None
        out = {}
        for d in one.devices:
            op = res.devices[d.name]
            amp = B.amplifying(d, op)
            cur = abs(op.get("ic", op.get("id", 0.0)))
            out[d.name] = (amp, cur, op.get("vov"))
        return out

    def _ports(self, values: dict, n: int) -> dict[str, np.ndarray]:
        """Every quantity's read-outs; configurations whose matrices are the same (the signal
        driven and the output test without the load: a source's value only enters b) are
        factorised once and solved for all their right-hand sides together, and the loaded
        drive follows from the unloaded one by a rank-one update."""
        configs = {}
        for m in self.measurements.values():
            configs.setdefault(m.config.key, m.config)
        # the loaded drive is the unloaded one plus the load: a rank-one change of the matrix,
        # solved from the unloaded factorisation by the Sherman-Morrison formula
        # (x_L = x - g (u'x) / (1 + g u'z) z, z = A^-1 u, u = e_p - e_n, g = 1/R_L)
        rank_one = None
        loaded, unloaded = configs.get(("signal", True)), configs.get(("signal", False))
        if loaded is not None and unloaded is not None and loaded.elements[:-1] == unloaded.elements:
            from solver.engine.mna import Stamper
            probe = Stamper(list(loaded.elements), self.circuit.ground)
            rank_one = (probe, loaded.elements[-1])
            del configs[("signal", True)]
        groups: dict = {}
        for key, cfg in configs.items():
            shape = tuple(sorted(e.name for e in cfg.elements if not isinstance(e, CurrentSource)))
            groups.setdefault(shape, []).append((key, cfg))
        solved: dict = {}
        for members in groups.values():
            sts = [BatchStamper(list(cfg.elements), self.circuit.ground, values, n).stamp_all()
                   for _, cfg in members]
            A = sts[0].matrix(self.s)
            cols = [st.rhs_stack() for st in sts]
            keys = [key for key, _ in members]
            extra = rank_one is not None and ("signal", False) in keys and rank_one[0].nodes == sts[0].nodes \
                and rank_one[0].branches == sts[0].branches
            if extra:
                u = np.zeros((n, sts[0].size), complex)
                a, b = (sts[0].node(x) for x in rank_one[1].nodes)
                if a is not None:
                    u[:, a] = 1.0
                if b is not None:
                    u[:, b] -= 1.0
                cols.append(u)
            bs = np.stack(cols, 2)
            with np.errstate(all="ignore"):
                try:
                    xs = np.linalg.solve(A, bs)
                except np.linalg.LinAlgError:
                    xs = np.stack([solve_stacked(A, bs[:, :, j]) for j in range(bs.shape[2])], 2)
            for j, ((key, _), st) in enumerate(zip(members, sts)):
                solved[key] = (st, xs[:, :, j])
            if extra:
                st0, x0 = solved[("signal", False)]
                z = xs[:, :, -1]
                g = 1.0 / np.asarray(values.get(rank_one[1].name, rank_one[1].value))

                def across(v):
                    return (v[:, a] if a is not None else 0.0) - (v[:, b] if b is not None else 0.0)
                with np.errstate(all="ignore"):
                    coef = g * across(x0) / (1.0 + g * across(z))
                solved[("signal", True)] = (rank_one[0], x0 - coef[:, None] * z)
                rank_one = None
        if rank_one is not None:  # (no unloaded drive to update from: solve the loaded one itself)
            cfg = loaded
            st = BatchStamper(list(cfg.elements), self.circuit.ground, values, n).stamp_all()
            solved[("signal", True)] = (st, solve_stacked(st.matrix(self.s), st.rhs_stack()))
        out = {}
        for q, m in self.measurements.items():
            st, x = solved[m.config.key]

            def read(terms):
                total = np.zeros(n, complex)
                for t in terms:
                    if t.kind == "node":
                        i = st.node(t.name)
                        v = 0.0 if i is None else x[:, i]
                    elif t.kind == "branch":
                        v = x[:, st.branches[t.name]]
                    else:
                        v = 1.0
                    if t.per is not None:
                        v = v / np.asarray(values.get(t.per.name, t.per.value))
                    total = total + t.sign * v
                return total
            num = read(m.num)
            if m.config.drive == "common" or m.config.drive.startswith(sc.SUPPLY):
                # the round-off of a cancellation (matched halves) is 0, as in every engine
                k = len(st.nodes)
                scale = np.max(np.abs(x[:, :k]), axis=1) if k else np.zeros(n)
                num = np.where(np.abs(num) <= sc.CANCELLED * scale, 0j, num)
            with np.errstate(all="ignore"):
                out[q] = num / read(m.den) if m.den else num
        for q in self.quantities:
            if q in sc.DECIBELS:
                a, b = (np.abs(out[r]) for r in sc.DECIBELS[q])
                with np.errstate(all="ignore"):
                    db = np.where(b == 0, np.where(a == 0, np.nan, np.inf), 20 * np.log10(a / np.where(b == 0, 1, b)))
                out[q] = db.astype(complex)
        return out
