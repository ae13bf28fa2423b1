"""Root locus against textbook results and python-control."""

import math

import control
import numpy as np
import pytest
import scipy.optimize

from drivekit.loop import as_linear, zpk
from drivekit.rootlocus import root_locus
from drivekit.units import ParameterError


def test_break_away_of_integrator_lag():
    rl = root_locus(control.tf([1.0], [1.0, 1.0, 0.0]))
    # Source: Ogata, Modern Control Engineering, 5th ed., Ch. 6: K/(s(s+1)) breaks away at s = -0.5, K = 0.25
    assert [b.s for b in rl.break_points] == [pytest.approx(-0.5, abs=1e-12)]
    assert rl.break_points[0].gain == pytest.approx(0.25, rel=1e-12)
    assert rl.centroid == pytest.approx(-0.5, abs=1e-12)
    assert rl.asymptote_angles == (90.0, 270.0)
    assert math.isnan(rl.ultimate_gain)


def test_third_order_break_away_and_ultimate_gain():
    rl = root_locus(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))
    # Source: Ogata 5th ed., Ch. 6 (Example of K/(s(s+1)(s+2))): break-away at s = -1 + 1/sqrt(3) (-0.4226),
    # imaginary-axis crossing at K = 6, w = sqrt(2) (Routh array)
    assert [b.s for b in rl.break_points] == [pytest.approx(-1 + 1 / math.sqrt(3), abs=1e-12)]
    assert rl.ultimate_gain == pytest.approx(6.0, rel=1e-10)
    assert rl.crossing_frequencies[0] == pytest.approx(math.sqrt(2.0), rel=1e-10)
    assert rl.centroid == pytest.approx(-1.0, abs=1e-12)
    assert rl.asymptote_angles == (60.0, 180.0, 300.0)
    # the range goes well past the crossing
    assert rl.gains[0] == 0.0
    assert rl.gains[-1] >= 100 * 6.0


def test_branches_match_closed_loop_eigenvalues_and_python_control():
    g = control.tf([1.0, 2.0], [1.0, 1.5, 4.0, 0.0])
    rl = root_locus(g)
    for i in range(0, len(rl.gains), 37):
        k = rl.gains[i]
        # Source: eigenvalues of python-control's closed loop feedback(K G)
        ref = np.sort_complex(control.poles(control.feedback(k * g))) if k > 0 else np.sort_complex(control.poles(g))
        np.testing.assert_allclose(np.sort_complex(rl.branches[i]), ref, atol=1e-8 * max(1, np.max(np.abs(ref))))
    # Source: python-control root_locus_map at the same gains
    rlm = control.root_locus_map(g, rl.gains[1:20])
    for ours, theirs in zip(rl.branches[1:20], np.asarray(rlm.loci), strict=True):
        np.testing.assert_allclose(np.sort_complex(ours), np.sort_complex(theirs), atol=1e-8)
    # branches are continuous: successive points stay close compared with the spread of the poles
    steps = np.abs(np.diff(rl.branches, axis=0))
    assert np.max(steps[:-5]) < 0.5 * np.max(np.abs(rl.branches[:-5]))


def test_present_gain_poles_with_damping():
    g = control.tf([4.0], [1.0, 1.0, 0.0])
    rl = root_locus(g)
    # Source: s^2 + s + 4 = 0: wn = 2, zeta = 1/4 (Ogata 5th ed., §5-3 standard form)
    assert len(rl.poles) == 1
    assert rl.poles[0].natural_frequency == pytest.approx(2.0, rel=1e-12)
    assert rl.poles[0].damping == pytest.approx(0.25, rel=1e-12)


