"""Nonlinear loop simulation: checked against the linear model, energy conservation, the operating-point
solver and scipy's discretisation, on the invented demo plants."""

import dataclasses
import math

import numpy as np
import pytest
import scipy.signal as sig
from scipy.integrate import trapezoid

import drivekit as dk
from drivekit import ParameterError, demo
from drivekit.constants import STANDARD_GRAVITY
from drivekit.pid import PID
from drivekit.piping import line_inertance_head
from drivekit.simulate import (
    ControllerSettings,
    DensityChange,
    DiscretePID,
    LoadTorqueChange,
    LoopOptions,
    Scenario,
    StaticHeadChange,
    ValveClosing,
    _FastPlant,
    simulate,
)

RPM = 2.0 * math.pi / 60.0
FLOW_PI = PID(kp=150.0, ti=3.0, sample_time=0.01)  # %/(m**3/s), s: a moderate flow-loop PI for P-201
SPEED_PI = PID(kp=5.0, ti=1.0, sample_time=0.01)  # Hz/(rad/s), s: a speed-loop PI for CV-3


def dc_fan():
    """An invented DC-motor fan drive (nameplate estimate) with a 75 A current limit."""
    motor = dk.DCMotor.from_nameplate(voltage=440, current=50, speed="1500 rpm", power=20e3, J=0.5)
    return dk.DriveTrain(
        dataclasses.replace(motor, max_current=75.0),
        dk.Transmission(ratio=5.0, efficiency=0.95),
        dk.Fan(rated_speed="300 rpm", rated_power="15 kW", J=3.0),
        dk.SpeedSensor(time_constant=0.02),
    )


@pytest.mark.parametrize("plant", [demo.raw_water_pump, demo.slurry_pump, demo.quarry_conveyor, dc_fan])
def test_fast_plant_equations_equal_the_model(plant):
    train = plant()
    op = train.operating_point(u=0.9 * train.drive.reference_range()[1] if train.drive else 400.0)
    fast = _FastPlant(train, torque_limit=False)
    rng = np.random.default_rng(3)
    for _ in range(20):
        x = op.x * (1.0 + 0.1 * rng.standard_normal(op.x.size))
        u = op.u_si * (1.0 + 0.05 * rng.standard_normal())
        # Source: cross-path check, DriveTrain.derivatives (the model itself, numpy path)
        expected = train.derivatives(x, u)
        got = np.array(fast.rates(x.tolist(), fast.demand(u)))
        # the tabulated system curve is interpolated; its error is measured at build time
        allow = 1e-9 * (np.abs(expected) + np.abs(x) + 1.0)
        if train.is_pump:
            allow[train.state_names.index("flow")] += 2.0 * fast.curve_error / fast.column
        np.testing.assert_array_less(np.abs(got - expected), allow)
    if train.is_pump:
        # interpolation error of a smooth quadratic-like curve on 4097 points: far below a mm
        assert fast.curve_error < 1e-4


@pytest.mark.parametrize("h", [0.01, 0.03])  # 0.2 s dead time: 20 scans, and 6.67 scans (interpolated)
def test_small_open_loop_step_matches_the_linear_model(pump_train, h):
    op = pump_train.operating_point(flow=demo.RAW_WATER_FLOW_TARGET)
    lin = pump_train.linearize(op)
    du = 0.2  # % of speed reference: small enough that the drive's ramp does not act
    scenario = Scenario(duration=30.0, setpoint=demo.RAW_WATER_FLOW_TARGET, output_steps=((0.99, op.u_si + du),))
    run = simulate(pump_train, None, scenario, scan_time=h)
    t = run.frame["time [s]"].to_numpy()
    y = run.frame["measured flow [m3/h]"].to_numpy() / 3600.0 - op.flow
    # Source: scipy.signal.lsim on the linearised model (fine grid, step at 0.99 s), read at t - dead time
    fine = np.arange(0.0, 30.0 + 1e-9, 1e-3)
    _, y_fine, _ = sig.lsim((lin.A, lin.B, lin.C, lin.D), np.where(fine >= 0.99 - 1e-9, du, 0.0), fine)
    y_lin = np.interp(t - lin.delay, fine, y_fine, left=0.0)
    # 0.5 % of the response: the second-order (curvature) terms of a 0.2 % input step, the integration
    # error and, at 30 ms, the linear interpolation of the dead-time buffer; measured 0.09 % at both scans
    assert np.max(np.abs(y - y_lin)) < 5e-3 * abs(y_lin[-1])
    # nothing reaches the controller before the step plus the dead time
    assert np.max(np.abs(y[t < 0.99 + lin.delay - 1e-9])) < 1e-6 * abs(y_lin[-1])


