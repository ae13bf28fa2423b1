"""Pipe friction and inertance against the fluids library and published values."""

import math

import fluids.friction
import numpy as np
import pytest

import drivekit as dk
from drivekit.piping import LAMINAR_LIMIT, TURBULENT_LIMIT, colebrook, friction_factor


@pytest.mark.parametrize("re", [4e3, 1e4, 5e4, 2e5, 1e6, 1e7, 1e8])
@pytest.mark.parametrize("rel", [0.0, 1e-6, 1e-4, 1e-3, 1e-2, 5e-2])
def test_colebrook_matches_fluids_library(re, rel):
    # Source: fluids.friction.Colebrook (exact solution via the Lambert W function)
    assert colebrook(re, rel) == pytest.approx(fluids.friction.Colebrook(re, rel), rel=1e-12)


def test_colebrook_against_moody_chart_readings():
    # Source: Moody, Trans. ASME 66 (1944) 671-684, Fig. 1, read by eye (about +-3 %):
    # Re = 1e5, eps/D = 0.001 -> f ~ 0.022; Re = 1e6, eps/D = 0.0002 -> f ~ 0.0145
    assert colebrook(1e5, 1e-3) == pytest.approx(0.022, rel=0.03)
    assert colebrook(1e6, 2e-4) == pytest.approx(0.0145, rel=0.03)


def test_laminar_and_transition():
    # Source: Hagen-Poiseuille, f = 64 / Re (White, Fluid Mechanics, 7th ed., Eq. 6.13)
    assert friction_factor(1500.0, 1e-3) == pytest.approx(64 / 1500)
    # the blend is continuous at both ends of the transition zone
    for edge in (LAMINAR_LIMIT, TURBULENT_LIMIT):
        below, above = friction_factor(edge * (1 - 1e-9), 1e-4), friction_factor(edge * (1 + 1e-9), 1e-4)
        assert below == pytest.approx(above, rel=1e-6)


def test_friction_head_against_darcy_weisbach_by_hand():
    # Source: White, Fluid Mechanics, 7th ed., Eq. 6.10 (Darcy-Weisbach) with f from fluids
    water = dk.Fluid()
    pipe = dk.Pipe(length="650 m", diameter="254.5 mm", roughness="0.045 mm", minor_loss=12)
    q = 380 / 3600
    area = math.pi * 0.2545**2 / 4
    v = q / area
    re = 998.0 * v * 0.2545 / 1.002e-3
    f = fluids.friction.Colebrook(re, 0.045e-3 / 0.2545)
    expected = (f * 650 / 0.2545 + 12) * v**2 / (2 * 9.80665)
    assert pipe.friction_head(q, water) == pytest.approx(expected, rel=1e-10)
    # friction opposes the flow in either direction
    assert pipe.friction_head(-q, water) == pytest.approx(-expected, rel=1e-10)


def test_inertance():
    # Source: rigid-column pipe inertance I = rho L / A (Wylie & Streeter, Fluid Transients in
    # Systems, 1993, §1): 100 m of 200 mm pipe full of water
    pipe = dk.Pipe(length=100.0, diameter=0.2)
    assert pipe.inertance(dk.Fluid()) == pytest.approx(998.0 * 100 / (math.pi * 0.01), rel=1e-12)


def test_water_starting_time_of_the_demo_main(pump_train):
    # Source: Kundur, Power System Stability and Control, 1994, §9.1: T_w = L v / (g H),
    # typical 0.5-4 s for hydro plants; the pumped main of the demo is in that range.
    op = pump_train.operating_point(flow=380 / 3600)
    pipe = pump_train.pipes[0]
    tw = pipe.length * pipe.velocity(op.flow) / (9.80665 * op.head)
    assert 0.5 < tw < 10
    # and the column term of the model is L / (g A) (head per rate of change of flow)
    lin = pump_train.linearize(op)
    i = pump_train.state_names.index("flow")
    j = pump_train.state_names.index("motor speed")
    # d(dQ/dt)/dw = (dH/dw) / (L/(gA)): check with the head slope computed here
    h = 1e-6
    dh_dw = (
        pump_train.pump_head(op.machine_speed + h, op.flow) - pump_train.pump_head(op.machine_speed - h, op.flow)
    ) / (2 * h)
    assert lin.A[i, j] == pytest.approx(dh_dw / (pipe.length / (9.80665 * pipe.area)), rel=1e-6)


def test_friction_slope_is_below_the_frozen_friction_value():
    # With f frozen the head-loss slope is 2 h / Q; with f(Re) falling as Re rises it is a few %
    # less (SOURCES trap). Compare the exact slope with 2 h / Q.
    water = dk.Fluid()
    pipe = dk.Pipe(length=1000.0, diameter=0.3, roughness=0.045e-3)
    q = 0.12
    h = pipe.friction_head(q, water)
    dq = 1e-7
    slope = (pipe.friction_head(q + dq, water) - pipe.friction_head(q - dq, water)) / (2 * dq)
    ratio = slope / (2 * h / q)
    assert 0.9 < ratio < 1.0


def test_vectorised_friction():
    water = dk.Fluid()
    pipe = dk.Pipe(length=100.0, diameter=0.1)
    q = np.array([0.0, 1e-5, 0.01, 0.03])
    out = pipe.friction_head(q, water)
    assert out.shape == (4,)
    assert out[0] == 0.0
    np.testing.assert_allclose(out[1:], [pipe.friction_head(float(x), water) for x in q[1:]], rtol=1e-14)
