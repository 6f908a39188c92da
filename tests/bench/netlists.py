"""Generators of large invented netlists for the benchmarks (not test data of any real design)."""
from __future__ import annotations


def rc_ladder(sections: int) -> str:
    """An RC ladder driven by a 50 Ω source into a 10 kΩ load (a long sensor cable model)."""
    lines = ['title "cable model, RC ladder"', "signal VS (n0, gnd) 1 V, rs=50"]
    for i in range(sections):
        lines.append(f"resistor R{i} (n{i}, n{i + 1}) 1k")
        lines.append(f"capacitor C{i} (n{i + 1}, gnd) 10 nF")
    lines.append(f"load RL (n{sections}, gnd) 10k")
    return "\n".join(lines) + "\n"


def transistor_chain(stages: int) -> str:
    """``stages`` common-emitter stages, each a block instance coupled to the next.

    Every stage has one npn with its bias given (ic, beta, va), a base bias
    divider, collector and (unbypassed) emitter resistors of the same value, so
    the stage gain is a little under -1 and a long chain stays within floating
    point range, and a coupling capacitor; the line mix resembles a
    hand-written netlist: blocks, parameters, lets.
    """
    lines = ['title "chain of gain stages"', "let RCC = 4k7", "let CC = 1 uF",
             "block stage (in, out) rc=RCC, ic=1 mA",
             "  npn Q (c, b, e) ic=ic, beta=150, va=80 V, cpi=10 pF, cmu=1 pF",
             "  resistor RB (b, gnd) 47k || 10k",
             "  resistor RC (c, gnd) rc",
             "  resistor RE (e, gnd) rc",
             "  capacitor CO (c, out) CC",
             "  resistor RX (in, b) 100",
             "end",
             "signal VS (s0, gnd) 1 mV, rs=600"]
    for i in range(stages):
        lines.append(f"use stage X{i} (s{i}, s{i + 1}) rc=RCC*(1 + {i % 3}/10)")
    lines.append(f"load RL (s{stages}, gnd) 10k")
    return "\n".join(lines) + "\n"


def flat_mixed(n: int) -> str:
    """A flat netlist of ``n`` element lines of every kind, with comments and expressions."""
    lines = ['title "mixed element soup"', "let R0 = 2k2", "signal VS (a0, gnd) 10 mV, rs=50"]
    for i in range(n):
        k = i % 6
        a, b = f"a{i}", f"a{i + 1}"
        if k == 0:
            lines.append(f"resistor R{i} ({a}, {b}) 4k7   # series arm")
        elif k == 1:
            lines.append(f"capacitor C{i} ({b}, gnd) 4n7")
        elif k == 2:
            lines.append(f"npn Q{i} ({b}, {a}, gnd) ic=0.5 mA, beta=200, va=60 V")
        elif k == 3:
            lines.append(f"resistor R{i} ({a}, {b}) R0 || 10k")
        elif k == 4:
            lines.append(f"vccs G{i} ({b}, gnd) ({a}, gnd) 2 mS")
        else:
            lines.append(f"inductor L{i} ({a}, {b}) 10 uH")
    lines.append(f"load RL (a{n}, gnd) 10k")
    return "\n".join(lines) + "\n"
