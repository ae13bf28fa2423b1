"""Headless tests of the bump-test, simulation and sweep views: mark data equal to the core's arrays, computed here."""

import html
from pathlib import Path

import numpy as np
import pytest

import drivekit as dk
from drivekit import demo, identify, sweep
from drivekit.scenario import Scenario
from drivekit.simulate import simulate
from drivekit.units import ParameterError
from drivekit.widgets import BumpTestView, GainScheduleView, SimulationView, SweepView, TornadoView

RECORD = Path(__file__).resolve().parents[2] / "notebooks" / "data" / "bump_test_invented.csv"


@pytest.fixture(scope="module")
def record():
    return identify.read_step_test(RECORD)


@pytest.fixture(scope="module")
def loop_design():
    return dk.Design(train=demo.raw_water_pump(), operating=("flow", "380 m**3/h"), controller=dk.PID(kp=550.0, ti=3.0))


# -- bump test ------------------------------------------------------------------------------------
def test_bump_test_view_draws_a_given_fit(record):
    fit = identify.fopdt(record, method="smith")
    view = BumpTestView(fit)
    curves = fit.curves()
    np.testing.assert_array_equal(view.measured.x, curves["time"])
    np.testing.assert_array_equal(view.measured.y, curves["measured"])
    np.testing.assert_array_equal(view.fitted.y, curves["fitted"])
    assert list(view.step_mark.x) == [fit.step_time, fit.step_time]
    assert view.method_menu.layout.display == "none"  # a finished fit: nothing to choose
    text = html.unescape(view.table.value)
    for name, value, unit in fit.table():
        assert f"<td>{name}</td><td class='dk-value' style='text-align:right'>{value:.4g}</td><td>{unit}</td>" in text
    assert view.y_axis.label == "process value [m³/h]"


def test_bump_test_view_refits_the_record_when_the_method_changes(record):
    view = BumpTestView(record)
    first = identify.fopdt(record, method="least_squares")
    np.testing.assert_allclose(view.fitted.y, first.curves()["fitted"], rtol=1e-9)
    view.method_menu.value = "SOPDT, least squares"
    second = identify.sopdt(record, method="least_squares")
    assert view.fit.model == "SOPDT"
    np.testing.assert_allclose(view.fitted.y, second.curves()["fitted"], rtol=1e-9)
    np.testing.assert_array_equal(view.measured.y, second.curves()["measured"])
    # Source: notebooks/data/bump_test_invented.csv header: the invented record was generated with the step
    # 62 -> 67 % at t = 30 s; the fit's step time is the first sample at the new output (one sample interval).
    assert view.fit.step_time == pytest.approx(30.0, abs=1.0)
    assert "second time constant" in view.table.value


def test_bump_test_view_refuses_bad_input():
    with pytest.raises(ParameterError, match="`source`"):
        BumpTestView([1, 2, 3])
    with pytest.raises(ParameterError, match="`method`"):
        BumpTestView(identify.fopdt(identify.read_step_test(RECORD)), method="by eye")


# -- simulation -----------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def run():
    pi = dk.PID(kp=150.0, ti=3.0, sample_time=0.05)
    scenario = Scenario(duration=60.0, setpoint="380 m**3/h", setpoint_steps=((1.0, "330 m**3/h"),))
    return simulate(demo.raw_water_pump(), pi, scenario)


def test_simulation_view_draws_the_run(run):
    view = SimulationView(run, output_limits=(0.0, 100.0))
    f = run.frame
    np.testing.assert_array_equal(view.measurement.x, f["time [s]"])
    np.testing.assert_array_equal(view.measurement.y, f["measured flow [m3/h]"])
    np.testing.assert_array_equal(view.setpoint.y, f["setpoint [m3/h]"])
    np.testing.assert_array_equal(view.output.y, f["controller output [%]"])
    np.testing.assert_array_equal(view.limits.y, [[0.0, 0.0], [100.0, 100.0]])
    assert view.trace_menu.value == "motor torque [N*m]"
    np.testing.assert_array_equal(view.third.y, f["motor torque [N*m]"])
    view.trace_menu.value = "pump head [m]"
    np.testing.assert_array_equal(view.third.y, f["pump head [m]"])
    assert view.z_axis.label == "pump head [m]"
    assert f"{run.peak_torque:.4g}" in view.summary.value
    # Source: integral action removes the steady error to a setpoint step (final value theorem; Astrom & Murray,
    # Feedback Systems, 2nd ed., 2021, §11.2, from memory): the drawn flow ends on the 330 m3/h setpoint (0.5 %).
    assert view.measurement.y[-1] == pytest.approx(330.0, rel=5e-3)


