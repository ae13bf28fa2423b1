"""Margins, stability verdicts and step / load metrics against closed forms, python-control and scipy."""

import math

import control
import numpy as np
import pytest
import scipy.optimize

from drivekit.loop import Loop, as_linear
from drivekit.margins import closed_loop_unstable_poles, load_metrics, loop_margins, step_metrics
from drivekit.responses import load_response, step_response
from drivekit.units import ParameterError


def test_routh_closed_form_third_order_integrator():
    m = loop_margins(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))
    # Source: Routh array of s^3 + 3 s^2 + 2 s + K: K_u = 6 at w = sqrt(2)
    # (Ogata, Modern Control Engineering, 5th ed., §5-6)
    assert m.gain_margin == pytest.approx(6.0, rel=1e-12)
    assert m.phase_crossover == pytest.approx(math.sqrt(2.0), rel=1e-12)
    assert m.gain_margin_db == pytest.approx(20 * math.log10(6.0), rel=1e-12)
    assert m.stable
    # Source: python-control stability_margins on the same transfer function
    _, pm, _, _, wc, _ = control.stability_margins(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))
    assert m.phase_margin == pytest.approx(pm, rel=1e-9)
    assert m.gain_crossover == pytest.approx(wc, rel=1e-9)
    assert m.delay_margin == pytest.approx(math.radians(pm) / wc, rel=1e-9)


@pytest.mark.parametrize("n", [3, 4, 5, 8])
def test_astrom_hagglund_lag_chain(n):
    num, den = [1.0], [1.0]
    for _ in range(n):
        den = np.polymul(den, [1.0, 1.0])
    m = loop_margins(control.tf(num, den))
    # Source: Astrom & Hagglund, "Benchmark systems for PID control", IFAC PID'00 (2000), 1/(s+1)^n:
    # phase crossover at tan(pi/n), ultimate gain 1/cos(pi/n)^n
    assert m.phase_crossover == pytest.approx(math.tan(math.pi / n), rel=1e-12)
    assert m.gain_margin == pytest.approx(1.0 / math.cos(math.pi / n) ** n, rel=1e-11)


@pytest.mark.parametrize("T", [0.1, 1.0, 10.0])
def test_astrom_hagglund_first_order_dead_time(T):
    m = loop_margins(as_linear(control.tf([1.0], [T, 1.0]), delay=1.0))
    # Source: Astrom & Hagglund, IFAC PID'00 (2000), e^{-s}/(1+sT): phase crossover solves w + atan(wT) = pi,
    # solved here independently with scipy.optimize.brentq; |L| = 1/sqrt(1 + (wT)^2) there
    w180 = scipy.optimize.brentq(lambda w: w + math.atan(w * T) - math.pi, 1e-6, math.pi, xtol=1e-15)
    assert m.phase_crossover == pytest.approx(w180, rel=1e-12)
    assert m.gain_margin == pytest.approx(math.sqrt(1 + (w180 * T) ** 2), rel=1e-12)
    # |L| < 1 everywhere except w = 0: no gain crossover
    assert math.isinf(m.phase_margin)
    assert m.stable


def test_delay_margin_brings_the_loop_to_the_edge():
    L = as_linear(control.tf([2.0], [1.0, 1.0]), delay=0.3)
    m = loop_margins(L)
    # Source: definition DM = PM / wc (Astrom & Murray, Feedback Systems, 2nd ed., 2021, §10.3);
    # |L| = 1 at w = sqrt(3) for 2/(s+1)
    assert m.gain_crossover == pytest.approx(math.sqrt(3.0), rel=1e-12)
    pm = 180.0 - math.degrees(math.atan(math.sqrt(3.0))) - math.degrees(0.3 * math.sqrt(3.0))
    assert m.phase_margin == pytest.approx(pm, rel=1e-12)
    assert m.delay_margin == pytest.approx(math.radians(pm) / math.sqrt(3.0), rel=1e-12)
    edge = loop_margins(L, delay=m.delay_margin)
    assert edge.phase_margin == pytest.approx(0.0, abs=1e-9)
    assert loop_margins(L, delay=1.01 * m.delay_margin).stable is False
    assert loop_margins(L, delay=0.99 * m.delay_margin).stable is True


