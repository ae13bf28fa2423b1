"""Sweeps equal one-by-one evaluation; the Dask engine equals the local one."""

import numpy as np
import pytest

import drivekit as dk
from drivekit import demo, sweep
from drivekit.units import ParameterError


@pytest.fixture(scope="module")
def design():
    return dk.Design(train=demo.raw_water_pump(), operating=("flow", "380 m**3/h"), controller=dk.PID(kp=550.0, ti=3.0))


PARAMETERS = {
    "motor.J": sweep.Uniform("0.6 kg*m**2", "1.2 kg*m**2"),
    "pipe1.static_head": sweep.Normal("18 m", "1 m"),
    "sensor.dead_time": sweep.Triangular("0.1 s", "0.2 s", "0.5 s"),
}


def test_sweep_equals_one_by_one_evaluation(design):
    result = sweep.run(design, PARAMETERS, samples=40, seed=11)
    frame = result.to_frame()
    for i in (0, 13, 39):
        single = design
        for key in PARAMETERS:
            single = single.with_value(key, float(frame.loc[i, key]))
        ev = single.evaluate()
        assert frame.loc[i, "phase margin [deg]"] == pytest.approx(ev.margins.phase_margin, rel=1e-6)
        assert frame.loc[i, "Ms [-]"] == pytest.approx(ev.margins.ms, rel=1e-6)
        assert frame.loc[i, "overshoot [%]"] == pytest.approx(ev.step.overshoot, abs=0.05)
        assert frame.loc[i, "input"] == pytest.approx(ev.operating_point.u_si, rel=1e-9)


def test_samples_follow_their_distributions_and_seed(design):
    a = sweep.run(design, PARAMETERS, samples=400, seed=5).inputs
    b = sweep.run(design, PARAMETERS, samples=400, seed=5).inputs
    assert a.equals(b)
    assert a["motor.J"].between(0.6, 1.2).all()
    # truncated at 3 standard deviations
    assert (a["pipe1.static_head"] - 18.0).abs().max() <= 3.0
    assert a["sensor.dead_time"].between(0.1, 0.5).all()
    # the mean of a triangular distribution is (a + c + b) / 3 (any statistics text)
    assert a["sensor.dead_time"].mean() == pytest.approx((0.1 + 0.2 + 0.5) / 3, abs=0.02)


def test_gain_schedule_agrees_with_a_sweep_over_flows(design):
    flows = sweep.operating_range(design, points=5)
    schedule = sweep.gain_schedule(design, flows)
    over_flows = sweep.run(design, flows=flows)
    np.testing.assert_allclose(
        schedule.table["phase margin [deg]"], over_flows.metrics["phase margin [deg]"], rtol=1e-6
    )
    # at low flow the pump's gain per % of reference is higher: the fixed PI loses phase margin
    pm = schedule.table["phase margin [deg]"].to_numpy()
    assert np.all(np.diff(pm) > 0)
    assert np.all(np.diff(schedule.table["plant gain [SI]"].to_numpy()) < 0)


def test_flow_beyond_the_drive_is_noted_not_raised(design):
    schedule = sweep.gain_schedule(design, ["380 m**3/h", "700 m**3/h"])
    assert schedule.table.loc[0, "note"] == ""
    assert "max_frequency" in schedule.table.loc[1, "note"] or "beyond the pump curve" in schedule.table.loc[1, "note"]


def test_tornado_ranks_by_swing_and_matches_single_runs(design):
    ranges = {"motor.J": (0.6, 1.2), "sensor.dead_time": ("0.1 s", "0.5 s"), "pipe1.static_head": (15.0, 21.0)}
    t = sweep.tornado(design, ranges, metric="phase margin [deg]")
    assert t.rows["swing"].is_monotonic_decreasing
    # the dead time moves the phase margin most (phase lag w * theta at crossover)
    assert t.rows.loc[0, "parameter"] == "sensor.dead_time"
    high = design.with_value("sensor.dead_time", 0.5).evaluate().margins.phase_margin
    assert t.rows.loc[0, "at high"] == pytest.approx(high, rel=1e-6)
    assert t.nominal == pytest.approx(design.evaluate().margins.phase_margin, rel=1e-6)


def test_dask_engine_gives_the_same_results(design):
    distributed = pytest.importorskip("dask.distributed")
    cluster = distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None
    )
    try:
        with distributed.Client(cluster) as client:
            remote = sweep.run(design, PARAMETERS, samples=300, seed=2, engine="dask", client=client, chunk_size=100)
    finally:
        cluster.close()
    local = sweep.run(design, PARAMETERS, samples=300, seed=2, chunk_size=100)
    assert remote.to_frame().equals(local.to_frame())


def test_bad_sweeps_are_refused(design):
    with pytest.raises(ParameterError, match="expected one of"):
        sweep.run(design, {"gearbox.ratio": (1, 2)}, samples=10)
    with pytest.raises(ParameterError, match="low < high"):
        sweep.run(design, {"motor.J": (2.0, 1.0)}, samples=10)
    with pytest.raises(ParameterError, match="`engine`"):
        sweep.run(design, {"motor.J": (0.5, 1.0)}, samples=10, engine="spark")
    with pytest.raises(ParameterError, match="needs a controller"):
        sweep.run(dk.Design(train=design.train, operating=design.operating), {"motor.J": (0.5, 1.0)})