def test_dead_time_uses_pade_and_says_so():
    model = as_linear(control.tf([1.0], [1.0, 1.0]), delay=1.0)
    rl = root_locus(model, pade_order=4)
    assert rl.pade_order == 4
    assert "Pade" in rl.note
    # Source: python-control closed-loop poles with control.pade(1, 4) at K = 1
    num, den = control.pade(1.0, 4)
    ref = np.sort_complex(control.poles(control.feedback(control.tf([1.0], [1.0, 1.0]) * control.tf(num, den))))
    ours = [p.pole for p in rl.poles] + [p.pole.conjugate() for p in rl.poles if p.pole.imag > 0]
    np.testing.assert_allclose(np.sort_complex(ours), ref, rtol=1e-8)
    # Source: Astrom & Hagglund, IFAC PID'00 (2000), e^{-s}/(1+s): exact ultimate gain sqrt(1 + w^2) with
    # w + atan(w) = pi (solved with brentq); the 4th-order Pade model comes within 0.2 %
    w180 = scipy.optimize.brentq(lambda w: w + math.atan(w) - math.pi, 0.1, 3.0, xtol=1e-14)
    assert rl.ultimate_gain == pytest.approx(math.sqrt(1 + w180**2), rel=2e-3)


def test_bad_input():
    with pytest.raises(ParameterError, match="`gains`"):
        root_locus(control.tf([1.0], [1.0, 1.0]), gains=[-1.0, 2.0])
    with pytest.raises(ParameterError, match="`order`"):
        root_locus(as_linear(control.tf([1.0], [1.0, 1.0]), delay=1.0), pade_order=0)


def _same_roots(ours, theirs, rtol):
    """Largest distance between two root sets after the best one-to-one pairing, relative to 1 + max |root|."""
    cost = np.abs(ours[:, None] - theirs[None, :])
    i, j = scipy.optimize.linear_sum_assignment(cost)
    return np.max(cost[i, j]) / (1.0 + np.max(np.abs(theirs))) <= rtol


@pytest.mark.parametrize(
    ("num", "den", "delay"),
    [
        # a pump flow loop like the demo: PI (Ti = 3.8 s) on four lags and 0.2 s dead time
        (np.polymul([3.8, 1.0], [2.4]), np.polymul([3.8, 0.0], np.poly([-1 / 3.28, -1.0, -20.0, -155.0])), 0.2),
        # lightly damped plant with an integrator, break points on both sides of a zero
        ([1.0, 2.0], [1.0, 1.5, 4.0, 0.0], 0.0),
        # unstable open loop with dead time
        ([2.0, 1.0], np.polymul([1.0, -0.3], [0.5, 1.0, 0.0]), 0.4),
    ],
)
def test_every_gain_against_python_control_root_locus_map(num, den, delay):
    g = control.tf(num, den)
    model = as_linear(g, delay=delay)
    rl = root_locus(model)
    assert len(rl.gains) > 150
    # Source: python-control root_locus_map (roots of den + K num by numpy) with the same 3rd-order Pade
    pade = control.tf(*control.pade(delay, 3)) if delay else 1
    loci = np.asarray(control.root_locus_map(g * pade, rl.gains).loci)
    # a double root at a break point is only defined to about the square root of the machine epsilon
    breaks = [b.gain for b in rl.break_points]
    for k, ours, theirs in zip(rl.gains, rl.branches, loci, strict=True):
        assert _same_roots(ours, theirs, 1e-6 if k in breaks else 1e-10), k
    # every branch moves continuously: successive points are near compared with the size of the roots there
    step = np.abs(np.diff(rl.branches, axis=0)) / (1.0 + np.max(np.abs(rl.branches[1:]), axis=1, keepdims=True))
    assert np.max(step) < 0.2


def _random_loop(rng):
    """Random loop numerator and denominator: integrators, repeated poles, light damping, biproper loops."""
    n = int(rng.integers(1, 12))
    m = int(rng.integers(0, n + 1))
    p = rng.normal(size=n) * 10 ** rng.uniform(-1, 2, size=n)
    if n >= 2 and rng.random() < 0.4:
        p[0] = p[1]
    if rng.random() < 0.3:
        p[-1] = 0.0
    den = np.real(np.poly(p))
    if n >= 3 and rng.random() < 0.4:
        wn, zeta = 10 ** rng.uniform(-1, 2), rng.uniform(0.01, 0.9)
        den = np.polymul(np.real(np.poly(p[2:])), [1.0, 2 * zeta * wn, wn * wn])
    num = np.real(np.poly(rng.normal(size=m) * 10 ** rng.uniform(-1, 2, size=m))) * 10 ** rng.uniform(-2, 2)
    return num, den


