"""Property tests: over wide parameter ranges the model is valid and finite, or a documented error."""

import math

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import drivekit as dk
from drivekit.units import ParameterError

DOCUMENTED = (ParameterError, dk.OperatingPointError)


def _equilibrium_error(train, op, lin):
    """How far the state is from a true equilibrium: dx = A^-1 f(x, u), relative to the state's size.

    A bare residual |f| scales with the model's stiffness (a tiny inertia makes rad/s**2 large); the
    state error it implies does not.
    """
    f = train.derivatives(op.x, op.u_si)
    dx = np.linalg.lstsq(lin.A, f, rcond=None)[0]
    return float(np.max(np.abs(dx)) / (1.0 + np.max(np.abs(op.x))))


def _finite_linear_model(train, op):
    lin = train.linearize(op)
    assert np.all(np.isfinite(lin.A))
    assert np.all(np.isfinite(lin.B))
    assert np.all(np.isfinite(lin.C))
    assert np.all(np.isfinite(lin.D))
    assert np.all(np.isfinite(lin.poles))
    assert np.all(np.isfinite(op.x))
    return lin


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    power=st.floats(1e3, 2e6),
    slip=st.floats(0.002, 0.08),
    inertia_scale=st.floats(0.1, 10.0),
    static=st.floats(-5.0, 120.0),
    length=st.floats(5.0, 20000.0),
    diameter=st.floats(0.02, 1.5),
    sg=st.floats(0.6, 2.2),
    viscosity=st.floats(3e-4, 0.5),
    flow_fraction=st.floats(0.05, 1.2),
    shutoff=st.floats(5.0, 200.0),
)
def test_pump_train_is_valid_or_says_why(
    power, slip, inertia_scale, static, length, diameter, sg, viscosity, flow_fraction, shutoff
):
    speed = 1500 * (1 - slip)
    q_end = power / (1000 * 9.81 * shutoff) * 2.0  # a curve sized to the motor
    try:
        curve = dk.PumpCurve(
            flow=[0.0, 0.4 * q_end, 0.8 * q_end, q_end],
            head=[shutoff, 0.97 * shutoff, 0.85 * shutoff, 0.75 * shutoff],
            efficiency=[0.0, 0.6, 0.78, 0.74],
        )
        train = dk.DriveTrain(
            dk.VariableSpeedDrive(max_frequency=50.0),
            dk.InductionMotor(rated_power=power, rated_speed=f"{speed} rpm", J=inertia_scale * power**0.8 / 3e3),
            dk.CentrifugalPump(curve=curve, speed=f"{speed} rpm", J=inertia_scale * power**0.8 / 2e3),
            dk.Pipe(length=length, diameter=diameter, static_head=static, minor_loss=5.0),
            dk.FlowMeter(time_constant=0.5, dead_time=0.1),
            fluid=dk.Fluid(sg=sg, viscosity=viscosity),
        )
        op = train.operating_point(flow=flow_fraction * q_end)
    except DOCUMENTED as err:
        assert str(err)  # noqa: PT017 - any documented error must explain itself
        return
    lin = _finite_linear_model(train, op)
    assert op.flow == np.float64(flow_fraction * q_end) or math.isclose(op.flow, flow_fraction * q_end)
    assert _equilibrium_error(train, op, lin) < 1e-9
    # the coupled model of a pump on a drive is stable and its flow rises with the input
    assert np.all(lin.poles.real < 0)
    assert lin.dc_gain_si > 0


@settings(max_examples=100, deadline=None)
@given(
    r=st.floats(0.01, 50.0),
    inductance=st.floats(0.0, 0.5),
    k=st.floats(0.05, 10.0),
    jm=st.floats(1e-4, 50.0),
    ratio=st.floats(0.2, 100.0),
    eta=st.floats(0.5, 1.0),
    stiffness=st.one_of(st.none(), st.floats(10.0, 1e8)),
    load=st.floats(0.0, 5e4),
    jl=st.floats(1e-3, 1e4),
    volts=st.floats(1.0, 1000.0),
)
def test_dc_conveyor_is_valid_or_says_why(r, inductance, k, jm, ratio, eta, stiffness, load, jl, volts):
    try:
        trans = dk.Transmission(
            ratio=ratio,
            efficiency=eta,
            stiffness=stiffness,
            damping=None if stiffness is None else 0.01 * math.sqrt(stiffness),
        )
        train = dk.DriveTrain(dk.DCMotor(R=r, L=inductance, k=k, J=jm), trans, dk.Conveyor(load_torque=load, J=jl))
        op = train.operating_point(u=volts)
    except DOCUMENTED as err:
        assert str(err)  # noqa: PT017 - any documented error must explain itself
        return
    lin = _finite_linear_model(train, op)
    assert _equilibrium_error(train, op, lin) < 1e-9
