"""The ``spread`` and ``spec`` lines: what varies over a Monte Carlo run, and what it must meet.

``spread NAME TOL`` spreads a value by +-TOL (a fraction or a percentage) around its
nominal value; ``spread NAME LO .. HI`` between two values in NAME's own unit. NAME is an
element (``RC``), a supply (``VCC``), the load, the signal's ``VS.rs``, a device parameter
(``Q1.beta``, ``M1.vth``) or a ``let`` name (every value that uses it moves with it: matched
parts). ``, dist=normal`` makes the range +-3 sigma of a normal distribution (common
practice, no source); the default is uniform over the range.

``spec Q LO .. HI`` bounds the magnitude of port quantity Q in its own unit (ohms for Rin,
Rout, Zt, Zto; a bare ratio for the gains), or in decibels for a gain with the word ``dB``
after a bound (``spec Gv 28 dB .. 31 dB``); ``inf`` is an open upper end.
"""
from __future__ import annotations

import math

from solver.circuit.model import PORT_QUANTITIES, SpecLine, SpreadSpec
from solver.diagnostics import Loc, error
from solver.language import expr as ex
from solver.language import units as U
from solver.language.statements import Spec, Spread

#: default values of device parameters that a spread may name without the netlist giving them
#: (the bias solve's own defaults, solver.analysis.bias)
DEVICE_DEFAULTS = {"npn": {"beta": 100.0, "is": 1e-15, "beta_r": 1.0, "temp": 300.0},
                   "pnp": {"beta": 100.0, "is": 1e-15, "beta_r": 1.0, "temp": 300.0},
                   "nmos": {"lambda": 0.0}, "pmos": {"lambda": 0.0},
                   "diode": {"is": 1e-14, "n": 1.0, "temp": 300.0}}
#: the quantities measured in ohms; the others are ratios (V/V, A/A)
OHMS = ("Rin", "Rout", "Zt", "Zto")
RATIOS = ("Gv", "Gvo", "Av", "Avo", "Ai")
DISTRIBUTIONS = ("uniform", "normal")


def _text(source: str, loc: Loc) -> str:
    lines = source.splitlines()
    line = lines[loc.line - 1] if 0 < loc.line <= len(lines) else ""
    return " ".join(line.split("#", 1)[0].split())


def _lookup_inf(lookup):
    def look(ref):
        if ref.parts == ("inf",):
            return ex.Value(math.inf, None)
        return lookup(ref)
    return look


