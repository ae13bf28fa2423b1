"""Process models and Skogestad's half rule against the published rules and python-control."""

import math

import control
import numpy as np
import pytest

from drivekit.models import FOPDT, SOPDT, IntegratingDeadTime, half_rule, transfer_function_model
from drivekit.units import ParameterError


def lags_model(lags, lhp_zeros=(), rhp_zeros=(), dead_time=0.0, gain=1.0, integrator=False):
    """k prod(T s + 1) prod(-T s + 1) e^{-theta s} / ((s) prod(tau s + 1))."""
    num = np.array([gain])
    for t in lhp_zeros:
        num = np.polymul(num, [t, 1.0])
    for t in rhp_zeros:
        num = np.polymul(num, [-t, 1.0])
    den = np.array([1.0, 0.0]) if integrator else np.array([1.0])
    for t in lags:
        den = np.polymul(den, [t, 1.0])
    return transfer_function_model(num, den, dead_time)


def test_half_rule_example_e1_fourth_order():
    # Source: Skogestad, J. Process Control 13 (2003) 291-309, Example E1 (plant from memory):
    # g0 = 1/((s+1)(0.2s+1)(0.04s+1)(0.008s+1)); half rule, eq. for FOPDT:
    # tau1 = 1 + 0.2/2 = 1.1, theta = 0.2/2 + 0.04 + 0.008 = 0.148
    m = half_rule(lags_model([1.0, 0.2, 0.04, 0.008]), order=1)
    assert isinstance(m, FOPDT)
    assert m.gain == pytest.approx(1.0, rel=1e-9)
    assert m.time_constant == pytest.approx(1.1, rel=1e-9)
    assert m.dead_time == pytest.approx(0.148, rel=1e-9)
    # Source: same paper, half rule for SOPDT: tau1 = 1, tau2 = 0.2 + 0.04/2 = 0.22, theta = 0.02 + 0.008 = 0.028
    m2 = half_rule(lags_model([1.0, 0.2, 0.04, 0.008]), order=2)
    assert isinstance(m2, SOPDT)
    assert (m2.time_constant, m2.time_constant_2, m2.dead_time) == pytest.approx((1.0, 0.22, 0.028), rel=1e-9)


def test_half_rule_example_with_lhp_and_rhp_zeros():
    # Source: Skogestad, J. Process Control 13 (2003) 291-309, Example E2 (from memory):
    # g0 = (-0.3s+1)(0.08s+1) / ((2s+1)(s+1)(0.4s+1)(0.2s+1)(0.05s+1)^3).
    # Rule T3: (0.08s+1)/(0.2s+1) ~ 1/(0.12s+1); RHP zero -> 0.3 s of dead time.
    # FOPDT: tau1 = 2 + 1/2 = 2.5, theta = 1/2 + 0.4 + 0.12 + 3*0.05 + 0.3 = 1.47 (printed values, from memory)
    g = lags_model([2.0, 1.0, 0.4, 0.2, 0.05, 0.05, 0.05], lhp_zeros=[0.08], rhp_zeros=[0.3])
    m = half_rule(g, order=1)
    assert m.gain == pytest.approx(1.0, rel=1e-9)
    assert m.time_constant == pytest.approx(2.5, rel=1e-9)
    # tolerance 1e-8: the triple pole at -20 is found by an eigenvalue solver to about 1e-5 relative
    assert m.dead_time == pytest.approx(1.47, rel=1e-8)
    # SOPDT: tau1 = 2, tau2 = 1 + 0.4/2 = 1.2, theta = 0.2 + 0.12 + 0.15 + 0.3 = 0.77 (from memory)
    m2 = half_rule(g, order=2)
    assert (m2.time_constant, m2.time_constant_2) == pytest.approx((2.0, 1.2), rel=1e-9)
    assert m2.dead_time == pytest.approx(0.77, rel=1e-8)


def test_half_rule_lhp_zero_rule_t1_large_numerator():
    # Source: Skogestad (2003) §2, rule T1: (T0 s+1)/(tau0 s+1) ~ T0/tau0 for T0 >= tau0 >= tau_c.
    # g0 = (20s+1) e^{-0.5 s} / ((10s+1)(s+1)); tau_c = theta without the zero = 0.5 + 1/2 = 1.0;
    # 20 >= 10 >= 1: factor 2, lags left [1]: FOPDT k = 2, tau = 1, theta = 0.5
    m = half_rule(lags_model([10.0, 1.0], lhp_zeros=[20.0], dead_time=0.5), order=1)
    assert (m.gain, m.time_constant, m.dead_time) == pytest.approx((2.0, 1.0, 0.5), rel=1e-9)


