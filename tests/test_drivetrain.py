"""The coupled drive-train model: published examples, consistency with the nonlinear model, limits."""

import math

import control
import numpy as np
import pytest
import scipy.integrate

import drivekit as dk
from drivekit.units import ParameterError

G = 9.80665


def _bare_dc_train(**motor):
    """A DC motor driving an (almost) inertia-free, load-free shaft: the motor alone."""
    return dk.DriveTrain(dk.DCMotor(**motor), dk.Conveyor(load_torque=0.0, J=1e-12))


def test_dc_motor_speed_example():
    # Source: University of Michigan / Carnegie Mellon, "Control Tutorials for MATLAB and
    # Simulink", DC Motor Speed: System Modeling. J = 0.01, b = 0.1, K = 0.01, R = 1, L = 0.5:
    # P(s) = K / ((J s + b)(L s + R) + K**2) = 0.01 / (0.005 s**2 + 0.06 s + 0.1001)
    train = _bare_dc_train(R=1.0, L=0.5, k=0.01, J=0.01, b=0.1)
    lin = train.linearize(train.operating_point(u=1.0))
    expected = control.tf([0.01], [0.005, 0.06, 0.1001])
    num, den = lin.tf.num[0][0], lin.tf.den[0][0]
    np.testing.assert_allclose(np.trim_zeros(np.round(num / den[0], 12)), [2.0], rtol=1e-6)
    np.testing.assert_allclose(den / den[0], [1, 12, 20.02], rtol=1e-6)
    # the tutorial's open-loop poles, -9.9975 and -2.0025, and its steady speed 0.0999 rad/s/V
    np.testing.assert_allclose(np.sort(lin.poles.real), [-9.9975, -2.0025], atol=1e-4)
    assert lin.dc_gain_si == pytest.approx(control.dcgain(expected), rel=1e-6)
    assert lin.dc_gain.to("rpm/V").magnitude == pytest.approx(0.0999 * 60 / (2 * math.pi), rel=1e-3)


def test_gear_reflects_load_as_nise_equivalent_inertia():
    # Source: Nise, Control Systems Engineering, 6th ed., §2.7-2.8: a motor driving a load
    # through gears behaves as the motor with J_eq = J_a + J_L (N1/N2)**2, D_eq = D_a + D_L (N1/N2)**2
    motor = {"R": 2.0, "L": 0.0, "k": 0.8, "J": 0.02, "b": 0.001}
    ratio, jl, bl = 8.0, 3.2, 0.64
    geared = dk.DriveTrain(
        dk.DCMotor(**motor),
        dk.Transmission(ratio=ratio),
        dk.Conveyor(load_torque=0.0, J=jl, b=bl),
        output="motor_speed",
    )
    equivalent = _bare_dc_train(**{**motor, "J": 0.02 + jl / ratio**2, "b": 0.001 + bl / ratio**2})
    a = geared.linearize(geared.operating_point(u=100.0))
    b = equivalent.linearize(equivalent.operating_point(u=100.0))
    np.testing.assert_allclose(a.poles, b.poles, rtol=1e-6)
    assert a.dc_gain_si == pytest.approx(b.dc_gain_si, rel=1e-6)


def test_linear_model_matches_small_step_of_nonlinear_model(pump_train):
    op = pump_train.operating_point(flow=380 / 3600)
    lin = pump_train.linearize(op)
    du = 0.5  # % of drive reference: small against the 90 % operating input
    t_end = 20.0
    t = np.linspace(0, t_end, 401)
    sol = scipy.integrate.solve_ivp(
        lambda _t, x: pump_train.derivatives(x, op.u_si + du),
        (0, t_end),
        op.x,
        t_eval=t,
        method="LSODA",
        rtol=1e-10,
        atol=1e-12,
    )
    y_nl = np.array([pump_train.output_of(x) for x in sol.y.T]) - pump_train.output_of(op.x)
    resp = control.forced_response(lin.ss, T=t, U=np.full_like(t, du))
    y_lin = np.asarray(resp.outputs)
    # second-order terms are about du/u of the change: agree within 1 % of the final change
    assert np.max(np.abs(y_nl - y_lin)) < 0.01 * abs(y_lin[-1])
    assert y_lin[-1] > 0


