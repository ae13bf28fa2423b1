"""Slurry deposition check against Durand's formula and the mixture relations."""

from __future__ import annotations

import math

import numpy as np
import pytest

import drivekit as dk
from drivekit import slurry
from drivekit.demo import raw_water_pump_stages
from drivekit.fluid import slurry_specific_gravity


def test_durand_formula():
    # Source: Durand, Proc. Minnesota Int. Hydraulics Conf. (1953) (from memory):
    # V_D = F_L sqrt(2 g D (S_s - 1)); sand S_s = 2.65, D = 0.2545 m, F_L = 1.3
    expected = 1.3 * math.sqrt(2 * 9.80665 * 0.2545 * 1.65)
    assert slurry.deposition_velocity(0.2545, 0.5e-3, 2.65, 0.10, coefficient=1.3) == pytest.approx(expected)
    assert expected == pytest.approx(3.73, abs=0.005)
    # a carrier liquid heavier than water lowers the density difference: S_s / S_l - 1
    heavy = slurry.deposition_velocity(0.2545, 0.5e-3, 2.65, 0.10, liquid_sg=1.1, coefficient=1.3)
    assert heavy == pytest.approx(1.3 * math.sqrt(2 * 9.80665 * 0.2545 * (2.65 / 1.1 - 1)))


def test_durand_chart_shape():
    # Source: Durand & Condolios chart (1952), as reproduced in Abulnaga, Slurry Systems Handbook, 2002, Ch. 4
    # (from memory): F_L between about 0.4 and 1.4, rising with size and concentration, flat above ~1 mm
    sizes = np.geomspace(0.1e-3, 3e-3, 12)
    for cv in (0.02, 0.05, 0.10, 0.15):
        fl = np.array([slurry.durand_coefficient(d, cv) for d in sizes])
        assert np.all(np.diff(fl) >= 0)
        assert fl.min() >= 0.4
        assert fl.max() <= 1.4
    assert slurry.durand_coefficient(2e-3, 0.15) - slurry.durand_coefficient(1e-3, 0.15) < 0.05
    assert slurry.durand_coefficient(0.4e-3, 0.05) < slurry.durand_coefficient(0.4e-3, 0.15)


def test_volume_fraction_agrees_with_the_mixture_density():
    # Source: mixture rule S_m = 1 + C_v (S_s - 1) (a volume balance), against drivekit.fluid's weight form
    cv = slurry.volume_fraction(2.65, 0.40)
    assert 1.0 + cv * (2.65 - 1.0) == pytest.approx(slurry_specific_gravity(2.65, 0.40), rel=1e-12)


def test_deposition_check_over_the_flow_range():
    pipe = raw_water_pump_stages()["pipe"]
    flows = np.linspace(110, 550, 12) / 3600
    check = slurry.deposition_check(pipe, flows, particle_size="0.1 mm", solids_sg=2.65, concentration=0.02)
    vd = slurry.deposition_velocity(pipe.diameter, 0.1e-3, 2.65, 0.02)
    assert check.deposition_velocity == pytest.approx(vd)
    assert check.minimum_flow == pytest.approx(1.2 * vd * pipe.area)
    np.testing.assert_allclose(check.velocities, flows / pipe.area)
    np.testing.assert_array_equal(check.ok, flows / pipe.area >= 1.2 * vd)
    assert not check.all_ok
    assert check.ok[-1]
    assert not check.ok[0]
    assert any("block" in c for c in check.cautions)
    assert check.to_frame().shape == (12, 4)
    fine = slurry.deposition_check(
        pipe, ["500 m**3/h", "550 m**3/h"], particle_size=0.1e-3, solids_sg=2.65, concentration=0.02
    )
    assert fine.all_ok


def test_bad_input():
    pipe = dk.Pipe(length=10.0, diameter=0.1)
    with pytest.raises(dk.ParameterError, match="`solids_sg`"):
        slurry.deposition_velocity(0.1, 1e-3, 0.9, 0.1)
    with pytest.raises(dk.ParameterError, match="`particle_size`"):
        slurry.durand_coefficient("1 s", 0.1)
    with pytest.raises(dk.ParameterError, match="`margin`"):
        slurry.deposition_check(pipe, [0.01], particle_size=1e-3, solids_sg=2.65, concentration=0.1, margin=-1)
    with pytest.raises(dk.ParameterError, match="`flows`"):
        slurry.deposition_check(pipe, [-0.01], particle_size=1e-3, solids_sg=2.65, concentration=0.1)
