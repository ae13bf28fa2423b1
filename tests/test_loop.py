"""Loops: conversion from python-control, series and feedback, sensitivities."""

import dataclasses

import control
import numpy as np
import pytest

from drivekit.linear import LinearModel
from drivekit.loop import Loop, as_linear, feedback, series, zpk
from drivekit.units import ParameterError

W = np.logspace(-2, 2, 50)


def test_as_linear_matches_python_control_tf_and_ss():
    g = control.tf([2.0, 1.0], [1.0, 3.0, 2.0, 0.0])
    m = as_linear(g, delay=0.3)
    # Source: python-control frequency response of the same system, times the exact e^{-jw theta}
    ref = control.frequency_response(g, W).complex.ravel() * np.exp(-1j * W * 0.3)
    np.testing.assert_allclose(m.frequency_response(W), ref, rtol=1e-10)
    m2 = as_linear(control.ss(g))
    np.testing.assert_allclose(m2.frequency_response(W), ref * np.exp(1j * W * 0.3), rtol=1e-10)
    assert m.delay == 0.3
    # a delay adds to the model's own
    assert as_linear(m, delay=0.2).delay == pytest.approx(0.5, abs=1e-15)


def test_as_linear_rejects_bad_input():
    with pytest.raises(ParameterError, match="`delay`"):
        as_linear(control.tf([1], [1, 1]), delay=-1.0)
    with pytest.raises(ParameterError, match="improper"):
        as_linear(control.tf([1, 0, 0], [1, 1]))
    with pytest.raises(ParameterError, match="discrete-time"):
        as_linear(control.tf([1], [1, 0.5], 0.1))
    with pytest.raises(ParameterError, match="single-input"):
        as_linear(control.ss(np.eye(2) * -1, np.eye(2), np.eye(2), np.zeros((2, 2))))
    with pytest.raises(ParameterError, match="`sys`"):
        as_linear("1/(s+1)")


def test_series_and_feedback_match_python_control():
    g1 = control.tf([1.0], [1.0, 1.0])
    g2 = control.tf([3.0, 1.0], [1.0, 0.4, 4.0])
    # Source: python-control series/feedback of the same transfer functions
    ref_s = control.frequency_response(control.series(g1, g2), W).complex.ravel()
    np.testing.assert_allclose(series(g1, g2).frequency_response(W), ref_s, rtol=1e-10)
    ref_f = control.frequency_response(control.feedback(g2, g1), W).complex.ravel()
    np.testing.assert_allclose(feedback(g2, g1).frequency_response(W), ref_f, rtol=1e-10)
    ref_u = control.frequency_response(control.feedback(g2), W).complex.ravel()
    np.testing.assert_allclose(feedback(g2).frequency_response(W), ref_u, rtol=1e-10)
    ref_p = control.frequency_response(control.feedback(g2, g1, sign=1), W).complex.ravel()
    np.testing.assert_allclose(feedback(g2, g1, sign=1).frequency_response(W), ref_p, rtol=1e-10)
    # a feedthrough in both paths
    g3 = control.tf([2.0, 1.0], [1.0, 3.0])
    ref_d = control.frequency_response(control.feedback(g3, g3), W).complex.ravel()
    np.testing.assert_allclose(feedback(g3, g3).frequency_response(W), ref_d, rtol=1e-10)
    with pytest.raises(ParameterError, match="dead time"):
        feedback(as_linear(g1, delay=1.0))


@dataclasses.dataclass(frozen=True)
class _PI:
    """A minimal controller object exposing to_linear(), as drivekit.pid.PID does."""

    kp: float
    ti: float

    def to_linear(self) -> LinearModel:
        return as_linear(control.tf([self.kp * self.ti, self.kp], [self.ti, 0.0]))


