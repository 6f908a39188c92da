"""Two-port parameters between the input port (signal removed) and the output port (load removed).

Port 1 is the signal's node pair, port 2 the output port; both port currents
flow into the network. z, y, h and g are each measured directly from the
stamped circuit with the drive that defines them (current drive for an
open-circuit parameter, voltage drive for a short-circuit one), so a matrix
that does not exist shows up as a singular system rather than as a huge
number; ABCD follows from whichever of them has a non-zero forward element;
S is measured with both ports terminated in z0.

Conversions (standard tables):

    y = z^-1,  g = h^-1,
    h = [[1/y11, -y12/y11], [y21/y11, det(y)/y11]],
    ABCD from z: [[z11, det z], [1, z22]] / z21,   from y: -[[y22, 1], [det y, y11]] / y21,
    from h: -[[det h, h11], [h22, 1]] / h21,       from g: [[1, g22], [g11, det g]] / g21,
    S from ABCD: D = A + B/z0 + C z0 + D,
        S = [[A + B/z0 - C z0 - D, 2 (AD - BC)], [2, -A + B/z0 - C z0 + D]] / D,
    z from S: z0 (I + S)(I - S)^-1.

References
----------
D. M. Pozar, *Microwave Engineering*, 4th ed., sections 4.2-4.4 (impedance,
admittance, scattering and ABCD matrices; Table 4.2 conversions), from memory.
A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., appendix C
(two-port network parameters z, y, h, g), from memory.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solver.circuit.elements import CurrentSource, Element, Resistor, VoltageSource
from solver.engine.mna import SingularSystem, assemble
from solver.circuit.model import Circuit
from solver.circuit.views import small_signal_elements

NAMES = ("z", "y", "h", "g", "abcd", "s")
#: units of the four entries (11, 12, 21, 22) of each matrix, for the report
UNITS = {"z": ("Ω", "Ω", "Ω", "Ω"), "y": ("S", "S", "S", "S"), "h": ("Ω", "", "", "S"),
         "g": ("S", "", "", "Ω"), "abcd": ("", "Ω", "S", ""), "s": ("", "", "", "")}
#: the drive (I or V at port 1, port 2) that defines each directly measured matrix
DRIVES = {"z": "II", "y": "VV", "h": "IV", "g": "VI"}


class TwoPortError(Exception):
    """The ports are not usable (e.g. the same node pair)."""


# --- conversions (pure functions on 2x2 complex arrays) ---------------------------------------
def _det(m):
    return m[0, 0] * m[1, 1] - m[0, 1] * m[1, 0]


def z_to_y(z):
    return np.linalg.inv(z)


def y_to_h(y):
    y11 = y[0, 0]
    return np.array([[1 / y11, -y[0, 1] / y11], [y[1, 0] / y11, _det(y) / y11]], complex)


def h_to_g(h):
    return np.linalg.inv(h)


def z_to_abcd(z):
    return np.array([[z[0, 0], _det(z)], [1, z[1, 1]]], complex) / z[1, 0]


def y_to_abcd(y):
    return -np.array([[y[1, 1], 1], [_det(y), y[0, 0]]], complex) / y[1, 0]


def h_to_abcd(h):
    return -np.array([[_det(h), h[0, 0]], [h[1, 1], 1]], complex) / h[1, 0]


def g_to_abcd(g):
    return np.array([[1, g[1, 1]], [g[0, 0], _det(g)]], complex) / g[1, 0]


def abcd_to_s(t, z0: float = 50.0):
    a, b, c, d = t[0, 0], t[0, 1], t[1, 0], t[1, 1]
    den = a + b / z0 + c * z0 + d
    return np.array([[a + b / z0 - c * z0 - d, 2 * (a * d - b * c)],
                     [2, -a + b / z0 - c * z0 + d]], complex) / den


def s_to_z(s, z0: float = 50.0):
    eye = np.eye(2)
    return z0 * (eye + s) @ np.linalg.inv(eye - s)


def z_to_s(z, z0: float = 50.0):
    eye = np.eye(2)
    return (z - z0 * eye) @ np.linalg.inv(z + z0 * eye)


# --- measurement ------------------------------------------------------------------------------
@dataclass
class TwoPort:
    frequency_hz: float
    z0: float
    ports: tuple[tuple[str, str], tuple[str, str]]
    matrices: dict[str, np.ndarray | None] = field(default_factory=dict)
    reasons: dict[str, str] = field(default_factory=dict)


def ports_of(c: Circuit) -> tuple[tuple[str, str], tuple[str, str]]:
    p1, p2 = tuple(c.signal.nodes), tuple(c.output_port)
    if set(p1) == set(p2):
        raise TwoPortError("the input and output ports are the same node pair")
    return p1, p2


def _port_source(i: int, port, kind: str, value: float) -> list[Element]:
    p, n = port
    if kind == "I":
        return [CurrentSource(f"{{port{i}}}", (n, p), value, None, "", None)] if value else []
    return [VoltageSource(f"{{port{i}}}", (p, n), value, None, "", None)]


def _measure(base, ground, ports, kinds: str, s: complex) -> np.ndarray:
    """M[i, j] = dependent variable at port i for a unit independent variable at port j."""
    m = np.zeros((2, 2), complex)
    for j in range(2):
        els = list(base)
        for i in range(2):
            els += _port_source(i, ports[i], kinds[i], 1.0 if i == j else 0.0)
        sys_ = assemble(els, ground)
        x = sys_.solve(s)
        for i in range(2):
            p, n = ports[i]
            if kinds[i] == "I":
                m[i, j] = sys_.voltage(x, p) - sys_.voltage(x, n)
            else:  # current into the network at P is minus the source's branch current
                m[i, j] = -sys_.branch_current(x, f"{{port{i}}}")
    return m


def _s_systems(base, ground, ports, z0: float):
    """For each driven port j: the system with a 1 V source behind z0 at j and z0 across the other."""
    out = []
    for j in range(2):
        els = list(base)
        for i in range(2):
            p, n = ports[i]
            if i == j:
                mid = f"{{port{i} source}}"
                els += [Resistor(f"{{z0 {i}}}", (mid, p), z0, None, "", None),
                        VoltageSource(f"{{port{i}}}", (mid, n), 1.0, None, "", None)]
            else:
                els.append(Resistor(f"{{z0 {i}}}", (p, n), z0, None, "", None))
        out.append(assemble(els, ground))
    return out


def _s_from_solutions(systems, xs, ports):
    """S[..., i, j] = 2 V_i - delta_ij for a 1 V source behind z0 at port j (Pozar section 4.3)."""
    n_pts = xs[0].shape[0]
    s = np.zeros((n_pts, 2, 2), complex)
    for j, (sys_, x) in enumerate(zip(systems, xs)):
        for i in range(2):
            p, n = ports[i]
            v = np.zeros(n_pts, complex)
            for node, sign in ((p, 1), (n, -1)):
                k = sys_.stamper.node(node)
                if k is not None:
                    v = v + sign * x[:, k]
            s[:, i, j] = 2 * v - (1.0 if i == j else 0.0)
    return s


def two_port(c: Circuit, frequency_hz: float, z0: float = 50.0) -> TwoPort:
    """All six parameter sets at one frequency; a set that does not exist is None with a reason.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, m) 10\\nresistor R2 (m, b) 20\\n"
    ...           "resistor R3 (m, gnd) 30\\nload RL (b, gnd) 1k\\n")
    >>> tp = two_port(c, 0.0)
    >>> tp.matrices["z"].real.round(6).tolist()
    [[40.0, 30.0], [30.0, 50.0]]
    """
    ports = ports_of(c)
    base = small_signal_elements(c)
    s = 2j * math.pi * frequency_hz
    tp = TwoPort(frequency_hz, z0, ports)
    why = {"z": "open-circuit (current) drive at both ports is singular: the network has no impedance "
                "matrix (e.g. an ideal transconductor without output resistance, or a port with no path)",
           "y": "short-circuit (voltage) drive at both ports is singular: the network has no admittance "
                "matrix (e.g. an ideal voltage output, or a port that is a short)",
           "h": "current drive at port 1 with a short at port 2 is singular: no hybrid (h) matrix",
           "g": "voltage drive at port 1 with current drive at port 2 is singular: no inverse-hybrid (g) matrix"}
    for name, kinds in DRIVES.items():
        try:
            tp.matrices[name] = _measure(base, c.ground, ports, kinds, s)
        except SingularSystem:
            tp.matrices[name] = None
            tp.reasons[name] = why[name]
    tp.matrices["abcd"] = None
    for name, conv in (("z", z_to_abcd), ("y", y_to_abcd), ("h", h_to_abcd), ("g", g_to_abcd)):
        m = tp.matrices[name]
        if m is not None and abs(m[1, 0]) > 1e-13 * np.abs(m).max():
            tp.matrices["abcd"] = conv(m)
            break
    else:
        tp.reasons["abcd"] = "no forward transmission (the 21 element of every existing matrix is zero)"
    try:
        systems = _s_systems(base, c.ground, ports, z0)
        xs = [sys_.solve(s)[None, :] for sys_ in systems]
        tp.matrices["s"] = _s_from_solutions(systems, xs, ports)[0]
    except SingularSystem:
        tp.matrices["s"] = None
        tp.reasons["s"] = f"the network terminated in {z0:g} Ω is singular"
    return tp


def s_sweep(c: Circuit, freqs: np.ndarray, z0: float = 50.0) -> np.ndarray:
    """S-parameters at every frequency, shape (N, 2, 2); each terminated system is stamped once."""
    from solver.analysis.frequency import solve_many
    ports = ports_of(c)
    systems = _s_systems(small_signal_elements(c), c.ground, ports, z0)
    s = 2j * np.pi * np.asarray(freqs, float)
    xs = [solve_many(sys_, s) for sys_ in systems]
    return _s_from_solutions(systems, xs, ports)

