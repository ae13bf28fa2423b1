"""Step-test identification against known models, the published two-point formulas and python-control."""

from __future__ import annotations

import math
import pathlib

import control
import numpy as np
import pytest

import drivekit as dk
from drivekit import identify
from drivekit.models import FOPDT, SOPDT, IntegratingDeadTime

DATA = pathlib.Path(__file__).resolve().parents[1] / "notebooks" / "data" / "bump_test_invented.csv"

# An invented flow loop: gain 7.9 (m3/h)/%, tau 4.5 s, theta 1.1 s, in SI.
K_SI, TAU, THETA = 7.9 / 3600.0, 4.5, 1.1


def fopdt_record(*, dt=0.05, t_end=90.0, t_step=30.0, step=5.0, noise=0.0, drift=0.0, seed=0):
    """Exact FOPDT step response sampled at dt (the step mid-record), plus seeded noise and drift (SI)."""
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, t_end, dt)
    u = np.where(t >= t_step - 1e-9, 60.0 + step, 60.0)
    x = t - t_step - THETA
    y = 380.0 / 3600 + K_SI * step * np.where(x > 0, -np.expm1(-np.maximum(x, 0.0) / TAU), 0.0)
    y = y + drift * t + rng.normal(0.0, noise, t.size)
    return t, y, u


def crossing(p, tau=TAU, theta=THETA):
    """Time after the step at which an FOPDT response reaches the fraction p: theta + tau ln(1/(1-p))."""
    return theta + tau * math.log(1.0 / (1.0 - p))


# ---------------------------------------------------------------- two-point formulas, noise-free
def test_smith_method_matches_its_formula_on_an_exact_fopdt():
    t, y, u = fopdt_record(dt=0.01)
    fit = identify.fopdt(t, y, u, method="smith", output_unit="m**3/s")
    t1, t2 = crossing(0.283), crossing(0.632)
    # Source: Seborg, Edgar, Mellichamp & Doyle, Process Dynamics and Control, 3rd ed., §7.2 (Smith 1972):
    # tau = 1.5 (t63.2 - t28.3), theta = t63.2 - tau
    tau_expected = 1.5 * (t2 - t1)
    theta_expected = t2 - tau_expected
    # interpolation between 10 ms samples of a smooth curve: errors far below 1e-3 s
    assert fit.time_constant == pytest.approx(tau_expected, abs=1e-3)
    assert fit.dead_time == pytest.approx(theta_expected, abs=1e-3)
    # final value from the last tenth of the record, about 12 time constants after the step: e^-11.8 short
    assert fit.gain == pytest.approx(K_SI, rel=2e-5)
    # Smith's points are at ln(1/0.717) and ln(1/0.368) time constants: tau within 0.1 %, theta within 5 ms
    assert fit.time_constant == pytest.approx(TAU, rel=2e-3)
    assert fit.dead_time == pytest.approx(THETA, abs=5e-3)


def test_sundaresan_krishnaswamy_uses_the_papers_constant_067_not_two_thirds():
    t, y, u = fopdt_record(dt=0.01)
    fit = identify.fopdt(t, y, u, method="sundaresan_krishnaswamy", output_unit="m**3/s")
    t1, t2 = crossing(0.353), crossing(0.853)
    # Source: Sundaresan & Krishnaswamy, Can. J. Chem. Eng. 56 (1978) 257-262:
    # tau = 0.67 (t85.3 - t35.3), theta = 1.3 t35.3 - 0.29 t85.3
    assert fit.time_constant == pytest.approx(0.67 * (t2 - t1), abs=1e-3)
    assert fit.dead_time == pytest.approx(1.3 * t1 - 0.29 * t2, abs=1e-3)
    # the 2/3 misprint would give a time constant 0.5 % smaller: 0.022 s here, well above the 1e-3 s tolerance
    assert abs(fit.time_constant - 2.0 / 3.0 * (t2 - t1)) > 0.02
    assert identify.SK_TAU_FACTOR == 0.67


