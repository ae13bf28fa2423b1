"""Discretisation of the PID and of the plant against scipy.signal and an independent simulation."""

import math

import numpy as np
import pytest
import scipy.signal

from drivekit.discrete import discretize_pid, scan_time_effect, zoh_plant
from drivekit.margins import loop_margins
from drivekit.models import FOPDT, transfer_function_model
from drivekit.pid import PID
from drivekit.units import ParameterError

SCIPY_METHOD = {"tustin": "bilinear", "backward_euler": "backward_diff", "forward_euler": "euler"}


def normalised_tf(num, den):
    num, den = np.atleast_1d(np.squeeze(num)), np.atleast_1d(np.squeeze(den))
    num = np.concatenate([np.zeros(len(den) - len(num)), num])
    return num / den[0], den / den[0]


@pytest.mark.parametrize("method", ["tustin", "backward_euler", "forward_euler"])
@pytest.mark.parametrize(
    "pid",
    [PID(2.0, 10.0), PID(1.5, 8.0, 2.0, derivative_filter=8.0), PID(3.0, 20.0, 4.0, form="series"), PID(0.8)],
    ids=["PI", "PID", "series PID", "P"],
)
def test_pid_discretisation_matches_scipy(method, pid):
    # Reference library: scipy.signal.cont2discrete (Franklin, Powell & Workman, 3rd ed., §6.2 substitutions)
    ts = 0.1
    d = discretize_pid(pid, ts, method)
    num = np.asarray(pid.tf.num[0][0], float)
    den = np.asarray(pid.tf.den[0][0], float)
    ref_num, ref_den, _ = scipy.signal.cont2discrete((num, den), ts, method=SCIPY_METHOD[method])
    rn, rd = normalised_tf(ref_num, ref_den)
    z = np.exp(1j * np.linspace(0.01, 3.1, 50))
    np.testing.assert_allclose(
        np.polyval(d.num, z) / np.polyval(d.den, z), np.polyval(rn, z) / np.polyval(rd, z), rtol=1e-10
    )
    if pid.kind != "P":  # scipy leaves a static gain as (k z - k)/(z - 1); compare coefficients elsewhere
        np.testing.assert_allclose(d.num, rn, rtol=1e-10, atol=1e-12)
        np.testing.assert_allclose(d.den, rd, rtol=1e-10, atol=1e-12)
    assert d.tf.dt == ts


def test_pi_tustin_hand_calculation():
    # Hand calculation: C(s) = 2 (1 + 1/(10 s)), s = (2/Ts)(z-1)/(z+1), Ts = 0.1:
    # C(z) = 2 + 0.01 (z + 1)/(z - 1) = (2.01 z - 1.99)/(z - 1)
    d = discretize_pid(PID(2.0, 10.0), "100 ms")
    np.testing.assert_allclose(d.num, [2.01, -1.99], rtol=1e-12)
    np.testing.assert_allclose(d.den, [1.0, -1.0], rtol=1e-12)


def test_zoh_without_delay_matches_scipy():
    plant = transfer_function_model([2.0], np.polymul([3.0, 1.0], [0.5, 1.0]))
    d = zoh_plant(plant, 0.2)
    # Reference library: scipy.signal.cont2discrete, zero-order hold
    ad, bd, cd, dd, _ = scipy.signal.cont2discrete((plant.A, plant.B, plant.C, plant.D), 0.2, method="zoh")
    np.testing.assert_allclose(d.A, ad, rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(d.B, bd, rtol=1e-12, atol=1e-14)
    rn, _ = normalised_tf(*scipy.signal.ss2tf(ad, bd, cd, dd))
    np.testing.assert_allclose(d.num, rn, rtol=1e-9, atol=1e-13)


@pytest.mark.parametrize("delay", [0.0, 0.2, 0.23, 0.5, 0.57])
def test_zoh_with_delay_matches_fine_simulation(delay):
    # Independent: simulate the continuous plant with scipy.signal.lsim on a 10x finer grid with the
    # held input shifted by the dead time (exact for piecewise-constant inputs), sample every Ts.
    ts, fine = 0.1, 100
    plant = transfer_function_model([2.0], np.polymul([1.0, 1.0], [0.3, 1.0]), dead_time=delay)
    rng = np.random.default_rng(3)
    u = rng.normal(size=60)
    dt = ts / fine
    t = np.arange(60 * fine) * dt
    u_fine = np.repeat(u, fine)
    shift = round(delay / dt)
    u_delayed = np.concatenate([np.zeros(shift), u_fine[: len(u_fine) - shift]])
    _, y_fine, _ = scipy.signal.lsim((plant.A, plant.B, plant.C, plant.D), u_delayed, t, interp=False)
    y_ref = y_fine[::fine]
    d = zoh_plant(plant, ts)
    x = np.zeros(d.A.shape[0])
    y = np.zeros(60)
    for k in range(60):
        y[k] = (d.C @ x + d.D[:, 0] * u[k])[0]
        x = d.A @ x + d.B[:, 0] * u[k]
    np.testing.assert_allclose(y, y_ref, atol=1e-9)


def test_sampled_margins_and_the_half_sample_rule():
    plant = FOPDT(gain=1.0, time_constant=5.0, dead_time=1.0).to_linear()
    pid = PID(1.5, 5.0)
    eff = scan_time_effect(plant, pid, 0.1)
    # Cross-path: the continuous phase margin against drivekit.margins.loop_margins on the same loop
    from drivekit.loop import Loop

    ref = loop_margins(Loop(plant, pid))
    assert eff.phase_margin_continuous == pytest.approx(ref.phase_margin, abs=0.01)
    assert eff.gain_margin_continuous == pytest.approx(ref.gain_margin, rel=1e-3)
    # Source: Åström & Wittenmark, Computer-Controlled Systems, 3rd ed., §8.2 (from memory): sample and
    # hold ~ a dead time Ts/2, so the phase margin falls by about wc Ts/2. At Ts = 0.1 s and wc ~ 0.3
    # rad/s the approximation and the exact sampled loop agree to a small fraction of a degree.
    loss = eff.phase_margin_continuous - eff.phase_margin_sampled
    assert loss == pytest.approx(eff.phase_loss_estimate, rel=0.05)
    assert eff.phase_margin_half_sample == pytest.approx(eff.phase_margin_sampled, abs=0.1)
    # exact: the continuous margin with an extra Ts/2 of dead time
    assert eff.phase_margin_half_sample == pytest.approx(
        eff.phase_margin_continuous - math.degrees(eff.crossover_continuous * 0.05), abs=1e-6
    )


def test_slow_scan_costs_gain_margin():
    plant = FOPDT(gain=1.0, time_constant=5.0, dead_time=1.0).to_linear()
    pid = PID(1.5, 5.0)
    fast = scan_time_effect(plant, pid, 0.05)
    slow = scan_time_effect(plant, pid, 1.0)
    assert slow.gain_margin_sampled < fast.gain_margin_sampled < fast.gain_margin_continuous


def test_bad_input():
    with pytest.raises(ParameterError, match=r"`method`: got 'zoh', expected one of 'tustin'"):
        discretize_pid(PID(1.0, 1.0), 0.1, "zoh")
    with pytest.raises(ParameterError, match=r"`sample_time`: got None and the PID has no scan time"):
        discretize_pid(PID(1.0, 1.0))
    with pytest.raises(ParameterError, match=r"`sample_time`: got -0.1, expected scan time in s, > 0"):
        zoh_plant(FOPDT(gain=1.0, time_constant=1.0).to_linear(), -0.1)
