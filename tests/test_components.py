"""Stage components against published formulas and worked examples."""

import math

import numpy as np
import pytest

import drivekit as dk
from drivekit.units import ParameterError

# -- DC motor -------------------------------------------------------------------------------


def test_dc_motor_nameplate_estimate_reproduces_the_nameplate():
    # Invented nameplate: 440 V, 50 A, 1500 rpm, 20 kW. The estimate must run at
    # rated speed and draw rated current at rated voltage and rated output torque.
    m = dk.DCMotor.from_nameplate(voltage="440 V", current="50 A", speed="1500 rpm", power="20 kW", J=0.5)
    w = 1500 * 2 * math.pi / 60
    torque_out = 20e3 / w
    # steady state: k i = T_out + b w and V = R i + k w
    i = (torque_out + m.b * w) / m.k
    assert i == pytest.approx(50.0, rel=1e-12)
    assert m.R * i + m.k * w == pytest.approx(440.0, rel=1e-12)
    assert pytest.approx(0.02) == m.L / m.R


def test_dc_motor_nameplate_refuses_impossible_efficiency():
    with pytest.raises(ParameterError, match="`power`"):
        dk.DCMotor.from_nameplate(voltage=100, current=10, speed=100, power=1500, J=0.1)


# -- induction motor ---------------------------------------------------------------------


def test_induction_motor_synchronous_speed_and_torque_line():
    m = dk.InductionMotor(rated_power="55 kW", rated_speed="1480 rpm", J=0.4, poles=4, rated_frequency="50 Hz")
    # Source: Chapman, Electric Machinery Fundamentals, 5th ed., Eq. 6-1: n_sync = 120 f / P
    assert m.synchronous_speed(50.0) * 60 / (2 * math.pi) == pytest.approx(120 * 50 / 4)
    # rated torque at rated speed and frequency, zero torque at synchronous speed
    assert m.torque(50.0, m.rated_speed) == pytest.approx(55e3 / (1480 * 2 * math.pi / 60))
    assert m.torque(50.0, m.synchronous_speed(50.0)) == pytest.approx(0.0, abs=1e-9)
    # constant V/f: the same slip speed gives the same torque at 30 Hz
    assert m.torque(30.0, m.synchronous_speed(30.0) - m.rated_slip_speed) == pytest.approx(m.rated_torque)
    assert m.frequency_for(m.rated_torque, m.rated_speed) == pytest.approx(50.0)


def test_induction_motor_current_estimate_at_rated_torque_is_rated_current():
    m = dk.InductionMotor(rated_power=30e3, rated_speed="1470 rpm", J=0.2, rated_current=56, rated_power_factor=0.85)
    assert m.current(m.rated_torque) == pytest.approx(56.0)
    # at no load only the magnetising part I sin(phi) remains
    assert m.current(0.0) == pytest.approx(56 * math.sqrt(1 - 0.85**2))


def test_induction_motor_refuses_rated_speed_above_synchronous():
    with pytest.raises(ParameterError, match="below the synchronous speed 1500 rpm"):
        dk.InductionMotor(rated_power=1e4, rated_speed="1500 rpm", J=0.1)
    with pytest.raises(ParameterError, match="`poles`"):
        dk.InductionMotor(rated_power=1e4, rated_speed="1450 rpm", J=0.1, poles=3)


# -- transmission ------------------------------------------------------------------------


def test_reflected_inertia_and_friction_through_a_gear():
    # Source: Nise, Control Systems Engineering, 6th ed., §2.7: J_eq = J_L (N1/N2)**2,
    # D_eq = D_L (N1/N2)**2 for an ideal gear (here N = motor/load speed = 5)
    t = dk.Transmission(ratio=5.0)
    assert t.reflected_inertia(250.0) == pytest.approx(250.0 / 25)
    assert t.reflected_friction(50.0) == pytest.approx(2.0)
    # with efficiency the motor must supply T / (N eta) while it drives
    lossy = dk.Transmission(ratio=5.0, efficiency=0.9)
    assert lossy.torque_at_motor(100.0, 10.0) == pytest.approx(100.0 / 4.5)
    assert lossy.torque_at_motor(-100.0, 10.0) == pytest.approx(-100.0 * 0.9 / 5)


def test_two_mass_resonance():
    # Source: undamped two-mass system, w = sqrt(K (J1 + J2) / (J1 J2)) (any vibration text,
    # e.g. Thomson, Theory of Vibration with Applications, 5th ed., §6.1); with the motor
    # inertia referred to the machine side J1 = N**2 Jm.
    t = dk.Transmission(ratio=4.0, stiffness=8e5, damping=0.0)
    jm, jl = 0.5, 40.0
    j1 = 16 * jm
    assert t.resonance(jm, jl) == pytest.approx(math.sqrt(8e5 * (j1 + jl) / (j1 * jl)))


def test_damping_without_stiffness_is_refused():
    with pytest.raises(ParameterError, match="`damping`"):
        dk.Transmission(ratio=2, damping=10)


# -- pump curve and affinity laws --------------------------------------------------------


@pytest.fixture
def curve():
    return dk.PumpCurve(
        flow=["0 m**3/h", "100 m**3/h", "200 m**3/h", "300 m**3/h"],
        head=[40.0, 38.5, 34.0, 26.5],
        efficiency=[0.0, 0.60, 0.78, 0.76],
        min_flow="60 m**3/h",
    )