def test_energy_balance_of_dc_motor_pump_train():
    # electrical power in = copper loss + friction losses + pump losses + pipe friction + lift,
    # each term computed here from its own formula
    curve = dk.PumpCurve(flow=[0, 0.01, 0.02, 0.03], head=[30, 29, 26, 21], efficiency=[0, 0.55, 0.7, 0.68])
    motor = dk.DCMotor(R=0.8, L=0.01, k=1.2, J=0.05, b=0.004)
    pump = dk.CentrifugalPump(curve=curve, speed=300.0, J=0.02, b=0.001)
    gear = dk.Transmission(ratio=1.0, efficiency=0.97)
    pipe = dk.Pipe(length=200, diameter=0.1, static_head=10, minor_loss=4)
    train = dk.DriveTrain(motor, gear, pump, pipe)
    op = train.operating_point(flow=0.02)
    v = op.supply
    w = op.motor_speed
    i = (v - 1.2 * w) / 0.8
    p_in = v * i
    copper = 0.8 * i**2
    motor_friction = 0.004 * w**2
    shaft = 1.2 * i * w - motor_friction
    gear_loss = (1 - 0.97) * shaft
    rho = train.fluid.density
    hydraulic = rho * G * 0.02 * op.head
    lift = rho * G * 0.02 * 10
    pipe_loss = rho * G * 0.02 * pipe.friction_head(0.02, train.fluid)
    pump_losses = 0.97 * shaft - hydraulic
    assert p_in == pytest.approx(copper + motor_friction + gear_loss + pump_losses + pipe_loss + lift, rel=1e-9)
    assert hydraulic == pytest.approx(lift + pipe_loss, rel=1e-9)
    balance = op.power_balance()
    assert balance["input"] == pytest.approx(p_in, rel=1e-9)
    assert balance["transmission loss"] == pytest.approx(gear_loss, rel=1e-6)
    assert abs(balance["residual"]) < 1e-9 * p_in


def test_operating_point_from_input_flow_and_speed_agree(pump_train):
    by_flow = pump_train.operating_point(flow="380 m**3/h")
    by_input = pump_train.operating_point(u=by_flow.u)
    by_speed = pump_train.operating_point(speed=by_flow.machine_speed)
    np.testing.assert_allclose(by_input.x, by_flow.x, rtol=1e-9)
    np.testing.assert_allclose(by_speed.x, by_flow.x, rtol=1e-9)
    assert np.max(np.abs(pump_train.derivatives(by_flow.x, by_flow.u_si))) < 1e-9
    assert by_flow.u.units == dk.ureg.percent


def test_pump_and_system_heads_balance_at_the_operating_point(pump_train):
    op = pump_train.operating_point(u=80.0)
    assert op.head == pytest.approx(float(pump_train.system_curve(op.flow)), rel=1e-10)
    # the motor's torque equals the pump's at the shaft (direct coupling)
    assert op.motor_torque == pytest.approx(op.machine_torque + 0.0, rel=1e-10)


def test_no_flow_below_the_static_head(pump_train):
    # the demo pump's shut-off head at 20 Hz is 48 (20/50 * 1500/1485)**2 ~ 7.8 m < 18 m static
    with pytest.raises(dk.OperatingPointError, match=r"short of the static head 18 m.*dead-headed"):
        pump_train.operating_point(u=40.0)


def test_flow_beyond_the_curve_is_refused(pump_train):
    with pytest.raises(dk.OperatingPointError, match=r"beyond the pump curve|above its max_frequency"):
        pump_train.operating_point(flow="700 m**3/h")


def test_drive_frequency_limit_is_reported_with_the_shortfall():
    train = dk.demo.raw_water_pump()
    high_lift = train.with_stage("pipe1", dk.Pipe(length=650, diameter=0.2545, static_head=40, minor_loss=12))
    with pytest.raises(dk.OperatingPointError, match=r"Hz above its max_frequency 50 Hz"):
        high_lift.operating_point(flow="380 m**3/h")


