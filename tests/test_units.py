"""Units at the boundary: strings, quantities and floats in; SI floats inside; clear errors."""

import math

import numpy as np
import pytest

import drivekit as dk
from drivekit.units import ParameterError, ParamSpec, to_si


@pytest.mark.parametrize(
    ("text", "unit", "kind", "expected"),
    [
        # 1480 rev/min = 1480 * 2 pi / 60 rad/s (definition of the revolution)
        ("1480 rpm", "rad/s", "shaft_speed", 1480 * 2 * math.pi / 60),
        # a shaft speed in Hz is revolutions per second, not rad/s
        ("25 Hz", "rad/s", "shaft_speed", 25 * 2 * math.pi),
        # an electrical frequency in rad/s is divided by 2 pi
        ("314.159265 rad/s", "Hz", "frequency", 314.159265 / (2 * math.pi)),
        ("300 m**3/h", "m**3/s", "plain", 300 / 3600),
        ("4 mH", "H", "plain", 0.004),
        ("0.045 mm", "m", "plain", 0.045e-3),
        ("0.8 kg*m**2", "kg*m**2", "plain", 0.8),
        ("78 %", "", "plain", 0.78),
        ("2 bar", "Pa", "plain", 2e5),
    ],
)
def test_strings_convert_to_si(text, unit, kind, expected):
    assert to_si(text, "x", ParamSpec(unit, "test", kind=kind)) == pytest.approx(expected, rel=1e-12)


def test_quantity_and_float_are_accepted():
    motor = dk.DCMotor(R=dk.Q_(1.5, "ohm"), L="4 mH", k=0.9, J="0.05 kg*m**2")
    assert (motor.R, motor.L, motor.k, motor.J) == (1.5, pytest.approx(0.004), 0.9, 0.05)


def test_wrong_dimension_names_parameter_value_and_expectation():
    with pytest.raises(ParameterError) as err:
        dk.DCMotor(R=1.0, L=0.01, k=0.5, J="5 m")
    text = str(err.value)
    assert "`J`" in text
    assert "5 m" in text
    assert "kg·m²" in text


@pytest.mark.parametrize("bad", [math.nan, math.inf, -0.1, 0.0, "not a number", True, None])
def test_bad_values_are_refused(bad):
    with pytest.raises(ParameterError, match="`R`"):
        dk.DCMotor(R=bad, L=0.01, k=0.5, J=0.1)


def test_parameter_error_is_a_value_error():
    assert issubclass(ParameterError, ValueError)
    assert issubclass(dk.OperatingPointError, ValueError)


def test_arrays_convert_elementwise():
    out = to_si(dk.Q_(np.array([0.0, 100.0]), "m**3/h"), "flow", ParamSpec("m**3/s", "flow", minimum=0.0))
    np.testing.assert_allclose(out, [0.0, 100 / 3600])