def spread_spec(res, s: Spread, scope, specs, source: str) -> SpreadSpec:
    """The :class:`SpreadSpec` of one ``spread`` line (``res``: the elaboration's Resolver,
    ``specs``: the element SPECS table of :mod:`solver.circuit.elaborate`)."""
    ref = s.target
    key = None
    entry = scope.find(ref.parts[0])
    if entry is None and ref.parts[0] not in ex.CONSTANTS:
        res.resolve(ex.Ref(ref.parts[:1], ref.loc), scope)  # raises: undefined, with the nearest names
    rest = list(ref.parts[1:])
    while entry is not None and entry.kind == "instance" and rest:
        inner = entry.scope.names.get(rest[0])
        if inner is None:
            raise error(ref.loc, f"block instance '{entry.full}' has no '{rest[0]}'")
        entry, rest = inner, rest[1:]
    if entry is None:
        raise error(ref.loc, f"'{ref.name}' is a constant; spread a value of the circuit")
    entry.used = True
    if entry.kind == "instance":
        raise error(ref.loc, f"'{ref.name}' is a block instance; name one of its values")
    if entry.kind == "device":
        kw = entry.stmt.keyword
        if len(rest) != 1:
            raise error(ref.loc, f"'{ref.name}': name one parameter of {entry.full} (e.g. {entry.full}.beta)")
        key = rest[0]
        allowed = {k: d for k, d in specs[kw].params.items() if k not in ("model", "pmax")}
        if key not in allowed:
            raise error(ref.loc, f"{entry.full} is a {kw}: a spread names one of its parameters "
                        f"({', '.join(allowed)}), not '{key}'")
        dev = res.device(entry)
        nominal = dev.params.get(key, DEVICE_DEFAULTS.get(kw, {}).get(key))
        if nominal is None:
            from solver.circuit.devices import needs_bias
            if needs_bias(dev) and key in ("gm", "ro", "rpi", "ic", "id", "vov", "rd", "gmb"):
                raise error(ref.loc, f"{entry.full}.{key} follows from the bias point: spread what sets it "
                            f"(the bias resistors, the supply, {', '.join(k for k in allowed if k in ('beta', 'va', 'is', 'k', 'vth', 'lambda', 'n'))})")
            raise error(ref.loc, f"{entry.full} has no {key}= to spread: give it on the {kw} line")
        kind, dim, target = "device", allowed[key], entry.full
    elif rest and not (entry.kind == "signal" and rest == ["rs"]):
        raise error(ref.loc, f"'{ref.name}': '{entry.full}' has no '{'.'.join(rest)}'")
    elif entry.kind == "signal":
        if not rest:
            raise error(ref.loc, "the signal's amplitude does not change a port quantity; spread its .rs")
        v = res.value_of(entry, "rs", ref.loc)
        kind, dim, target, key, nominal = "rs", U.OHM, entry.full, "rs", v.x
    else:
        v = res.value_of(entry, None, ref.loc)
        nominal, dim, target = v.x, v.dim, entry.full
        kind = "let" if entry.kind in ("let", "param") else {
            "supply": "supply", "load": "load"}.get(entry.stmt.keyword, "element")
        if kind == "element" and entry.stmt.keyword == "signal":
            raise AssertionError("unreachable")
    look = res.lookup(scope)
    lo_v = ex.evaluate(s.lo, look)
    if s.hi is None:
        if lo_v.dim not in (None, U.ONE) or not (lo_v.x >= 0) or not math.isfinite(lo_v.x):
            raise error(s.lo.loc, "a tolerance is a non-negative fraction or percentage (5%, 0.05); "
                        "a range is written LO .. HI")
        lo, hi = nominal - abs(nominal) * lo_v.x, nominal + abs(nominal) * lo_v.x
    else:
        hi_v = ex.evaluate(s.hi, look)
        for v, e in ((lo_v, s.lo), (hi_v, s.hi)):
            if v.dim is not None and dim is not None and v.dim != dim:
                raise error(e.loc, f"{ref.name} is in {U.dim_name(dim)}, this bound in {U.dim_name(v.dim)}")
            if not math.isfinite(v.x):
                raise error(e.loc, "a spread's bound is a finite number")
        lo, hi = lo_v.x, hi_v.x
        if lo > hi:
            raise error(s.hi.loc, f"the range is LO .. HI with LO <= HI (got {lo:g} .. {hi:g})")
    dist = "uniform"
    for p in s.params:
        if p.key != "dist":
            raise error(p.loc, f"a spread takes only dist= (uniform or normal), not '{p.key}='")
        if not (isinstance(p.value, ex.Ref) and p.value.name in DISTRIBUTIONS):
            raise error(p.value.loc, "dist= is uniform or normal")
        dist = p.value.name
    if kind in ("element", "load") and entry.stmt.keyword in ("resistor", "capacitor", "inductor", "load") \
            and lo <= 0 < nominal:
        raise error(s.lo.loc, f"the range of {ref.name} reaches zero or below ({lo:g})")
    return SpreadSpec(ref.name, kind, target, key, nominal, lo, hi, dist, _text(source, s.loc), s.loc, s.loc.line)


def spec_line(res, s: Spec, scope, source: str) -> SpecLine:
    """The :class:`SpecLine` of one ``spec`` line, bounds in the quantity's unit (dB converted)."""
    q = s.quantity
    if q not in PORT_QUANTITIES:
        raise error(s.loc, f"unknown quantity '{q}' (one of {', '.join(PORT_QUANTITIES)})")
    want = U.OHM if q in OHMS else U.ONE
    look = _lookup_inf(res.lookup(scope))
    vals, db = [], False
    for b in (s.lo, s.hi):
        v = ex.evaluate(b.value, look)
        if b.unit is not None:
            if b.unit != "dB":
                raise error(b.unit_loc, f"unknown unit '{b.unit}' after a bound (the only word is dB)")
            if q not in RATIOS:
                raise error(b.unit_loc, f"{q} is in ohms; dB is for the gains ({', '.join(RATIOS)})")
            if v.dim not in (None, U.ONE):
                raise error(b.value.loc, "a bound in dB is a bare number")
            db = True
            vals.append(10.0 ** (v.x / 20.0))
            continue
        if v.dim is not None and v.dim != want and not (want == U.ONE and v.dim is None):
            raise error(b.value.loc, f"{q} is in {U.dim_name(want)}, this bound in {U.dim_name(v.dim)}")
        if v.x < 0:
            raise error(b.value.loc, "a spec bounds the magnitude: a bound is not negative")
        vals.append(v.x)
    lo, hi = vals
    if lo > hi:
        raise error(s.hi.value.loc, f"the range is LO .. HI with LO <= HI (got {lo:g} .. {hi:g})")
    return SpecLine(q, lo, hi, _text(source, s.loc), s.loc, s.loc.line, db)
