"""Vectorised variants equal one-by-one evaluation."""

import numpy as np
import pytest

import drivekit as dk
from drivekit import demo
from drivekit.units import ParameterError
from drivekit.variants import make_variants


def _one_by_one(train, values, i):
    design = dk.Design(train=train, operating=("flow", 0.1))
    for key, arr in values.items():
        design = design.with_value(key, float(arr[i]))
    return design.train


def test_pump_variants_equal_single_linearisations():
    train = demo.raw_water_pump()
    rng = np.random.default_rng(7)
    n = 50
    values = {
        "motor.J": 0.9 * rng.uniform(0.7, 1.3, n),
        "machine.J": 1.1 * rng.uniform(0.7, 1.3, n),
        "pipe1.length": 650 * rng.uniform(0.7, 1.3, n),
        "pipe1.static_head": 18 * rng.uniform(0.7, 1.3, n),
        "sensor.time_constant": rng.uniform(0.7, 1.3, n),
        "fluid.sg": rng.uniform(0.9, 1.4, n),
    }
    batch = make_variants(train, values).linearize(flow=demo.RAW_WATER_FLOW_TARGET)
    assert batch.valid.all()
    for i in (0, 17, 49):
        single = _one_by_one(train, values, i)
        op = single.operating_point(flow=demo.RAW_WATER_FLOW_TARGET)
        lin = single.linearize(op)
        np.testing.assert_allclose(batch.A[i], lin.A, rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(batch.B[i], lin.B, rtol=1e-12)
        np.testing.assert_allclose(batch.C[i], lin.C, rtol=1e-12)
        assert batch.u[i] == pytest.approx(op.u_si, rel=1e-12)
        np.testing.assert_allclose(batch.model(i).poles, lin.poles, rtol=1e-9)


def test_variants_without_an_operating_point_are_marked_with_the_reason():
    train = demo.raw_water_pump()
    batch = make_variants(train, {"pipe1.static_head": [18.0, 40.0]}).linearize(flow=demo.RAW_WATER_FLOW_TARGET)
    assert batch.valid.tolist() == [True, False]
    assert batch.reason[1] == "above max_frequency"
    assert np.isnan(batch.A[1]).all()
    with pytest.raises(dk.OperatingPointError, match="max_frequency"):
        train.with_stage("pipe1", dk.Pipe(length=650, diameter=0.2545, static_head=40, minor_loss=12)).operating_point(
            flow=demo.RAW_WATER_FLOW_TARGET
        )


def test_speed_target_variants_of_the_conveyor():
    train = demo.quarry_conveyor()
    values = {"transmission.stiffness": np.array([1e6, 2e6, 4e6])}
    batch = make_variants(train, values).linearize(speed=70 * 2 * np.pi / 60)
    for i, k in enumerate(values["transmission.stiffness"]):
        single = train.with_stage("transmission", dk.Transmission(ratio=20, efficiency=0.96, stiffness=k, damping=800))
        lin = single.linearize(single.operating_point(speed="70 rpm"))
        np.testing.assert_allclose(
            np.sort_complex(np.linalg.eigvals(batch.A[i])), np.sort_complex(lin.poles), rtol=1e-9
        )


def test_bad_variant_keys_are_refused():
    train = demo.raw_water_pump()
    with pytest.raises(ParameterError, match="expected a role"):
        make_variants(train, {"gearbox.ratio": [1.0, 2.0]})
    with pytest.raises(ParameterError, match="one common length"):
        make_variants(train, {"motor.J": [1.0, 2.0], "machine.J": [1.0]})
    with pytest.raises(ParameterError, match=r"`motor\.J`"):
        make_variants(train, {"motor.J": ["2 m", "3 m"]})