def test_energy_is_conserved_over_a_transient(pump_train):
    h = 0.002  # a short scan so that the trapezoidal rule resolves the motor's ms slip transient
    run = simulate(
        pump_train,
        ControllerSettings(kp=150.0, ti=3.0, sample_time=h),
        Scenario(duration=40.0, setpoint="380 m**3/h", setpoint_steps=((1.0, "300 m**3/h"),)),
    )
    f = run.frame
    t = f["time [s]"].to_numpy()
    torque = f["motor torque [N*m]"].to_numpy()
    w = f["motor speed [rpm]"].to_numpy() * RPM
    q = f["flow [m3/h]"].to_numpy() / 3600.0
    head = f["pump head [m]"].to_numpy()
    m, rho = pump_train.motor, pump_train.fluid.density
    w_sync = m.synchronous_speed(f["drive frequency [Hz]"].to_numpy())

    def energy(power):
        return trapezoid(power, t)

    # Source: first law over the run, with the loss terms of OperatingPoint.power_balance; kinetic energy
    # 1/2 J w**2 of the rotor and impeller and 1/2 (rho L/A) Q**2 of the liquid column (rigid column,
    # Wylie & Streeter, Fluid Transients in Systems, 1993, §1.1)
    air_gap = energy(torque * w_sync)
    slip = energy(torque * (w_sync - w))
    motor_friction = energy(m.b * w * w)
    pump_losses = energy(pump_train.machine_torque(w, q) * w - rho * STANDARD_GRAVITY * q * head)
    pipe = energy(rho * STANDARD_GRAVITY * q * (pump_train.system_head(q) - pump_train.static_head))
    lift = energy(rho * STANDARD_GRAVITY * q * pump_train.static_head)
    inertia = m.J + pump_train.machine.J
    column = rho * STANDARD_GRAVITY * line_inertance_head(pump_train.pipes)
    stored = 0.5 * inertia * (w[-1] ** 2 - w[0] ** 2) + 0.5 * column * (q[-1] ** 2 - q[0] ** 2)
    residual = air_gap - (slip + motor_friction + pump_losses + pipe + lift + stored)
    # 0.1 % of the change of stored energy (about 31 kJ); the quadrature error at 2 ms is about 2 J
    assert abs(stored) > 2e4
    assert abs(residual) < 1e-3 * abs(stored)


def test_anti_windup_limits_overshoot_after_saturation(pump_train):
    # an aggressive PI: the output saturates at 100 % while the drive ramps up
    pi = PID(kp=300.0, ti=2.0, sample_time=0.01)
    scenario = Scenario(duration=120.0, setpoint="250 m**3/h", setpoint_steps=((1.0, "400 m**3/h"),))
    overshoot = {}
    for kind in ("none", "clamping", "back-calculation"):
        run = simulate(pump_train, pi, scenario, options=LoopOptions(anti_windup=kind))
        assert run.limited_time > 1.0  # it did saturate
        overshoot[kind] = run.frame["flow [m3/h]"].max() - 400.0
    # Source: Åström & Hägglund, PID Controllers: Theory, Design and Tuning, 2nd ed., ISA 1995, §3.5
    # (from memory): without anti-windup the integral winds up and the loop overshoots far more.
    assert overshoot["none"] > 40.0
    assert overshoot["clamping"] < 0.7 * overshoot["none"]
    assert overshoot["back-calculation"] < 0.7 * overshoot["none"]


def test_output_rate_limits_and_minimum_output_are_respected(pump_train):
    pi = PID(kp=400.0, ti=2.0, output_limits=(40.0, 95.0), sample_time=0.01)
    options = LoopOptions(output_rate_limit=2.0, minimum_output=60.0, setpoint_ramp=20.0 / 3600.0)
    scenario = Scenario(
        duration=120.0, setpoint="380 m**3/h", setpoint_steps=((1.0, "50 m**3/h"), (50.0, "600 m**3/h"))
    )
    f = simulate(pump_train, pi, scenario, options=options).frame
    out = f["controller output [%]"].to_numpy()
    assert out.min() == pytest.approx(60.0)  # held at the minimum output, not the lower limit 40 %
    assert out.max() == pytest.approx(95.0)
    assert np.max(np.abs(np.diff(out))) <= 2.0 * 0.01 * (1 + 1e-9)
    ramp = np.diff(f["setpoint [m3/h]"].to_numpy())
    assert np.max(np.abs(ramp)) <= 20.0 * 0.01 * (1 + 1e-9)


