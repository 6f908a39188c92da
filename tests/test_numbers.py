"""Numbers, SI prefixes, units and the IEC 60062 RKM code; expressions and ||; V_T."""
import math

import pytest
from scipy import constants

from solver import InputError, loads
from solver.circuit.devices import BOLTZMANN, ELEMENTARY_CHARGE, thermal_voltage
from solver.language.expr import Value, evaluate
from solver.language.parse import parse_expression
from solver.language.units import OHM, AMP, FARAD, HERTZ, A_PER_V2, PER_VOLT, parse_quantity


@pytest.mark.parametrize("text, value", [
    # IEC 60062:2016, Marking codes for resistors and capacitors, clause 4 (RKM code), from memory
    ("4k7", 4.7e3), ("2R2", 2.2), ("1M5", 1.5e6), ("4n7", 4.7e-9), ("4K7", 4.7e3),
    ("1m5", 1.5e-3), ("6k8", 6.8e3), ("2p2", 2.2e-12), ("3u3", 3.3e-6), ("3µ3", 3.3e-6),
    # SI prefixes (BIPM SI Brochure, 9th ed., table 7)
    ("4.7k", 4.7e3), ("1.2m", 1.2e-3), ("100n", 100e-9), ("10M", 10e6), ("2G", 2e9), ("1T", 1e12),
    ("3f", 3e-15), ("5p", 5e-12), ("7u", 7e-6), ("7µ", 7e-6), ("1e3", 1e3), ("2.5E-3", 2.5e-3), (".5", 0.5),
])
def test_prefixes_and_rkm(text, value):
    v, _ = parse_quantity(text)
    assert v == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text, value, dim", [
    ("4.7 kΩ", 4.7e3, OHM), ("4.7kohm", 4.7e3, OHM), ("1.2mA", 1.2e-3, AMP), ("100 nF", 100e-9, FARAD),
    ("10kHz", 1e4, HERTZ), ("2 mA/V^2", 2e-3, A_PER_V2), ("0.02/V", 0.02, PER_VOLT), ("4k7 Ω", 4.7e3, OHM),
])
def test_units(text, value, dim):
    v, d = parse_quantity(text)
    assert v == pytest.approx(value, rel=1e-12) and d == dim


def test_mega_versus_milli():
    # SI: M is mega, m is milli (BIPM SI Brochure, 9th ed., table 7)
    assert parse_quantity("1M")[0] == 1e6
    assert parse_quantity("1m")[0] == 1e-3


def ev(text):
    # only the constant pi is known to this bare lookup
    return evaluate(parse_expression(text), lambda r: {"pi": Value(math.pi)}[r.name]).x


def test_expressions_and_parallel():
    # a || b = a*b/(a+b) (definition of the parallel combination; any circuits text)
    assert ev("3k || 6k") == pytest.approx(2e3)
    # precedence: || binds tighter than +, looser than *
    assert ev("1k + 3k || 6k") == pytest.approx(3e3)
    assert ev("2*3k || 6k") == pytest.approx(3e3)
    # power binds tighter than unary minus and is right-associative (common mathematical
    # convention, as in Python's own ** operator; from memory)
    assert ev("-2^2") == pytest.approx(-4)
    assert ev("2^3^2") == pytest.approx(512)  # right-associative
    assert ev("sqrt(16) + ln(exp(2)) + log10(1000) + abs(-1)") == pytest.approx(10)  # 4 + 2 + 3 + 1
    assert ev("2*pi") == pytest.approx(2 * math.pi)
    assert ev("(1k || 1k || 1k)") == pytest.approx(1e3 / 3)


def test_thermal_voltage_codata():
    # V_T = kT/q with CODATA 2018 exact k and e (scipy.constants)
    k = constants.physical_constants["Boltzmann constant"][0]
    q = constants.physical_constants["elementary charge"][0]
    assert thermal_voltage(300.0) == pytest.approx(k * 300.0 / q, rel=1e-15)
    assert thermal_voltage(300.0) == pytest.approx(0.025852, rel=1e-4)  # 25.85 mV at 300 K, from memory


def test_constants_are_scipys_codata_exactly():
    # the values devices.py writes out (to keep scipy.constants off the start-up path) are
    # exactly scipy.constants' CODATA k and e; both are exact in the SI since 2019 (BIPM, The
    # International System of Units, 9th ed., section 2.2)
    assert BOLTZMANN == constants.k == constants.physical_constants["Boltzmann constant"][0]
    assert ELEMENTARY_CHARGE == constants.e == constants.physical_constants["elementary charge"][0]
    assert constants.physical_constants["Boltzmann constant"][2] == 0.0  # listed as exact
    assert constants.physical_constants["elementary charge"][2] == 0.0
    assert thermal_voltage(290.0) == constants.k * 290.0 / constants.e  # the same arithmetic


def test_let_order_free_and_element_refs():
    c = loads("""
let RB = RA || 10k
let RA = 2 * RC
resistor RC (o, gnd) 5k
signal VS (i, gnd) 1 V
resistor R1 (i, o) RB
load RL (o, gnd) 1/Q1.gm
npn Q1 (o, i, gnd) gm=40m
""")
    r1 = next(e for e in c.elements if e.name == "R1")
    # by hand: RA = 2*5k = 10k, RB = 10k || 10k = 5k; 1/gm = 1/40 mS = 25 ohm (arithmetic; common
    # practice, no source)
    assert r1.value == pytest.approx(5e3)
    assert c.load.value == pytest.approx(25.0)


@pytest.mark.parametrize("text, message", [
    ("let a = b\nlet b = a\n", "cyclic definition"),
    ("let a = 1/0\n", "division by zero"),
    ("capacitor C1 (a, gnd) 4.7 kΩ\n", "capacitor value must be in F"),
    ("resistor R1 (a, gnd) 4.7K\n", "K is kelvin"),
    ("let a = zz\n", "undefined name 'zz'"),
    ("let a = 2 V + 3 A\n", "combines V with A"),
])
def test_value_errors(text, message):
    with pytest.raises(InputError) as e:
        loads(text + "signal VS (a, gnd) 1 V\nload RL (a, gnd) 1k\n", "x.pw")
    assert any(message in d.message for d in e.value.diagnostics), e.value


def test_an_undefined_name_is_never_read_as_an_rkm_code():
    # IEC 60062:2016 (clause 4, from memory) writes 0.47 Ω as R47; in an expression a name starting with a letter is a name, so
    # the value is written with a leading digit (0R47) and an undefined R47 is an error
    with pytest.raises(InputError) as e:
        loads("signal VS (a, gnd) 1 V\nresistor RX (a, b) R47\nload RL (b, gnd) 1k\n")
    d = e.value.diagnostics[0]
    assert (d.loc.line, d.loc.col) == (2, 20)
    assert "undefined name 'R47'" in d.message and "write 0R47" in d.message
    c = loads("signal VS (a, gnd) 1 V\nresistor RX (a, b) 0R47\nload RL (b, gnd) 1k\n")
    assert c.elements[0].value == pytest.approx(0.47)