def test_least_squares_recovers_an_exact_fopdt_with_the_step_mid_record():
    t, y, u = fopdt_record(dt=0.2)
    fit = identify.fopdt(t, y, u, output_unit="m**3/s")
    assert fit.step_time == pytest.approx(30.0)
    assert fit.step_size == pytest.approx(5.0)
    assert (fit.gain, fit.time_constant, fit.dead_time) == pytest.approx((K_SI, TAU, THETA), rel=1e-6)
    assert fit.r_squared == pytest.approx(1.0, abs=1e-10)


# ---------------------------------------------------------------- noise and drift
@pytest.mark.parametrize(
    ("method", "gain_rel", "tau_rel", "theta_abs"),
    [
        ("smith", 0.03, 0.13, 0.35),
        ("sundaresan_krishnaswamy", 0.03, 0.13, 0.45),
        ("least_squares", 0.02, 0.05, 0.1),
    ],
)
def test_noisy_drifting_record_gives_the_generating_model(method, gain_rel, tau_rel, theta_abs):
    # noise 0.5 m3/h on a 39.5 m3/h change (1.3 %); drift 0.02 m3/h per s
    t, y, u = fopdt_record(dt=0.2, noise=0.5 / 3600, drift=0.02 / 3600, seed=7)
    fit = identify.fopdt(t, y, u, method=method, output_unit="m**3/s")
    # tolerances: about 3 standard deviations of each estimate over 30 seeds of this record (measured:
    # gain 0.8 % / 0.8 % / 0.6 %, tau 4.2 % / 4.3 % / 1.5 %, theta 0.10 s / 0.14 s / 0.03 s), so a bias fails
    assert fit.gain == pytest.approx(K_SI, rel=gain_rel)
    assert fit.time_constant == pytest.approx(TAU, rel=tau_rel)
    assert fit.dead_time == pytest.approx(THETA, abs=theta_abs)
    assert fit.drift * 3600 == pytest.approx(0.02, abs=0.015)
    assert fit.r_squared > 0.99


def test_least_squares_intervals_are_reported_and_cover_the_generating_values():
    # no drift in this record and none removed: the intervals do not include the uncertainty of a drift
    # estimate (over 40 seeds, 94 % of the intervals held the generating value)
    t, y, u = fopdt_record(dt=0.2, noise=0.5 / 3600, seed=3)
    fit = identify.fopdt(t, y, u, output_unit="m**3/s", drift=False)
    for value, interval in (
        (K_SI, fit.gain_interval),
        (TAU, fit.time_constant_interval),
        (THETA, fit.dead_time_interval),
    ):
        assert interval[0] < value < interval[1]
        assert interval[1] - interval[0] < 0.2 * value  # informative, not a blanket
    # residual RMS is the noise level within 10 % (450 samples)
    assert fit.residual_rms * 3600 == pytest.approx(0.5, rel=0.1)


def test_drift_removal_matters():
    # a strong drift: 0.2 m3/h per s, 12 m3/h over the minute after the step against a 39.5 m3/h change
    t, y, u = fopdt_record(dt=0.2, noise=0.2 / 3600, drift=0.2 / 3600, seed=11)
    with_removal = identify.fopdt(t, y, u, output_unit="m**3/s")
    without = identify.fopdt(t, y, u, output_unit="m**3/s", drift=False)
    assert with_removal.gain == pytest.approx(K_SI, rel=0.02)
    assert abs(without.gain / K_SI - 1.0) > 0.1


# ---------------------------------------------------------------- SOPDT and integrating
def test_sopdt_least_squares_on_a_record_made_by_python_control():
    # the record is simulated by python-control (reference library), input a pulse: up at 20 s, down at 70 s
    dt, k, t1, t2, theta = 0.1, 2.0, 6.0, 2.0, 1.5
    t = np.arange(0.0, 140.0, dt)
    u = 40.0 + 10.0 * ((t >= 20.0 - 1e-9) & (t < 70.0 - 1e-9))
    shift = round(theta / dt)
    u_delayed = np.concatenate((np.full(shift, u[0]), u[:-shift]))
    sys = control.tf([k], [t1 * t2, t1 + t2, 1.0])
    resp = control.forced_response(control.c2d(sys, dt, method="zoh"), T=t, U=u_delayed - u[0])
    y = 1.0 + np.asarray(resp.outputs)
    fit = identify.sopdt(t, y, u)
    # exact data (zero-order hold matches the held input): parameters to 1e-4 relative
    assert (fit.gain, fit.time_constant, fit.time_constant_2, fit.dead_time) == pytest.approx(
        (k, t1, t2, theta), rel=1e-4
    )