def test_loop_relations_and_poles():
    plant = as_linear(control.tf([2.0], [1.0, 3.0, 1.0]), delay=0.4)
    loop = Loop(plant, _PI(kp=0.8, ti=2.0))
    c = control.tf([0.8 * 2.0, 0.8], [2.0, 0.0])
    lw = loop.open_loop_response(W)
    # Source: python-control product C G with the exact dead time
    ref = (control.frequency_response(c * control.tf([2.0], [1.0, 3.0, 1.0]), W).complex.ravel()) * np.exp(-0.4j * W)
    np.testing.assert_allclose(lw, ref, rtol=1e-10)
    np.testing.assert_allclose(loop.sensitivity(W) + loop.complementary_sensitivity(W), 1.0, atol=1e-12)
    np.testing.assert_allclose(loop.open_loop.frequency_response(W), ref, rtol=1e-10)
    np.testing.assert_allclose(loop.load_response(W), plant.frequency_response(W) / (1 + ref), rtol=1e-10)
    with pytest.raises(ParameterError, match="dead time"):
        loop.closed_loop_matrix()
    free = Loop(dataclasses.replace(plant, delay=0.0), c)
    # Source: poles of python-control's feedback(C G)
    ref_p = np.sort_complex(control.poles(control.feedback(c * control.tf([2.0], [1.0, 3.0, 1.0]))))
    np.testing.assert_allclose(np.sort_complex(free.closed_loop_poles()), ref_p, rtol=1e-9)


def test_setpoint_weights_shape_the_setpoint_response():
    from drivekit.pid import PID
    from drivekit.responses import step_response

    g = control.tf([2.0], [1.0, 3.0, 1.0])
    for b, c in [(0.5, 0.0), (1.0, 0.0), (0.3, 0.5)]:
        pid = PID(1.2, 2.0, 0.4, setpoint_weights=(b, c))
        loop = Loop(as_linear(g), pid)
        r = step_response(loop, t_end=15.0)
        # Source: python-control: y/r = C_r G / (1 + C G) with the PID's setpoint path C_r (setpoint_tf)
        ref = control.step_response(control.feedback(g, pid.tf) * pid.setpoint_tf, r.t).outputs
        np.testing.assert_allclose(r.y, ref, atol=1e-9)
        ref_u = control.step_response(control.feedback(1, g * pid.tf) * pid.setpoint_tf, r.t).outputs
        np.testing.assert_allclose(r.u, ref_u, atol=1e-9 * max(1.0, np.max(np.abs(ref_u))))
        np.testing.assert_allclose(
            loop.setpoint_response(W),
            control.frequency_response(control.feedback(g, pid.tf) * pid.setpoint_tf, W).complex.ravel(),
            rtol=1e-10,
        )
    # a PI with b = 1 has no separate setpoint path
    assert Loop(as_linear(g), PID(1.2, 2.0)).setpoint_path is None


@pytest.mark.parametrize(
    ("num", "den"),
    [
        ([2.0], np.poly([-0.3, -1.0, -20.0, -155.0])),  # a chain of lags: no finite zeros
        ([1.5, 3.0], np.poly([-0.5, -2.0, -7.0])),  # one zero
        ([1.0, 0.2, 4.0], [1.0, 3.0, 2.0]),  # biproper: zeros from A - B C / D
    ],
)
def test_factored_form_against_python_control(num, den):
    model = as_linear(control.tf(num, den))
    z, p, k = zpk(model)
    # Source: python-control zeros, poles and the gain of the monic factored form of the same transfer function
    g = control.tf(num, den)
    np.testing.assert_allclose(np.sort_complex(z), np.sort_complex(control.zeros(g)), rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(np.sort_complex(p), np.sort_complex(control.poles(g)), rtol=1e-10)
    assert k == pytest.approx(num[0] / den[0], rel=1e-10)


def test_lag_chain_gain_from_markov_parameter():
    # a drive-train-like chain in state-space form (not companion form): three lags and a gain in series
    lags = [(7.9, 3.28), (1.0, 1.0), (1.0, 0.05)]
    model = None
    for gain, tau in lags:
        stage = LinearModel(np.array([[-1.0 / tau]]), np.array([[1.0 / tau]]), np.array([[gain]]), np.zeros((1, 1)))
        model = stage if model is None else series(model, stage)
    z, p, k = zpk(model)
    # Source: python-control product of the same first-order transfer functions gain/(tau s + 1), in monic form
    g = control.tf([1.0], [1.0])
    for gain, tau in lags:
        g = g * control.tf([gain], [tau, 1.0])
    num, den = np.squeeze(g.num[0][0]), np.squeeze(g.den[0][0])
    assert len(z) == 0
    assert k == pytest.approx(float(np.atleast_1d(num)[0] / den[0]), rel=1e-12)
    np.testing.assert_allclose(np.sort_complex(p), np.sort_complex(control.poles(g)), rtol=1e-12)