def test_several_gain_crossovers_match_python_control():
    # integrator-lag with a lightly damped resonance that lifts |L| above 1 again near 10 rad/s
    g = control.tf([8.0 * 100.0], np.polymul([1.0, 1.0, 0.0], [1.0, 0.4, 100.0]))
    m = loop_margins(g)
    # Source: python-control stability_margins(returnall=True) on the same transfer function
    gms, pms, _, w180s, wcs, _ = control.stability_margins(g, returnall=True)
    ours_wc = [c.omega for c in m.crossings if c.kind == "gain crossover"]
    ours_pm = [c.phase_margin for c in m.crossings if c.kind == "gain crossover"]
    ours_w180 = [c.omega for c in m.crossings if c.kind == "phase crossover"]
    ours_gm = [c.gain_margin for c in m.crossings if c.kind == "phase crossover"]
    assert len(ours_wc) == 3
    np.testing.assert_allclose(ours_wc, np.sort(wcs), rtol=1e-8)
    np.testing.assert_allclose(ours_pm, np.asarray(pms)[np.argsort(wcs)], rtol=1e-8)
    np.testing.assert_allclose(ours_w180, np.sort(w180s), rtol=1e-8)
    np.testing.assert_allclose(ours_gm, np.asarray(gms)[np.argsort(w180s)], rtol=1e-8)
    # the verdict comes from the closed-loop poles
    cl = control.poles(control.feedback(g))
    assert m.stable == bool(np.all(cl.real < 0))
    assert m.unstable_poles == int(np.sum(cl.real > 0))


def test_open_loop_unstable_plant_stabilised():
    # L = 2/(s - 1): closed loop s + 1, stable
    m = loop_margins(control.tf([2.0], [1.0, -1.0]))
    # Source: closed-loop pole s = -1 by hand (1 + L = 0); python-control phase margin side by side
    assert m.stable
    assert m.unstable_poles == 0
    assert m.open_loop_unstable_poles == 1
    assert "open loop has 1 unstable pole" in m.verdict
    _, pm, _, _, wc, _ = control.stability_margins(control.tf([2.0], [1.0, -1.0]))
    assert wc == pytest.approx(math.sqrt(3.0), rel=1e-9)
    assert m.phase_margin == pytest.approx(pm, rel=1e-9)
    assert m.gain_crossover == pytest.approx(math.sqrt(3.0), rel=1e-12)
    # too little gain: unstable
    assert loop_margins(control.tf([0.5], [1.0, -1.0])).stable is False


@pytest.mark.parametrize(("k", "delay"), [(2.0, 0.2), (2.0, 0.6), (1.5, 0.1), (0.8, 0.1), (4.0, 0.4)])
def test_unstable_plant_with_dead_time_against_pade_poles(k, delay):
    L = as_linear(control.tf([k], [1.0, -1.0]), delay=delay)
    n = closed_loop_unstable_poles(L)
    # Source: closed-loop poles of python-control feedback() with a 10th-order Pade approximation of the dead time
    num, den = control.pade(delay, 10)
    ref = control.poles(control.feedback(control.tf([k], [1.0, -1.0]) * control.tf(num, den)))
    assert n == int(np.sum(ref.real > 0))


def test_conditionally_stable_loop():
    # L = (s+1)^2 / s^3: 1 + L -> s^3 + s^2 + 2 s + 1, stable; gain k < 0.5 gives instability
    L = control.tf([1.0, 2.0, 1.0], [1.0, 0.0, 0.0, 0.0])
    m = loop_margins(L)
    # Source: Routh array of s^3 + k s^2 + 2k s + k: stable iff 2k^2 > k, i.e. k > 0.5 (Ogata 5th ed., §5-6)
    assert m.stable
    low = [c for c in m.crossings if c.kind == "phase crossover"]
    assert min(c.gain_margin for c in low) == pytest.approx(0.5, rel=1e-12)
    assert "conditionally stable" in m.verdict
    assert loop_margins(control.tf([0.49, 0.98, 0.49], [1.0, 0.0, 0.0, 0.0])).stable is False


