"""Step, impulse and frequency responses against python-control, scipy and a method-of-steps solution."""

import dataclasses
import math

import control
import numpy as np
import pytest
import scipy.integrate
import scipy.linalg

from drivekit.loop import Loop, as_linear
from drivekit.responses import (
    frequency_response,
    impulse_response,
    load_response,
    pade_coefficients,
    step_response,
    time_span,
)
from drivekit.units import ParameterError

PLANTS = {
    "first order": control.tf([2.0], [3.0, 1.0]),
    "integrator": control.tf([0.5], [1.0, 1.0, 0.0]),
    "lightly damped": control.tf([4.0], [1.0, 0.2, 4.0]),
    "open-loop unstable": control.tf([1.0], [1.0, 1.0, -2.0]),
    "triple lag": control.tf([1.0], [1.0, 3.0, 3.0, 1.0]),
    "with zero": control.tf([-1.0, 1.0], [1.0, 3.0, 2.0]),
}


@pytest.mark.parametrize("name", list(PLANTS))
def test_open_loop_step_and_impulse_match_python_control(name):
    g = PLANTS[name]
    r = step_response(g, t_end=10.0)
    # Source: python-control step_response / impulse_response on the same grid
    ref = control.step_response(g, r.t).outputs
    np.testing.assert_allclose(r.y, ref, rtol=1e-9, atol=1e-9 * np.max(np.abs(ref)))
    ri = impulse_response(g, t_end=10.0)
    refi = control.impulse_response(g, ri.t).outputs
    np.testing.assert_allclose(ri.y, refi, rtol=1e-9, atol=1e-9 * np.max(np.abs(refi)))


def test_open_loop_dead_time_is_a_time_shift():
    g = PLANTS["lightly damped"]
    r = step_response(as_linear(g, delay=1.234), t_end=12.0, points=400)
    late = r.t >= 1.234
    assert np.all(r.y[~late] == 0.0)
    # Source: closed form y(tau) = C A^-1 (e^{A tau} - I) B of the delay-free part (scipy expm), tau = t - delay
    ss = control.ss(g)
    A, B, C = np.asarray(ss.A), np.asarray(ss.B), np.asarray(ss.C)
    ref = np.array(
        [(C @ np.linalg.solve(A, (scipy.linalg.expm(A * tau) - np.eye(2)) @ B))[0, 0] for tau in r.t[late] - 1.234]
    )
    np.testing.assert_allclose(r.y[late], ref, rtol=1e-9, atol=1e-10)


def test_time_span_rule():
    # Source: the rule in drivekit.responses (ln(200) time constants of the slowest mode + dead time),
    # a first-order lag of 3 s reaches 99.5 % after 3 ln(200) s
    assert time_span(as_linear(PLANTS["first order"], delay=0.5)) == pytest.approx(
        0.5 + 3.0 * math.log(200.0), rel=1e-12
    )
    r = step_response(PLANTS["first order"])
    assert len(r.t) == 500
    assert r.y[-1] == pytest.approx(2.0 * (1 - 0.005), rel=1e-9)


def _pi(kp, ti):
    return control.tf([kp * ti, kp], [ti, 0.0])


@pytest.mark.parametrize("name", ["first order", "integrator", "lightly damped", "triple lag", "open-loop unstable"])
def test_delay_free_closed_loop_matches_python_control(name):
    g = PLANTS[name]
    # Routh: 2s^3 + 2s^2 + 8s + 6 for the unstable plant with this PI: stable
    c = _pi(6.0, 2.0) if name == "open-loop unstable" else _pi(0.4, 3.0)
    loop = Loop(as_linear(g), as_linear(c))
    r = step_response(loop)
    # Source: python-control feedback() of the same loop, setpoint to output and to controller output
    ref_y = control.step_response(control.feedback(c * g), r.t).outputs
    ref_u = control.step_response(control.feedback(c, g), r.t).outputs
    np.testing.assert_allclose(r.y, ref_y, atol=1e-9)
    np.testing.assert_allclose(r.u, ref_u, atol=1e-9 * max(1.0, np.max(np.abs(ref_u))))
    assert r.final_value == pytest.approx(1.0, rel=1e-9)
    d = load_response(loop)
    ref_d = control.step_response(control.feedback(g, c), d.t).outputs
    np.testing.assert_allclose(d.y, ref_d, atol=1e-9)