def test_sopdt_refuses_two_point_methods():
    t, y, u = fopdt_record()
    with pytest.raises(dk.ParameterError, match="`method`"):
        identify.sopdt(t, y, u, method="smith")


@pytest.mark.parametrize("method", ["least_squares", "tangent"])
def test_integrating_process_with_an_imbalance_before_the_step(method):
    # a tank level: 0.004 m per % per s, dead time 2 s, a 3 % step at 40 s; level falling 1 mm/s before it
    rng = np.random.default_rng(5)
    t = np.arange(0.0, 100.0, 0.25)
    u = np.where(t >= 40.0, 53.0, 50.0)
    y = 2.0 - 0.001 * t + 0.004 * 3.0 * np.maximum(t - 42.0, 0.0) + rng.normal(0, 0.002, t.size)
    fit = identify.integrating(t, y, u, method=method, output_unit="m")
    assert fit.gain == pytest.approx(0.004, rel=0.02)
    assert fit.dead_time == pytest.approx(2.0, abs=0.3)
    assert fit.time_constant is None
    assert fit.gain_quantity.units == dk.ureg.Unit("m/percent/s")


# ---------------------------------------------------------------- CSV and units
def test_csv_round_trip_with_header_units(tmp_path):
    t, y, u = fopdt_record(dt=0.2, noise=0.3 / 3600, seed=1)
    path = tmp_path / "bump.csv"
    with path.open("w") as f:
        f.write("# a test file\nt (min), flow [m3/h], valve output [%]\n")
        for a, b, c in zip(t / 60.0, y * 3600.0, u, strict=True):
            f.write(f"{a:.6f}, {b:.4f}, {c:.2f}\n")
    test = identify.read_step_test(path)
    assert test.names == ("t", "flow", "valve output")
    assert test.time_unit == "min"
    np.testing.assert_allclose(test.time, t, atol=1e-4)  # minutes written to 6 decimals
    np.testing.assert_allclose(test.process_value, y, atol=1e-4 / 3600)
    fit = identify.fopdt(path)
    assert fit.gain_quantity.to("m**3/h/percent").magnitude == pytest.approx(7.9, rel=0.02)
    assert fit.gain == pytest.approx(K_SI, rel=0.02)
    assert fit.time_constant == pytest.approx(TAU, rel=0.05)
    assert {q: unit for q, _, unit in fit.table()}["process gain"] == "m³/h/%"
    frame = test.to_frame()
    assert list(frame.columns) == ["t [min]", "flow [m³/h]", "valve output [%]"]


def test_invented_bump_test_file_gives_its_stated_model():
    test = identify.read_step_test(DATA)
    fit = identify.fopdt(test)
    # Source: the header of notebooks/data/bump_test_invented.csv (invented data from a stated FOPDT:
    # 7.9 (m3/h)/%, 4.5 s, 1.1 s; noise 0.8 m3/h, so a few % on the gain and time constant)
    assert fit.gain_quantity.magnitude == pytest.approx(7.9, rel=0.03)
    assert fit.time_constant == pytest.approx(4.5, rel=0.1)
    assert fit.dead_time == pytest.approx(1.1, abs=0.25)
    assert fit.step_size == pytest.approx(5.0)


