"""Water-hammer screening against the Korteweg and Joukowsky formulas and the ranges quoted for them."""

from __future__ import annotations

import math

import numpy as np
import pytest

import drivekit as dk
from drivekit import surge
from drivekit.demo import raw_water_pump_stages

K_WATER, RHO = 2.19e9, 998.0


def test_wave_speed_by_the_korteweg_formula():
    d, e = 0.2545, 0.00635
    # Source: Wylie & Streeter, Fluid Transients in Systems, 1993, §2.6 (from memory):
    # a = sqrt((K/rho) / (1 + c1 K D / (E e))), c1 = 1 - mu**2 anchored throughout; steel E = 207 GPa, mu = 0.30
    expected = math.sqrt((K_WATER / RHO) / (1.0 + (1.0 - 0.3**2) * K_WATER * d / (207e9 * e)))
    assert surge.wave_speed(d, e, "steel") == pytest.approx(expected, rel=1e-12)
    assert surge.wave_speed("254.5 mm", "6.35 mm") == pytest.approx(expected, rel=1e-12)
    # restraint factors, same source: 1 - mu/2 anchored upstream only, 1 with expansion joints
    assert surge.restraint_factor("anchored upstream", 0.3) == pytest.approx(0.85)
    assert surge.restraint_factor("expansion joints", 0.3) == 1.0


@pytest.mark.parametrize("d_over_e", [25.0, 40.0, 60.0, 100.0, 150.0])
def test_steel_pipe_wave_speed_range(d_over_e):
    # Source: Wylie & Streeter, Fluid Transients in Systems, 1993 (via SOURCES): steel pipe about 900-1350 m/s
    # depending on D/e (thin-walled range D/e > 25)
    a = surge.wave_speed(0.3, 0.3 / d_over_e, "steel")
    assert 900.0 <= a <= 1350.0


def test_rigid_pipe_gives_the_speed_of_sound_in_water_and_plastic_is_slow():
    rigid = surge.PipeMaterial("rigid", 1e30, 0.3, "test")
    # Source: speed of sound in water at 20 degC about 1482 m/s (White, Fluid Mechanics, 7th ed., Table 9.1;
    # from memory), sqrt(K / rho) with K = 2.19 GPa
    assert surge.wave_speed(0.3, 0.01, rigid) == pytest.approx(1482.0, rel=0.005)
    # PE pipe SDR 11: a few hundred m/s (common practice, no source: 250-450 m/s is the usual quote)
    assert 250.0 <= surge.wave_speed(0.2, 0.2 / 9.0, "HDPE") <= 450.0
    assert surge.wave_speed(0.2, 0.01, "PVC") < surge.wave_speed(0.2, 0.01, "ductile iron")


def test_joukowsky_and_michaud():
    # Source: Joukowsky (1900), dp = rho a dv: 1000 kg/m3, 1000 m/s, 1 m/s -> 1.0e6 Pa
    assert surge.joukowsky_rise(1000.0, 1000.0, -1.0) == pytest.approx(1.0e6)
    # Source: Michaud (1878), dp = 2 rho L dv / t_c; it equals Joukowsky at t_c = 2L/a
    a, length, dv = 1200.0, 650.0, 2.0
    tc = surge.pipe_period(length, a)
    assert tc == pytest.approx(2 * 650.0 / 1200.0)
    assert surge.michaud_rise(RHO, length, dv, tc) == pytest.approx(surge.joukowsky_rise(RHO, a, dv))
    assert surge.michaud_rise(RHO, length, dv, 10.0) == pytest.approx(2 * RHO * 650.0 * 2.0 / 10.0)


def test_surge_check_on_the_invented_rising_main():
    pipe = raw_water_pump_stages()["pipe"]
    slow = surge.surge_check(
        pipe, wall_thickness="6.35 mm", flow_change="380 m**3/h", change_time="20 s", pressure_limit="6 bar"
    )
    dv = (380 / 3600) / (math.pi * 0.2545**2 / 4)
    assert slow.velocity_change == pytest.approx(dv)
    assert slow.pipe_period == pytest.approx(2 * 650.0 / slow.wave_speed)
    assert not slow.fast
    # Source: Michaud (1878), as above
    assert slow.expected_rise == pytest.approx(2 * RHO * 650.0 * dv / 20.0)
    assert slow.ok
    assert any("estimate" in c for c in slow.cautions)
    assert any("qualified engineer" in c for c in slow.cautions)
    fast = surge.surge_check(
        pipe, wall_thickness="6.35 mm", flow_change="380 m**3/h", change_time="0.5 s", pressure_limit="6 bar"
    )
    assert fast.fast
    assert not fast.ok
    assert fast.expected_rise == pytest.approx(RHO * fast.wave_speed * dv)
    assert any("faster than the pipe period" in c for c in fast.cautions)
    assert any("exceeds the allowed" in c for c in fast.cautions)
    # at the shortest safe time, Michaud's estimate equals the limit
    assert surge.michaud_rise(RHO, 650.0, dv, fast.slowest_safe_time) == pytest.approx(6e5)
    rows = {q: v for q, v, _ in fast.table()}
    assert rows["pipe period 2L/a"] == pytest.approx(fast.pipe_period)


def test_thick_wall_and_bad_input():
    pipe = dk.Pipe(length="100 m", diameter="200 mm")
    check = surge.surge_check(pipe, wall_thickness="20 mm", flow_change=0.01, change_time=5.0, material="HDPE")
    assert any("thick wall" in c for c in check.cautions)
    with pytest.raises(dk.ParameterError, match="`material`: got 'unobtainium'"):
        surge.wave_speed(0.2, 0.01, "unobtainium")
    with pytest.raises(dk.ParameterError, match="`restraint`"):
        surge.wave_speed(0.2, 0.01, restraint="glued")
    with pytest.raises(dk.ParameterError, match="`wall_thickness`"):
        surge.wave_speed(0.2, "-1 mm")
    with pytest.raises(dk.ParameterError, match="`change_time`"):
        surge.surge_check(pipe, wall_thickness=0.01, flow_change=0.01, change_time="2 m")
    assert np.isfinite(surge.WATER_BULK_MODULUS)