def _method_of_steps(plant, kp, ti, r, d, t):
    """Loop with dead time solved as a delay differential equation interval by interval (scipy solve_ivp)."""
    ss = control.ss(plant)
    A, B, C = np.asarray(ss.A), np.asarray(ss.B)[:, 0], np.asarray(ss.C)[0]
    theta = plant_delay = _method_of_steps.delay
    n = A.shape[0]
    pieces = []

    def y_delayed(tt):
        tau = tt - theta
        if tau <= 0:
            return 0.0
        for a, b, sol in pieces:
            if a - 1e-12 <= tau <= b + 1e-12:
                return float(C @ sol.sol(tau)[:n])
        raise AssertionError("history missing")

    def rhs(tt, x):
        e = r - y_delayed(tt)
        u = kp * (e + x[n] / ti)
        return np.concatenate([A @ x[:n] + B * (u + d), [e]])

    x0, t0 = np.zeros(n + 1), 0.0
    while t0 < t[-1]:
        t1 = min(t0 + plant_delay, t[-1])
        sol = scipy.integrate.solve_ivp(rhs, (t0, t1), x0, method="DOP853", dense_output=True, rtol=1e-11, atol=1e-13)
        pieces.append((t0, t1, sol))
        x0, t0 = sol.y[:, -1], t1
    return np.array([y_delayed(tt) for tt in t])


@pytest.mark.parametrize(("delay", "t_end", "tol"), [(1.0, 15.0, 5e-5), (0.013, 15.0, 2e-4)])
def test_closed_loop_with_dead_time_matches_method_of_steps(delay, t_end, tol):
    # the second case has a dead time shorter than the grid step (implicit path)
    g = PLANTS["first order"]
    loop = Loop(as_linear(g, delay=delay), as_linear(_pi(0.6, 3.0)))
    r = step_response(loop, t_end=t_end)
    d = load_response(loop, t_end=t_end)
    _method_of_steps.delay = delay
    # Source: scipy.integrate.solve_ivp on the delay differential equation by the method of steps
    # (up to 4 s only: a short dead time needs many intervals)
    k = r.t <= 4.0
    ref_r = _method_of_steps(g, 0.6, 3.0, 1.0, 0.0, r.t[k])
    ref_d = _method_of_steps(g, 0.6, 3.0, 0.0, 1.0, d.t[k])
    # first-order hold of the delayed measurement: error O(h^2), h = t_end/499 = 0.03 s (interpolated
    # twice when the dead time is shorter than a step)
    np.testing.assert_allclose(r.y[k], ref_r, atol=tol)
    np.testing.assert_allclose(d.y[k], ref_d, atol=tol)
    if delay >= r.t[1]:
        # the grid step divides the dead time
        assert delay / r.t[1] == pytest.approx(round(delay / r.t[1]), abs=1e-9)