def test_pump_curve_fits_the_points(curve):
    # the points lie on H = 40 - 1.5e-4 Q'**2 (Q' in m**3/h) so the fit is exact
    q = np.array([0, 100, 200, 300]) / 3600
    np.testing.assert_allclose(curve.head_at(q), [40.0, 38.5, 34.0, 26.5], atol=1e-9)
    eta = curve.efficiency_at(q[1:])
    np.testing.assert_allclose(eta, [0.60, 0.78, 0.76], rtol=0.01)


def test_affinity_laws(curve):
    # Source: DOE-HDBK-1012/3-92, Fluid Flow, centrifugal pump laws: Q ~ n, H ~ n**2, P ~ n**3
    pump = dk.CentrifugalPump(curve=curve, speed="1480 rpm", J=0.3)
    n0 = pump.speed
    rho = 998.0
    for ratio in (0.5, 0.8, 1.1):
        for q0 in (0.01, 0.05, 0.08):
            assert pump.head(ratio * n0, ratio * q0) == pytest.approx(ratio**2 * pump.head(n0, q0), rel=1e-12)
            p0 = pump.torque(n0, q0, rho) * n0
            p1 = pump.torque(ratio * n0, ratio * q0, rho) * ratio * n0
            assert p1 == pytest.approx(ratio**3 * p0, rel=1e-12)
            assert pump.efficiency(ratio * n0, ratio * q0) == pytest.approx(pump.efficiency(n0, q0), rel=1e-12)


def test_pump_shaft_torque_is_hydraulic_power_over_efficiency_and_speed(curve):
    # shaft torque = rho g Q H / (eta w) at a data point (the definition of pump efficiency)
    pump = dk.CentrifugalPump(curve=curve, speed=150.0, J=0.3)
    q, h, eta = 200 / 3600, 34.0, 0.78
    expected = 998.0 * 9.80665 * q * h / (eta * 150.0)
    assert pump.torque(150.0, q, 998.0) == pytest.approx(expected, rel=0.01)


def test_speed_ratio_for_inverts_the_head_curve(curve):
    pump = dk.CentrifugalPump(curve=curve, speed=150.0, J=0.3)
    r = pump.speed_ratio_for(0.05, 25.0)
    assert pump.head(r * 150.0, 0.05) == pytest.approx(25.0, rel=1e-12)


def test_head_rising_with_flow_is_refused():
    with pytest.raises(ParameterError, match="must fall as flow rises"):
        dk.PumpCurve(flow=[0, 0.02, 0.04, 0.06], head=[30, 31, 28, 22], efficiency=[0, 0.5, 0.7, 0.72])
    # a rising part below the maker's minimum flow is accepted
    c = dk.PumpCurve(flow=[0, 0.02, 0.04, 0.06], head=[30, 30.2, 28, 22], efficiency=[0, 0.5, 0.7, 0.72], min_flow=0.03)
    assert c.shutoff_head > 0


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"flow": [0, 0.01], "head": [10, 9], "efficiency": [0, 0.5]}, "at least 3"),
        ({"flow": [0, 0.02, 0.01], "head": [10, 9, 8], "efficiency": [0, 0.5, 0.6]}, "strictly rising"),
        ({"flow": [0, 0.01, 0.02], "head": [10, 9], "efficiency": [0, 0.5, 0.6]}, "as many"),
        ({"flow": [0, 0.01, 0.02], "head": [10, 9, 7], "efficiency": [0, 0, 0.6]}, "`efficiency`"),
        ({"flow": [0, 0.01, 0.02], "head": [10, 9, 7], "efficiency": [0, 55, 70]}, "`efficiency`"),
    ],
)
def test_bad_pump_points_are_refused(kwargs, match):
    with pytest.raises(ParameterError, match=match):
        dk.PumpCurve(**kwargs)


# -- fan and conveyor --------------------------------------------------------------------


def test_fan_law_torque_and_flow():
    # Source: fan laws, Q ~ n and P ~ n**3 on a fixed system (ASHRAE Handbook, HVAC Systems
    # and Equipment, "Fans", from memory), so T = P/w ~ n**2
    fan = dk.Fan(rated_speed="980 rpm", rated_power="45 kW", J=12.0, rated_flow="20 m**3/s")
    w = fan.rated_speed
    assert fan.torque(w) * w == pytest.approx(45e3)
    assert fan.torque(0.5 * w) * 0.5 * w == pytest.approx(45e3 / 8)
    assert fan.flow(0.5 * w) == pytest.approx(10.0)


def test_conveyor_constant_torque_and_belt_speed():
    c = dk.Conveyor(load_torque="5 kN*m", J=800.0, b=10.0, pulley_diameter="0.8 m")
    assert c.torque(2.0) == pytest.approx(5000 + 20)
    assert c.belt_speed(5.0) == pytest.approx(2.0)


# -- fluid and sensors ---------------------------------------------------------------------


def test_fluid_density_from_specific_gravity():
    assert dk.Fluid().density == pytest.approx(998.0)
    # Source: slurry SG = 1 / (Cw/Ss + (1 - Cw)/Sl), mass balance of solids and liquid
    slurry = dk.Fluid.slurry(solids_sg=2.65, solids_by_weight=0.4)
    assert slurry.sg == pytest.approx(1 / (0.4 / 2.65 + 0.6 / 1.0))


def test_speed_sensor_location():
    assert dk.SpeedSensor(location="motor").quantity == "motor_speed"
    with pytest.raises(ParameterError, match="`location`"):
        dk.SpeedSensor(location="gearbox")
