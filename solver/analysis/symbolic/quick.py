"""The symbolic lines of ``portwise solve``: only for circuits small enough to be quick.

Guards (common practice, no source): at most MAX_UNKNOWNS MNA unknowns and
MAX_SYMBOLS symbols, a printed form of at most MAX_CHARS characters per
quantity, and MAX_SECONDS of wall time (a timer interrupt, where the platform
has one); anything larger is left to ``portwise derive`` with ``--keep``.
"""
from __future__ import annotations

from solver.circuit.model import Circuit

MAX_UNKNOWNS = 8
MAX_SYMBOLS = 10
MAX_CHARS = 120
MAX_SECONDS = 1.5


class _OutOfTime(BaseException):  # not an Exception: nothing on the way may swallow it
    pass


def _alarm(signum, frame):
    raise _OutOfTime()


def quick_symbolic(c: Circuit, seconds: float = MAX_SECONDS) -> dict[str, str]:
    """{quantity: plain text} for a small circuit, {} otherwise (or on any symbolic failure)."""
    import signal
    import threading
    timed = hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread()
    if not timed:
        return _quick(c)
    old = signal.signal(signal.SIGALRM, _alarm)
    try:
        try:
            signal.setitimer(signal.ITIMER_REAL, seconds)
            return _quick(c)
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
    except _OutOfTime:  # also when the (one-shot) timer fires during the clean-up above
        return {}
    finally:
        signal.signal(signal.SIGALRM, old)


def _quick(c: Circuit) -> dict[str, str]:
    from solver.analysis import scenarios
    from solver.engine.mna import Stamper
    from solver.analysis.symbolic.ports import circuit_symbols, scenario_elements
    try:
        if len(circuit_symbols(c)) > MAX_SYMBOLS:
            return {}
        if Stamper(scenario_elements(c), c.ground).size > MAX_UNKNOWNS:
            return {}
        from solver.analysis.symbolic.derive import derive
        qs = scenarios.quantities(c)
        out = {}
        for d in derive(c, qs):
            if len(d.plain) <= MAX_CHARS:
                out[d.quantity] = d.plain
        return out
    except Exception:  # the numeric report stands on its own; symbolic lines are an extra
        return {}