def test_density_change_scales_torque_and_power_with_density(pump_train):
    sg, sg_new = pump_train.fluid.sg, 1.35
    # same kinematic viscosity, so the Reynolds number and the system curve in metres do not change
    change = DensityChange(60.0, sg=sg_new, viscosity=pump_train.fluid.viscosity * sg_new / sg)
    scenario = Scenario(duration=180.0, setpoint="380 m**3/h", disturbances=(change,))
    f = simulate(pump_train, FLOW_PI, scenario).frame
    before, after = f.iloc[5999], f.iloc[-1]  # 59.99 s and 180 s, both settled
    w = before["motor speed [rpm]"] * RPM
    assert after["motor speed [rpm]"] == pytest.approx(before["motor speed [rpm]"], rel=1e-7)
    friction = pump_train.machine.b * w  # bearing torque, independent of density
    # Source: P = rho g Q H / eta at the same flow, head and efficiency (DOE-HDBK-1012/3-92, Fluid Flow,
    # centrifugal pump laws): hydraulic torque and power proportional to density
    ratio = sg_new / sg
    got = (after["motor torque [N*m]"] - friction) / (before["motor torque [N*m]"] - friction)
    assert got == pytest.approx(ratio, rel=1e-6)
    power = (after["shaft power [kW]"] - friction * w * 1e-3) / (before["shaft power [kW]"] - friction * w * 1e-3)
    assert power == pytest.approx(ratio, rel=1e-6)


@pytest.mark.parametrize(
    "change", [StaticHeadChange(20.0, "22 m"), ValveClosing(20.0, 15.0), DensityChange(20.0, sg=1.2)]
)
def test_settled_state_after_a_disturbance_is_the_operating_point(pump_train, change):
    f = simulate(pump_train, FLOW_PI, Scenario(duration=150.0, setpoint="380 m**3/h", disturbances=(change,))).frame
    # Source: cross-path check, the steady-state solver of operating.py on the rebuilt drive train
    op = change.apply(pump_train).operating_point(flow="380 m**3/h")
    assert f["motor speed [rpm]"].iloc[-1] == pytest.approx(op.motor_speed / RPM, rel=1e-6)
    assert f["motor torque [N*m]"].iloc[-1] == pytest.approx(op.motor_torque, rel=1e-6)
    assert f["pump head [m]"].iloc[-1] == pytest.approx(op.head, rel=1e-6)
    assert f["controller output [%]"].iloc[-1] == pytest.approx(op.u_si, rel=1e-6)


def test_conveyor_load_change_and_torque_limit(conveyor_train):
    scenario = Scenario(
        duration=40.0,
        setpoint="70 rpm",
        disturbances=(LoadTorqueChange(5.0, "14 kN*m"), LoadTorqueChange(25.0, "26 kN*m")),
    )
    run = simulate(conveyor_train, SPEED_PI, scenario)
    f = run.frame
    settled = f.iloc[2499]  # 24.99 s: settled after the first load change
    # Source: cross-path check, operating.py at the new load
    op = LoadTorqueChange(0.0, "14 kN*m").apply(conveyor_train).operating_point(speed="70 rpm")
    assert settled["motor torque [N*m]"] == pytest.approx(op.motor_torque, rel=1e-4)
    assert settled["machine speed [rpm]"] == pytest.approx(70.0, rel=1e-4)
    m = conveyor_train.motor
    limit = m.torque_limit * m.rated_torque
    # 26 kN*m at the pulley is 26000 / (20 x 0.96) = 1354 N*m at the motor, above the 1065 N*m limit
    assert run.peak_torque <= limit * (1 + 1e-9)
    assert f["motor torque [N*m]"].iloc[-1] == pytest.approx(limit, rel=1e-6)
    assert f["machine speed [rpm]"].iloc[-1] < 60.0  # the belt cannot be held at speed


def test_dc_current_limit_holds_during_a_large_step():
    run = simulate(
        dc_fan(),
        PID(kp=20.0, ti=1.0, sample_time=0.01),
        Scenario(duration=20.0, setpoint="250 rpm", setpoint_steps=((1.0, "300 rpm"),)),
    )
    f = run.frame
    assert f["controller output [V]"].max() == pytest.approx(440.0)  # the output saturates at max_voltage
    # the drive holds the armature voltage at back-emf + R i_max: the current rises to the limit, not past it
    assert 74.0 < f["motor current [A]"].max() <= 75.0 * (1 + 1e-9)
    assert f["machine speed [rpm]"].iloc[-1] == pytest.approx(300.0, rel=1e-5)


@pytest.mark.parametrize(
    ("plant", "start", "steps"),
    [
        (demo.raw_water_pump, "380 m**3/h", ((1.0, "0 m**3/h"), (40.0, "900 m**3/h"), (80.0, "100 m**3/h"))),
        (demo.quarry_conveyor, "70 rpm", ((1.0, "1 rpm"), (30.0, "200 rpm"), (60.0, "-50 rpm"))),
    ],
)
def test_large_setpoint_steps_stay_finite(plant, start, steps):
    pi = FLOW_PI if plant is demo.raw_water_pump else SPEED_PI
    run = simulate(plant(), pi, Scenario(duration=100.0, setpoint=start, setpoint_steps=steps))
    assert np.all(np.isfinite(run.frame.to_numpy()))
    assert run.limited_time > 10.0