def test_every_branch_point_is_a_root_to_round_off_on_random_loops():
    # Each point s is a root of D(s) + K N(s) up to rounding: |P(s)| within 1e-12 of the size of P
    # over the disc holding the roots (a norm-wise backward error; Higham, Accuracy and Stability of
    # Numerical Algorithms, 2nd ed., 2002, §5.1), and the roots at each gain are all the roots:
    # python-control root_locus_map on the same polynomial, to 1e-9 of the size of the roots where the
    # roots are apart, and to 1e-5 where two nearly coincide (any answer there is only defined to about
    # the square root of the machine epsilon).
    rng = np.random.default_rng(2026)
    for case in range(60):
        num, den = _random_loop(rng)
        model = as_linear(control.tf(num, den))
        gains = None if case % 4 else np.sort(rng.uniform(0.0, 50.0, size=int(rng.integers(2, 30))))
        rl = root_locus(model, gains=gains)
        # the polynomials of the loop as drivekit factors it (poles, zeros and gain of the model)
        z, p, k_lead = zpk(model)
        den_used = np.real(np.poly(p))
        num_used = k_lead * np.atleast_1d(np.real(np.poly(z)))
        pad = np.concatenate([np.zeros(len(den_used) - len(num_used)), num_used])
        loci = np.asarray(control.root_locus_map(control.tf(num_used, den_used), rl.gains).loci)
        loci = loci.reshape(len(rl.gains), -1)
        for k, row, theirs in zip(rl.gains, rl.branches, loci, strict=True):
            c = den_used + k * pad
            if c[0] == 0.0:
                continue
            reach = max(1.0, float(np.max(np.abs(row))))
            assert np.all(np.abs(np.polyval(c, row)) <= 1e-12 * np.polyval(np.abs(c), reach)), (case, k)
            apart = np.abs(theirs[:, None] - theirs[None, :])[~np.eye(len(theirs), dtype=bool)]
            tol = 1e-9 if np.min(apart, initial=np.inf) > 1e-3 * (1.0 + np.max(np.abs(theirs))) else 1e-5
            assert _same_roots(row, theirs, tol), (case, k)
        if gains is None:  # complex roots in exact conjugate pairs
            assert np.array_equal(np.sort_complex(rl.branches[-1]), np.sort_complex(rl.branches[-1].conj()))


def test_two_break_aways_at_one_gain_against_the_closed_form():
    # K/((s+1)(s+2)(s+3)(s+4)): with x = s + 2.5 the characteristic equation is
    # x^4 - 2.5 x^2 + 0.5625 + K = 0, so x^2 = 1.25 +- sqrt(1 - K) (closed form derived here, the
    # pole pattern is symmetric about -2.5): both pairs break away at K = 1, from s = -2.5 +- sqrt(5)/2.
    g = control.tf([1.0], np.poly([-1.0, -2.0, -3.0, -4.0]))
    rl = root_locus(g)
    spots = sorted(round(b.s, 12) for b in rl.break_points)
    assert spots == [round(-2.5 - math.sqrt(5) / 2, 12), round(-2.5 + math.sqrt(5) / 2, 12)]
    assert all(abs(b.gain - 1.0) <= 1e-12 for b in rl.break_points)
    for k, row in zip(rl.gains, rl.branches, strict=True):
        x2 = 1.25 + np.array([1, -1]) * np.sqrt(complex(1.0 - k))
        x = np.sqrt(x2)
        expected = np.concatenate([x, -x]) - 2.5
        # at the break gain the double roots are only defined to about sqrt(eps)
        assert _same_roots(row, expected, 1e-7 if abs(k - 1.0) < 1e-6 else 1e-12), k
    # every branch moves continuously through the two break points
    step = np.abs(np.diff(rl.branches, axis=0)) / (1.0 + np.max(np.abs(rl.branches[1:]), axis=1, keepdims=True))
    assert np.max(step) < 0.2