def test_to_model_gives_the_shared_models_and_the_same_response():
    t, y, u = fopdt_record(dt=0.2)
    model = identify.fopdt(t, y, u, output_unit="m**3/s").to_model()
    assert isinstance(model, FOPDT)
    assert model.dead_time == pytest.approx(THETA, rel=1e-6)
    w = np.array([0.01, 0.3, 1.0])
    expected = K_SI * np.exp(-1j * w * THETA) / (1j * w * TAU + 1.0)
    np.testing.assert_allclose(model.frequency_response(w), expected, rtol=1e-5)
    t2 = np.arange(0.0, 100.0, 0.1)
    u2 = np.where(t2 >= 10.0, 1.0, 0.0)
    y2 = 3.0 * np.where(t2 >= 11.0, 1.0 - ((1.0 + (t2 - 11.0) / 2.0) * np.exp(-(t2 - 11.0) / 2.0)), 0.0)
    assert isinstance(identify.sopdt(t2, y2, u2).to_model(), SOPDT)
    ramp = 0.5 * np.maximum(t2 - 12.0, 0.0)
    assert isinstance(identify.integrating(t2, ramp, u2).to_model(), IntegratingDeadTime)


# ---------------------------------------------------------------- bad input
def test_too_short_a_record():
    with pytest.raises(dk.ParameterError, match=r"`t`: got 6 samples, expected at least 10"):
        identify.fopdt(np.arange(6.0), np.zeros(6), np.r_[0, 0, 0, 1, 1, 1])


def test_no_step_found():
    t = np.arange(50.0)
    with pytest.raises(dk.ParameterError, match="no step found"):
        identify.fopdt(t, np.sin(t), np.full(50, 40.0))


def test_non_monotonic_time():
    t, y, u = fopdt_record(dt=1.0)
    t[20] = t[18]
    with pytest.raises(dk.ParameterError, match="strictly increasing"):
        identify.fopdt(t, y, u)


def test_step_at_the_start_and_bad_units_and_method():
    t = np.arange(30.0)
    with pytest.raises(dk.ParameterError, match="samples before it"):
        identify.fopdt(t, np.minimum(t, 5.0), np.r_[0.0, np.full(29, 5.0)])
    t, y, u = fopdt_record(dt=1.0)
    with pytest.raises(dk.ParameterError, match="unit of time"):
        identify.fopdt(t, y, u, time_unit="m")
    with pytest.raises(dk.ParameterError, match="`method`: got 'cohen'"):
        identify.fopdt(t, y, u, method="cohen")
    y[3] = np.nan
    with pytest.raises(dk.ParameterError, match="`y`: sample 3"):
        identify.fopdt(t, y, u)


def test_unsettled_record_is_cautioned():
    t, y, u = fopdt_record(dt=0.1, t_end=36.0, t_step=30.0)
    fit = identify.fopdt(t, y, u, method="smith")
    assert any("still moving" in c for c in fit.cautions)


# ---------------------------------------------------------------- test plan
def test_bump_test_plan_for_the_flow_loop():
    model = FOPDT(gain=K_SI, time_constant=TAU, dead_time=THETA)
    plan = identify.bump_test_plan(
        model, output_now=62.0, process_value_now=372 / 3600, process_limits=(110 / 3600, 550 / 3600)
    )
    # common practice, no source: record 5 (tau + theta) after the step, sample at tau/10 and theta/5 or faster
    assert plan.record_after == pytest.approx(5 * (TAU + THETA))
    assert plan.sample_interval == pytest.approx(min(TAU / 10, THETA / 5))
    assert plan.expected_change == pytest.approx(K_SI * 5.0)
    assert plan.abort_high == pytest.approx((372 + 1.5 * 39.5) / 3600)
    assert plan.abort_low == pytest.approx((372 - 0.5 * 39.5) / 3600)
    text = str(identify.bump_test_plan(identify.fopdt(DATA)))
    assert "m³/h" in text
    assert "procedures" in text
    assert "abort" in text


def test_bump_test_plan_refuses_a_step_out_of_range():
    with pytest.raises(dk.ParameterError, match="`step_size`"):
        identify.bump_test_plan(FOPDT(gain=1.0, time_constant=2.0, dead_time=1.0), step_size=10.0, output_now=95.0)
