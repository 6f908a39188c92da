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


def quick_symbolic(c: Circuit, seconds: float = MAX_SECONDS, limits: tuple[int, int, int] | None = None
                   ) -> dict[str, str]:
    """{quantity: plain text} for a small circuit, {} otherwise (or on any symbolic failure).

    ``limits`` (unknowns, symbols, characters) replaces MAX_UNKNOWNS, MAX_SYMBOLS, MAX_CHARS
    (the design report allows somewhat larger forms than the terminal).
    """
    limits = limits or (MAX_UNKNOWNS, MAX_SYMBOLS, MAX_CHARS)
    import signal
    import threading
    timed = hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread()
    if not timed:
        return _quick(c, *limits)
    old = signal.signal(signal.SIGALRM, _alarm)
    try:
        try:
            signal.setitimer(signal.ITIMER_REAL, seconds)
            return _quick(c, *limits)
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
    except _OutOfTime:  # also when the (one-shot) timer fires during the clean-up above
        return {}
    finally:
        signal.signal(signal.SIGALRM, old)


def within(seconds: float, fn, *args):
    """``(True, fn(*args))``, or ``(False, None)`` when it took longer than ``seconds`` (where timed).

    The same timer interrupt as :func:`quick_symbolic`; without one (not the main thread, or a
    platform without ``setitimer``) ``fn`` simply runs to the end.
    """
    import signal
    import threading
    if not (hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread()):
        return True, fn(*args)
    old = signal.signal(signal.SIGALRM, _alarm)
    try:
        try:
            signal.setitimer(signal.ITIMER_REAL, seconds)
            return True, fn(*args)
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
    except _OutOfTime:
        return False, None
    finally:
        signal.signal(signal.SIGALRM, old)


def _quick(c: Circuit, max_unknowns: int = MAX_UNKNOWNS, max_symbols: int = MAX_SYMBOLS,
           max_chars: int = MAX_CHARS) -> dict[str, str]:
    from solver.analysis import scenarios
    from solver.engine.mna import Stamper
    from solver.analysis.symbolic.ports import circuit_symbols, scenario_elements
    try:
        if len(circuit_symbols(c)) > max_symbols:
            return {}
        if Stamper(scenario_elements(c), c.ground).size > max_unknowns:
            return {}
        from solver.analysis.symbolic.derive import derive
        qs = scenarios.quantities(c)
        out = {}
        for d in derive(c, qs):
            if len(d.plain) <= max_chars:
                out[d.quantity] = d.plain
        return out
    except Exception:  # the numeric report stands on its own; symbolic lines are an extra
        return {}