def test_half_rule_lhp_zero_rule_t3_capped_at_five_tau_c():
    # Source: Skogestad (2003) §2, rule T3: (T0 s+1)/(tau0 s+1) ~ (tau0~/tau0)/((tau0~ - T0) s + 1),
    # tau0~ = min(tau0, 5 tau_c). g0 = 3 (5s+1) e^{-0.1 s} / ((10s+1)(2s+1)):
    # tau_c = theta without the zero = 0.1 + 2/2 = 1.1; tau0~ = min(10, 5.5) = 5.5; factor 5.5/10; new lag 0.5.
    g = lags_model([10.0, 2.0], lhp_zeros=[5.0], dead_time=0.1, gain=3.0)
    m = half_rule(g, order=1)
    assert m.gain == pytest.approx(3.0 * 5.5 / 10.0, rel=1e-9)
    # lags left 2 and 0.5: tau = 2 + 0.25, theta = 0.1 + 0.25
    assert m.time_constant == pytest.approx(2.25, rel=1e-9)
    assert m.dead_time == pytest.approx(0.35, rel=1e-9)


def test_half_rule_integrating_process():
    # Source: Skogestad (2003), integrating process with the integrator as tau1 -> infinity (from memory):
    # g0 = 0.5 e^{-2s} / (s (s+1)(0.5s+1)); order 1: theta = 2 + 1/2 + 0.5 = 3.0
    g = lags_model([1.0, 0.5], dead_time=2.0, gain=0.5, integrator=True)
    m = half_rule(g, order=1)
    assert isinstance(m, IntegratingDeadTime)
    assert m.gain == pytest.approx(0.5, rel=1e-9)
    assert m.dead_time == pytest.approx(3.0, rel=1e-9)
    # order 2: lag 1 + 0.5/2 = 1.25, theta = 2 + 0.25 = 2.25
    m2 = half_rule(g, order=2)
    assert m2.time_constant_2 == pytest.approx(1.25, rel=1e-9)
    assert m2.dead_time == pytest.approx(2.25, rel=1e-9)


def test_models_match_python_control():
    w = np.logspace(-3, 2, 50)
    # Reference library: python-control frequency response, delay factor exp(-j w theta) applied by hand
    cases = [
        (FOPDT(gain=2.0, time_constant=5.0, dead_time=1.5), control.tf([2.0], [5.0, 1.0]), 1.5),
        (
            SOPDT(gain=-1.0, time_constant=4.0, time_constant_2=1.0, dead_time=0.5),
            control.tf([-1.0], [4.0, 5.0, 1.0]),
            0.5,
        ),
        (IntegratingDeadTime(gain=0.2, dead_time=3.0), control.tf([0.2], [1.0, 0.0]), 3.0),
    ]
    for model, ref, theta in cases:
        expected = ref(1j * w) * np.exp(-1j * w * theta)
        np.testing.assert_allclose(model.frequency_response(w), expected, rtol=1e-12)
        lin = model.to_linear()
        assert lin.delay == theta
        np.testing.assert_allclose(lin.frequency_response(w), expected, rtol=1e-10)


def test_units_at_the_boundary():
    m = FOPDT(gain=1.0, time_constant="2 min", dead_time="300 ms")
    assert (m.time_constant, m.dead_time) == (120.0, 0.3)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        (
            {"gain": 1.0, "time_constant": "3 m", "dead_time": 0.0},
            r"`time_constant`: got '3 m', expected time constant in s",
        ),
        ({"gain": 1.0, "time_constant": -1.0, "dead_time": 0.0}, r"`time_constant`: got -1.0"),
        ({"gain": 0.0, "time_constant": 1.0, "dead_time": 0.0}, r"`gain`: got 0.0, expected a nonzero"),
        ({"gain": 1.0, "time_constant": 1.0, "dead_time": math.nan}, r"`dead_time`: got nan"),
    ],
)
def test_fopdt_bad_input(kwargs, match):
    with pytest.raises(ParameterError, match=match):
        FOPDT(**kwargs)


def test_sopdt_order_of_time_constants():
    with pytest.raises(ParameterError, match=r"`time_constant_2`: got 5 s, expected .* <= time_constant \(1 s\)"):
        SOPDT(gain=1.0, time_constant=1.0, time_constant_2=5.0)


def test_half_rule_refuses_what_it_cannot_reduce():
    resonant = transfer_function_model([1.0], [1.0, 0.2, 1.0])
    with pytest.raises(ParameterError, match="complex poles"):
        half_rule(resonant)
    unstable = transfer_function_model([1.0], [1.0, -1.0])
    with pytest.raises(ParameterError, match="unstable poles"):
        half_rule(unstable)
    with pytest.raises(ParameterError, match=r"`order`: got 3, expected 1 \(FOPDT\) or 2 \(SOPDT\)"):
        half_rule(lags_model([1.0]), order=3)
    with pytest.raises(ParameterError, match="`order`: got 2 but the model has only 1 lag"):
        half_rule(lags_model([1.0]), order=2)