def test_ms_mt_bandwidth_against_dense_python_control_grid():
    g = control.tf([1.0], [1.0, 3.0, 3.0, 1.0])
    c = control.tf([0.9 * 2.0, 0.9], [2.0, 0.0])
    loop = Loop(as_linear(g, delay=0.5), as_linear(c))
    m = loop_margins(loop)
    w = np.logspace(-3, 2, 400001)
    # Source: python-control frequency response of C G on a 400 001-point grid, times the exact e^{-jw theta}
    lw = control.frequency_response(c * g, w).complex.ravel() * np.exp(-0.5j * w)
    assert m.ms == pytest.approx(np.max(np.abs(1 / (1 + lw))), rel=1e-6)
    assert m.mt == pytest.approx(np.max(np.abs(lw / (1 + lw))), rel=1e-6)
    t = np.abs(lw / (1 + lw))
    assert m.bandwidth == pytest.approx(w[np.argmax(t < 1 / math.sqrt(2))], rel=1e-4)
    # cross-path: the open loop given as a model gives the same margins as the loop
    m2 = loop_margins(as_linear(c * g), delay=0.5)
    assert m2.phase_margin == pytest.approx(m.phase_margin, rel=1e-10)
    assert m2.gain_margin == pytest.approx(m.gain_margin, rel=1e-10)


@pytest.mark.parametrize(("zeta", "delay", "kp"), [(0.05, 0.0, 0.4), (0.3, 0.2, 0.4), (0.7, 0.5, 0.8)])
def test_ms_mt_equal_a_bounded_scalar_maximisation(zeta, delay, kp):
    """Sharp and broad peaks, with and without dead time: the peak values to round-off."""
    g = control.tf([1.0], [1.0, 2 * zeta, 1.0])
    c = control.tf([kp * 2.0, kp], [2.0, 0.0])
    m = loop_margins(as_linear(c * g), delay=delay)
    num, den = np.asarray((c * g).num[0][0], float), np.asarray((c * g).den[0][0], float)

    def lw(w):
        s = 1j * w
        return np.polyval(num, s) / np.polyval(den, s) * np.exp(-s * delay)

    w = np.logspace(-2, 2, 200001)
    for value, f in ((m.ms, lambda x: abs(1 / (1 + lw(x)))), (m.mt, lambda x: abs(lw(x) / (1 + lw(x))))):
        i = int(np.argmax(f(w)))
        assert 0 < i < len(w) - 1  # an inner peak
        # Source: scipy.optimize.minimize_scalar (bounded Brent) around the maximum of a 200 001-point grid
        res = scipy.optimize.minimize_scalar(
            lambda x, f=f: -f(x), bounds=(w[i - 1], w[i + 1]), method="bounded", options={"xatol": 1e-14}
        )
        assert value == pytest.approx(-res.fun, rel=1e-10)


def test_bandwidth_closed_form():
    m = loop_margins(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))
    # Source: |T|^2 = 1/2 for T = 1/(s^3 + 3 s^2 + 2 s + 1), solved with scipy brentq
    ref = scipy.optimize.brentq(lambda w: (1 - 3 * w**2) ** 2 + (2 * w - w**3) ** 2 - 2, 0.1, 1.5, xtol=1e-15)
    assert m.bandwidth == pytest.approx(ref, rel=1e-12)
    # Source: python-control bandwidth() (coarser, to about 1e-3)
    assert m.bandwidth == pytest.approx(
        control.bandwidth(control.feedback(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))), rel=2e-3
    )


@pytest.mark.parametrize("zeta", [0.2, 0.5, 0.7])
def test_step_metrics_second_order_closed_form_and_step_info(zeta):
    wn = 2.0
    g = control.tf([wn**2], [1.0, 2 * zeta * wn, wn**2])
    r = step_response(g)
    s = step_metrics(r)
    # Source: Ogata, Modern Control Engineering, 5th ed., §5-3: Mp = exp(-pi zeta / sqrt(1 - zeta^2)),
    # tp = pi / (wn sqrt(1 - zeta^2))
    assert s.overshoot == pytest.approx(100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2)), rel=1e-5)
    assert s.peak_time == pytest.approx(math.pi / (wn * math.sqrt(1 - zeta**2)), rel=1e-3)
    # Source: python-control step_info on the same samples (it reads times off the grid, no interpolation)
    info = control.step_info(g, r.t)
    h = r.t[1]
    assert s.rise_time == pytest.approx(info["RiseTime"], abs=2 * h)
    assert s.settling_time == pytest.approx(info["SettlingTime"], abs=h)
    assert s.peak == pytest.approx(info["Peak"], rel=1e-4)
    assert s.final_value == pytest.approx(info["SteadyStateValue"], rel=1e-12)