def test_simulation_view_keeps_its_figures_for_a_new_run(run):
    view = SimulationView(run, trace="shaft power [kW]")
    fig, mark = view.figure, view.measurement
    assert view.trace_menu.value == "shaft power [kW]"
    other = simulate(
        demo.raw_water_pump(),
        dk.PID(kp=300.0, ti=3.0, sample_time=0.05),
        Scenario(duration=10.0, setpoint="380 m**3/h", setpoint_steps=((1.0, "400 m**3/h"),)),
    )
    view.draw(other)
    assert view.figure is fig
    assert view.measurement is mark
    np.testing.assert_array_equal(view.measurement.y, other.frame["measured flow [m3/h]"])
    np.testing.assert_array_equal(view.third.y, other.frame["shaft power [kW]"])
    assert np.isnan(view.limits.y).all()  # no limits given


# -- sweeps ---------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def result(loop_design):
    parameters = {
        "motor.J": sweep.Uniform("0.6 kg*m**2", "1.2 kg*m**2"),
        "sensor.dead_time": sweep.Triangular("0.1 s", "0.2 s", "0.5 s"),
    }
    return sweep.run(loop_design, parameters, samples=200, seed=3)


def test_sweep_histogram_and_scatter(result):
    view = SweepView(result, metric="phase margin [deg]", limit=45.0)
    pm = result.metrics["phase margin [deg]"].to_numpy()
    # The bars hold every variant with a value: their counts add up to the sweep's valid variants.
    assert np.sum(view.bars.y) == np.isfinite(pm).sum()
    counts, edges = np.histogram(pm[np.isfinite(pm)], bins=30)
    np.testing.assert_array_equal(view.bars.y, counts)
    np.testing.assert_allclose(view.bars.x, 0.5 * (edges[:-1] + edges[1:]), rtol=1e-12)
    assert list(view.hist_limit.x) == [45.0, 45.0]
    view.kind.value = "scatter"
    view.x.value = "sensor.dead_time"
    np.testing.assert_array_equal(view.points.x, result.inputs["sensor.dead_time"])
    np.testing.assert_array_equal(view.points.y, pm)
    assert view.histogram.layout.display == "none"
    view.metric.value = "Ms [-]"
    np.testing.assert_array_equal(view.points.y, result.metrics["Ms [-]"])
    median = result.percentiles((5, 50, 95))["Ms [-]"].iloc[1]
    assert f"{median:.4g}" in view.note.value
    # A longer dead time lowers the phase margin at a fixed controller (lag e^{-s theta}; Astrom & Murray,
    # Feedback Systems, 2nd ed., §10.3, from memory): the scatter trends down.
    assert np.corrcoef(result.inputs["sensor.dead_time"], pm)[0, 1] < -0.5


def test_sweep_view_refuses_unknown_columns(result):
    with pytest.raises(ParameterError, match="`metric`"):
        SweepView(result, metric="happiness")
    with pytest.raises(ParameterError, match="`kind`"):
        SweepView(result, kind="pie")


def test_tornado_view(loop_design):
    t = sweep.tornado(
        loop_design,
        {"motor.J": ("0.6 kg*m**2", "1.2 kg*m**2"), "sensor.dead_time": ("0.1 s", "0.5 s")},
        metric="phase margin [deg]",
    )
    view = TornadoView(t)
    assert list(view.low.x) == list(t.rows["parameter"])
    np.testing.assert_array_equal(view.low.y, t.rows["at low"])
    np.testing.assert_array_equal(view.high.y, t.rows["at high"])
    assert view.low.base == t.nominal == view.high.base
    assert view.value_axis.label == "phase margin [deg]"
    # The dead time swings the phase margin more than the inertia in this loop (the sensor's dead time dominates
    # the phase lag at crossover; see the sweep's scatter above): it is on top.
    assert view.low.x[0] == "sensor.dead_time"


def test_gain_schedule_view(loop_design):
    flows = sweep.operating_range(loop_design, points=5)
    schedule = sweep.gain_schedule(loop_design, flows)
    view = GainScheduleView(schedule)
    np.testing.assert_array_equal(view.line.x, schedule.table["flow [m3/h]"])
    np.testing.assert_array_equal(view.line.y, schedule.table["kp"])
    view.quantity.value = "phase margin [deg]"
    np.testing.assert_array_equal(view.points.y, schedule.table["phase margin [deg]"])
    assert "simc" in view.note.value
    # Source: 1 m**3/h = 1/3600 m**3/s (SI Brochure, 9th ed., Table 8).
    np.testing.assert_allclose(view.line.x, flows * 3600.0, rtol=1e-12)