def test_frequency_response_matches_python_control_with_exact_delay():
    g = control.tf([1.0, 2.0], [1.0, 0.3, 9.0, 0.0, 0.0])
    fr = frequency_response(as_linear(g, delay=0.7))
    # Source: python-control frequency response times the exact e^{-jw theta}
    ref = control.frequency_response(g, fr.omega)
    np.testing.assert_allclose(fr.response, ref.complex.ravel() * np.exp(-0.7j * fr.omega), rtol=1e-9)
    np.testing.assert_allclose(fr.mag_db, 20 * np.log10(ref.magnitude.ravel()), rtol=1e-9)
    # two integrators: the phase starts at -180 deg and stays continuous
    w0 = fr.omega[0]
    # Source: sum of the factors' angles by hand: -2 x 90 deg + atan(w/2) - arg(9 - w^2 + 0.3jw) - w theta
    expected0 = -180.0 + np.degrees(np.arctan(w0 / 2) - np.arctan2(0.3 * w0, 9 - w0**2) - 0.7 * w0)
    assert fr.phase_deg[0] == pytest.approx(expected0, abs=1e-9)
    ref_phase = np.degrees(np.unwrap(np.angle(ref.complex.ravel() * np.exp(-0.7j * fr.omega))))
    ref_phase += -180.0 - ref_phase[0] + (fr.phase_deg[0] + 180.0)
    np.testing.assert_allclose(fr.phase_deg, ref_phase, atol=1e-6)
    assert len(fr.omega) == 400
    assert fr.hz[0] == pytest.approx(fr.omega[0] / (2 * np.pi))
    # a point is near the resonance at 3 rad/s
    assert np.min(np.abs(fr.omega - 3.0)) < 0.01


def test_loop_frequency_response_has_s_and_t():
    loop = Loop(as_linear(PLANTS["triple lag"], delay=0.2), as_linear(_pi(0.5, 2.0)))
    fr = frequency_response(loop)
    lw = fr.response
    np.testing.assert_allclose(fr.sensitivity_mag, np.abs(1 / (1 + lw)), rtol=1e-12)
    np.testing.assert_allclose(fr.complementary_mag, np.abs(lw / (1 + lw)), rtol=1e-12)
    assert list(fr.to_frame().columns)[-2:] == ["|S|", "|T|"]


@pytest.mark.parametrize("order", [1, 3, 6])
def test_pade_coefficients_match_python_control(order):
    num, den = pade_coefficients(0.8, order)
    # Source: python-control pade()
    ref_num, ref_den = control.pade(0.8, order)
    np.testing.assert_allclose(num, ref_num, rtol=1e-12)
    np.testing.assert_allclose(den, ref_den, rtol=1e-12)


def test_bad_arguments():
    with pytest.raises(ParameterError, match="`points`"):
        step_response(PLANTS["first order"], points=2)
    with pytest.raises(ParameterError, match="`t_end`"):
        step_response(PLANTS["first order"], t_end=-1.0)
    with pytest.raises(ParameterError, match="`omega`"):
        frequency_response(PLANTS["first order"], omega=[0.0, 1.0])
    with pytest.raises(ParameterError, match="`loop`"):
        load_response(as_linear(PLANTS["first order"]))
    r = step_response(PLANTS["first order"])
    assert dataclasses.is_dataclass(r)
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.final_value = 3.0


@pytest.mark.parametrize(("kp", "ti"), [(150.0, 12.0), (20.0, 1.3556), (20.0, 0.61)])
def test_slow_pi_on_the_demo_loop_settles_inside_the_window(kp, ti):
    from drivekit import demo
    from drivekit.margins import step_metrics
    from drivekit.pid import PID

    train = demo.raw_water_pump()
    plant = train.linearize(train.operating_point(flow=demo.RAW_WATER_FLOW_TARGET))
    loop = Loop(plant, PID(kp, ti))
    r = step_response(loop)
    s = step_metrics(r)
    assert math.isfinite(s.settling_time)
    # Source: the rule in drivekit.responses: the window reaches ln(200) time constants of the slowest
    # closed-loop mode (poles of python-control's feedback() with a 6th-order Pade dead time)
    cl = control.poles(control.feedback(PID(kp, ti).tf * plant.pade(6)))
    assert r.t[-1] >= math.log(200.0) / np.min(np.abs(cl.real)) - 1e-9
    # Source: python-control step_info on a long fine simulation of the same loop (6th-order Pade dead time),
    # within two grid steps plus the Pade error
    t = np.linspace(0.0, 3.0 * r.t[-1], 30001)
    ref = control.step_response(control.feedback(PID(kp, ti).tf * plant.pade(6)), t).outputs
    info = control.step_info(ref, T=t)
    assert s.settling_time == pytest.approx(info["SettlingTime"], abs=2 * r.t[1] + 0.01 * s.settling_time)