def test_deadband_holds_the_integral(pump_train):
    scenario = Scenario(duration=120.0, setpoint="380 m**3/h", disturbances=(ValveClosing(5.0, 15.0),))
    band = 4.0 / 3600.0
    with_band = simulate(pump_train, FLOW_PI, scenario, options=LoopOptions(deadband=band))
    without = simulate(pump_train, FLOW_PI, scenario)
    assert abs(without.final_error) < 1e-7
    # the integral stops inside the band, so an offset within the band remains
    assert 0.2 * band < abs(with_band.final_error) <= band


def test_discrete_pid_matches_scipy_discretisation():
    kp, ti, td, n, h = 2.0, 5.0, 1.0, 10.0, 0.1
    settings = ControllerSettings(kp=kp, ti=ti, td=td, derivative_filter=n, setpoint_weights=(1.0, 1.0))
    pid = DiscretePID(settings, LoopOptions(anti_windup="none"), h, (-math.inf, math.inf))
    pid.start(0.0, 0.0, 0.0)
    error = np.sin(0.7 * np.arange(60) * h) + np.where(np.arange(60) >= 10, 1.0, 0.0)
    out = np.array([pid.update(e, 0.0) for e in error])
    # Source: scipy.signal.cont2discrete, forward Euler for the integral and backward difference for the
    # filtered derivative (Åström & Wittenmark, Computer-Controlled Systems, 3rd ed., §8.5, from memory)
    tf = td / n
    integral = sig.cont2discrete(tuple(np.array([[v]]) for v in (0.0, 1.0, kp / ti, 0.0)), h, method="euler")
    # kp td s / (tf s + 1) = kp td / tf - (kp td / tf**2) / (s + 1 / tf)
    derivative = sig.cont2discrete(
        tuple(np.array([[v]]) for v in (-1.0 / tf, 1.0, -kp * td / tf**2, kp * td / tf)), h, method="backward_diff"
    )
    expected = kp * error
    for a, b, c, d, dt in (integral, derivative):
        expected = expected + sig.dlsim((a, b, c, d, dt), error)[1].ravel()
    np.testing.assert_allclose(out, expected, rtol=1e-12, atol=1e-12)


def test_controller_forms_give_the_same_run(pump_train):
    series = PID(kp=150.0, ti=3.0, td=0.2, form="series", sample_time=0.01)
    scenario = Scenario(duration=20.0, setpoint="380 m**3/h", setpoint_steps=((1.0, "350 m**3/h"),))
    a = simulate(pump_train, series, scenario).frame
    b = simulate(pump_train, series.to_form("ideal"), scenario).frame
    np.testing.assert_allclose(a["flow [m3/h]"], b["flow [m3/h]"], rtol=1e-12)


def test_result_columns_and_summary(pump_train):
    run = simulate(pump_train, FLOW_PI, Scenario(duration=5.0, setpoint="380 m**3/h"))
    assert list(run.to_frame().columns) == [
        "time [s]",
        "setpoint [m3/h]",
        "flow [m3/h]",
        "measured flow [m3/h]",
        "motor speed [rpm]",
        "machine speed [rpm]",
        "motor torque [N*m]",
        "motor current [A]",
        "shaft power [kW]",
        "controller output [%]",
        "drive frequency [Hz]",
        "pump head [m]",
    ]
    assert len(run.frame) == 501
    op = pump_train.operating_point(flow="380 m**3/h")
    # Source: cross-path check, the operating point the run starts (and stays) at
    assert run.frame["motor current [A]"].iloc[-1] == pytest.approx(op.motor_current, rel=1e-9)
    assert run.iae == pytest.approx(0.0, abs=1e-9)
    assert [row[0] for row in run.table()][:2] == ["scan time", "Runge-Kutta steps per scan"]


def test_bad_input_names_the_parameter(pump_train):
    with pytest.raises(ParameterError, match="anti_windup"):
        LoopOptions(anti_windup="integrator clamp")
    with pytest.raises(ParameterError, match="ti"):
        ControllerSettings(kp=1.0, ti=-3.0)
    with pytest.raises(ParameterError, match="duration"):
        Scenario(duration="-5 s")
    with pytest.raises(ParameterError, match="LoadTorqueChange"):
        LoadTorqueChange(1.0, 100.0).apply(pump_train)
    with pytest.raises(ParameterError, match="setpoint"):
        simulate(pump_train, FLOW_PI, Scenario(duration=1.0, setpoint="380 rpm"))