def test_step_metrics_of_loop_iae_and_undershoot():
    g = control.tf([-1.0, 1.0], [1.0, 3.0, 2.0])  # right-half-plane zero: initial undershoot
    c = control.tf([0.5 * 1.0, 0.5], [1.0, 0.0])
    loop = Loop(as_linear(g), as_linear(c))
    s = step_metrics(loop)
    r = step_response(loop)
    # Source: python-control step_info on python-control's response of feedback(C G)
    info = control.step_info(control.feedback(c * g), r.t)
    assert s.undershoot == pytest.approx(info["Undershoot"], rel=1e-3)
    assert s.steady_state_error == pytest.approx(0.0, abs=1e-12)
    # IAE against scipy's quad of |1 - y| on python-control's fine response
    tf = np.linspace(0, r.t[-1], 200001)
    yf = control.step_response(control.feedback(c * g), tf).outputs
    assert s.iae == pytest.approx(np.trapezoid(np.abs(1 - yf), tf), rel=1e-4)
    assert s.itae == pytest.approx(np.trapezoid(tf * np.abs(1 - yf), tf), rel=1e-4)


def test_load_metrics_against_fine_python_control_response():
    g = control.tf([2.0], [3.0, 4.0, 1.0])
    c = control.tf([0.8 * 2.0, 0.8], [2.0, 0.0])
    loop = Loop(as_linear(g), as_linear(c))
    lm = load_metrics(load_response(loop))
    # Source: python-control step response of feedback(G, C) on a 200 001-point grid
    tf = np.linspace(0, load_response(loop).t[-1], 200001)
    yf = control.step_response(control.feedback(g, c), tf).outputs
    assert lm.peak_deviation == pytest.approx(np.max(yf), rel=1e-5)
    assert lm.peak_time == pytest.approx(tf[np.argmax(yf)], rel=1e-3)
    assert lm.iae == pytest.approx(np.trapezoid(np.abs(yf), tf), rel=1e-4)
    outside = np.nonzero(np.abs(yf) > 0.05 * np.max(yf))[0]
    assert lm.recovery_time == pytest.approx(tf[outside[-1]], rel=1e-3)
    assert lm.offset == pytest.approx(0.0, abs=1e-12)
    assert load_metrics(loop).iae == pytest.approx(lm.iae, rel=1e-12)


def test_bad_arguments_and_tables():
    with pytest.raises(ParameterError, match="`delay`"):
        loop_margins(control.tf([1], [1, 1]), delay=float("nan"))
    with pytest.raises(ParameterError, match="`settling_threshold`"):
        step_metrics(control.tf([1], [1, 1]), settling_threshold=2.0)
    with pytest.raises(ParameterError, match="`band`"):
        load_metrics(Loop(as_linear(control.tf([1], [1, 1])), as_linear(control.tf([1], [1]))), band=0.0)
    m = loop_margins(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))
    assert m.table()[0][1] == m.verdict
    assert len(step_metrics(control.tf([1], [1, 1])).table()) == 10


def test_load_iae_of_a_non_overshooting_pi_loop_is_one_over_ki():
    from drivekit.pid import PID

    plant = as_linear(control.tf([1.0], [2.0, 1.0]), delay=0.5)
    for kp, ti in [(0.5, 2.0), (0.3, 2.0)]:
        resp = load_response(Loop(plant, PID(kp, ti)))
        # the answer never changes sign, inside the window or in its tail
        assert np.min(resp.y) >= 0.0
        lm = load_metrics(resp)
        # Source: Astrom & Hagglund, Advanced PID Control, ISA 2006, §4 (from memory): with integral action the
        # integral of the error after a unit load step is 1/ki = ti/kp, so IAE = 1/ki when it keeps one sign
        assert lm.iae == pytest.approx(ti / kp, rel=1e-6)
        # the window alone falls short by the tail, which the response carries
        assert resp.tail_iae > 0.0