def test_torque_limit_is_reported():
    curve = dk.PumpCurve(flow=[0, 0.05, 0.1], head=[50, 47, 38], efficiency=[0, 0.7, 0.75])
    small_motor = dk.InductionMotor(rated_power="5 kW", rated_speed="1450 rpm", J=0.03)
    train = dk.DriveTrain(
        small_motor,
        dk.CentrifugalPump(curve=curve, speed="1450 rpm", J=0.1),
        dk.Pipe(length=50, diameter=0.25, static_head=5),
    )
    with pytest.raises(dk.OperatingPointError, match="torque_limit"):
        train.operating_point(flow=0.08)


def test_input_outside_the_drive_range_is_refused(pump_train):
    with pytest.raises(dk.OperatingPointError, match="`u`: got 120 %"):
        pump_train.operating_point(u=120.0)
    with pytest.raises(ParameterError, match="exactly one of"):
        pump_train.operating_point(u=50.0, flow=0.1)


def test_minimum_flow_caution(pump_train):
    # at 60 m**3/h the pump turns at about 62 % speed, where its minimum flow is about 68 m**3/h
    op = pump_train.operating_point(flow="60 m**3/h")
    assert any("minimum continuous flow" in c for c in op.cautions)
    assert not any("minimum continuous flow" in c for c in pump_train.operating_point(flow=0.1).cautions)


def test_series_shortcut_differs_from_the_coupled_model(pump_train):
    op = pump_train.operating_point(flow=380 / 3600)
    coupled = pump_train.linearize(op)
    shortcut = pump_train.series_approximation(op)
    cmp = coupled.compare(shortcut)
    # the shortcut drops the pump torque's push-back on the motor: its gain is higher
    assert cmp.dc_gain_difference > 0
    assert cmp.dc_gain_other == pytest.approx(shortcut.dc_gain_si * 3600)
    assert shortcut.delay == coupled.delay == pytest.approx(0.2)


def test_series_shortcut_is_exact_for_an_unloaded_motor():
    # with no load torque that changes with speed there is nothing to ignore
    train = _bare_dc_train(R=1.0, L=0.5, k=0.01, J=0.01, b=0.1)
    op = train.operating_point(u=1.0)
    cmp = train.linearize(op).compare(train.series_approximation(op))
    assert abs(cmp.dc_gain_difference) < 1e-6
    assert abs(cmp.slowest_pole_difference) < 1e-6


def test_two_mass_resonance_with_a_free_motor_side():
    # Source: undamped two-mass system w = sqrt(K (1/J_l + 1/(N**2 J_m))) (Thomson, Theory of
    # Vibration with Applications, 5th ed., §6.1). A DC motor with a tiny k is nearly free.
    train = dk.DriveTrain(
        dk.DCMotor(R=1.0, L=0.0, k=0.01, J=0.5),
        dk.Transmission(ratio=4.0, stiffness=8e5, damping=0.0),
        dk.Conveyor(load_torque=0.0, J=40.0),
    )
    lin = train.linearize(train.operating_point(u=1.0))
    resonant = [p for p in lin.poles if p.imag > 0]
    assert len(resonant) == 1
    assert abs(resonant[0]) == pytest.approx(math.sqrt(8e5 * (1 / 40 + 1 / (16 * 0.5))), rel=1e-3)


def test_induction_motor_holds_its_side_of_a_compliant_gearbox(conveyor_train):
    # An induction motor on a stiff frequency has a steep torque-slip line (T_r / slip speed),
    # which holds the motor side almost fixed: the resonance moves from the free two-mass value
    # down towards the locked-motor value sqrt(K / J_l).
    op = conveyor_train.operating_point(speed="70 rpm")
    lin = conveyor_train.linearize(op)
    t = conveyor_train.transmission
    locked = math.sqrt(t.stiffness / conveyor_train.machine.J)
    free = t.resonance(conveyor_train.motor.J, conveyor_train.machine.J)
    resonant = [p for p in lin.poles if p.imag > 0]
    assert len(resonant) == 1
    assert locked < abs(resonant[0]) < free
    assert abs(resonant[0]) == pytest.approx(locked, rel=0.1)
    mode = next(m for m in lin.modes() if m.pole.imag > 0)
    assert mode.stage == t.name
    assert 0 < mode.damping < 0.5


