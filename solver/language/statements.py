"""The parsed netlist: one plain dataclass per statement, in source order.

This is what :mod:`solver.language.parse` produces and :mod:`solver.circuit.elaborate` reads.
Values are still expression trees; nothing is evaluated yet.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from solver.diagnostics import Loc
from solver.language.expr import Expr, Ref


@dataclass(slots=True, unsafe_hash=True)
class Node:
    name: str
    loc: Loc


@dataclass(slots=True, unsafe_hash=True)
class Param:
    key: str
    value: Expr
    loc: Loc


@dataclass(slots=True)
class Title:
    text: str
    loc: Loc


@dataclass(slots=True)
class Let:
    name: str
    value: Expr
    loc: Loc


@dataclass(slots=True)
class ElementStmt:
    """Any statement that places an element: ``KEYWORD NAME (nodes)... [sense] [value] params``."""

    keyword: str
    name: str
    groups: list[list[Node]]
    value: Expr | None
    params: list[Param]
    loc: Loc
    name_loc: Loc
    sense: Ref | None = None


@dataclass(slots=True)
class Output:
    nodes: list[Node]
    loc: Loc


@dataclass(slots=True)
class Ground:
    node: Node
    loc: Loc


@dataclass(slots=True)
class BlockStart:
    name: str
    ports: list[Node]
    params: list[Param]
    loc: Loc


@dataclass(slots=True)
class End:
    loc: Loc


@dataclass(slots=True)
class Use:
    block: str
    instance: str
    nodes: list[Node]
    params: list[Param]
    loc: Loc
    block_loc: Loc


@dataclass(slots=True)
class Claim:
    quantity: str
    kind: str  # "exact" (=) | "approx" (~)
    value: Expr
    tolerance: Expr | None
    loc: Loc
    quantity_loc: Loc


@dataclass(slots=True)
class Spread:
    """``spread NAME TOL`` (hi None) or ``spread NAME LO .. HI``, with ``, dist=...`` params."""

    target: Ref
    lo: Expr
    hi: Expr | None
    params: list[Param]
    loc: Loc


@dataclass(slots=True)
class Bound:
    """One bound of a spec: an expression, optionally followed by a unit word (``dB``)."""

    value: Expr
    unit: str | None
    unit_loc: Loc | None


@dataclass(slots=True)
class Spec:
    """``spec QUANTITY LO .. HI``: the magnitude of a port quantity between two bounds."""

    quantity: str
    lo: Bound
    hi: Bound
    loc: Loc


Statement = Title | Let | ElementStmt | Output | Ground | BlockStart | End | Use | Claim | Spread | Spec


@dataclass
class Netlist:
    file: str
    source: str
    statements: list[Statement] = field(default_factory=list)