def test_factored_form_reads_back_the_gain_and_time_constants(pump_train):
    op = pump_train.operating_point(flow=380 / 3600)
    lin = pump_train.linearize(op)
    form = lin.factored()
    assert form.gain == pytest.approx(lin.dc_gain.to("m**3/h/percent").magnitude, rel=1e-9)
    assert len(form.denominator) == lin.order
    assert "exp(-0.2 s)" in form.text
    # rebuild G(jw) from the printed time constants
    taus = sorted((m.time_constant for m in lin.modes()), reverse=True)
    w = 0.7
    g = form.gain / np.prod([1 + 1j * w * t for t in taus]) / 3600
    assert abs(lin.frequency_response([w])[0] * np.exp(1j * w * 0.2)) == pytest.approx(abs(g), rel=1e-9)


def test_outputs_and_sensors():
    s = dk.demo.raw_water_pump_stages()
    pressure = dk.DriveTrain(s["drive"], s["motor"], s["pump"], s["pipe"], dk.PressureSensor(time_constant=0.2))
    op = pressure.operating_point(flow=0.1)
    assert pressure.output_of(op.x) == pytest.approx(op.values()["pump pressure"][0])
    assert pressure.linearize(op).output_display_unit == "bar"
    with pytest.raises(ParameterError, match="`output`"):
        dk.DriveTrain(s["drive"], s["motor"], s["pump"], s["pipe"], s["meter"], output="motor_speed")
    with pytest.raises(ParameterError, match="needs a CentrifugalPump"):
        dk.DriveTrain(s["drive"], s["motor"], dk.Conveyor(load_torque=10, J=1), output="flow")


@pytest.mark.parametrize(
    ("stages", "match"),
    [
        (lambda s: (s["pump"], s["motor"]), "expected a motor"),
        (lambda s: (s["motor"], s["pipe"]), "expected a driven machine"),
        (lambda s: (s["motor"], s["pump"]), "needs at least one Pipe"),
        (lambda s: (s["motor"], s["pump"], s["pipe"], s["meter"], s["drive"]), "out of place"),
        (lambda s: (dk.VariableSpeedDrive(), dk.DCMotor(R=1, L=0, k=1, J=1), s["pump"], s["pipe"]), "DCMotor"),
    ],
)
def test_stage_order_errors(stages, match):
    with pytest.raises(ParameterError, match=match):
        dk.DriveTrain(*stages(dk.demo.raw_water_pump_stages()))


def test_operating_point_table_uses_trade_units(pump_train):
    rows = {name: (value, unit) for name, value, unit in pump_train.operating_point(flow=380 / 3600).table()}
    assert rows["flow"] == (pytest.approx(380.0), "m**3/h")
    assert rows["motor speed"][1] == "rpm"
    assert rows["pump efficiency"][1] == "%"
    assert 70 < rows["pump efficiency"][0] < 90


def test_the_motor_alone_on_a_free_shaft():
    # Source: University of Michigan / Carnegie Mellon "Control Tutorials", DC Motor Speed:
    # P(s) = 0.01 / (0.005 s**2 + 0.06 s + 0.1001); with no driven machine the train is the motor alone
    train = dk.DriveTrain(dk.DCMotor(R=1.0, L=0.5, k=0.01, J=0.01, b=0.1))
    lin = train.linearize(train.operating_point(u=1.0))
    num, den = lin.tf.num[0][0], lin.tf.den[0][0]
    assert len(num) == 1  # no round-off coefficients in s
    np.testing.assert_allclose(num / den[0], [0.01 / 0.005], rtol=1e-9)
    np.testing.assert_allclose(den / den[0], [1.0, 0.06 / 0.005, 0.1001 / 0.005], rtol=1e-9)
    assert "machine" not in train.stage_map()
    with pytest.raises(ParameterError, match="compliant Transmission needs a driven machine"):
        dk.DriveTrain(dk.DCMotor(R=1.0, L=0.5, k=0.01, J=0.01), dk.Transmission(ratio=2, stiffness=100.0))
