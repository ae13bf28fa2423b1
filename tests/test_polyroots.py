"""Polynomial roots by the Aberth-Ehrlich iteration against numpy.roots and known factors."""

import numpy as np
import pytest
import scipy.optimize

from drivekit.polyroots import polynomial_roots


def _distance(ours, theirs):
    """Largest distance after the best one-to-one pairing, relative to 1 + max |root|."""
    cost = np.abs(ours[:, None] - theirs[None, :])
    i, j = scipy.optimize.linear_sum_assignment(cost)
    return np.max(cost[i, j]) / (1.0 + np.max(np.abs(theirs)))


def test_known_factors_and_zero_roots():
    # (s + 1)(s + 2)(s^2 + 2 s + 5) s^2: roots -1, -2, -1 +- 2j and a double root at 0
    c = np.polymul(np.polymul([1.0, 3.0, 2.0], [1.0, 2.0, 5.0]), [1.0, 0.0, 0.0])
    expected = np.array([-1.0, -2.0, -1.0 + 2.0j, -1.0 - 2.0j, 0.0, 0.0])
    assert _distance(polynomial_roots(c), expected) <= 1e-14
    assert len(polynomial_roots(np.array([0.0, 0.0, 2.0, -4.0]))) == 1  # leading zeros dropped
    assert polynomial_roots(np.array([3.0])).size == 0


@pytest.mark.parametrize("seed", range(4))
def test_random_polynomials_against_numpy_roots(seed):
    # Reference: numpy.roots (eigenvalues of the companion matrix). Roots spread over five decades,
    # real and complex; each root found is a root to rounding (backward error, Higham, Accuracy and
    # Stability of Numerical Algorithms, 2nd ed., 2002, §5.1).
    rng = np.random.default_rng(seed)
    for _ in range(200):
        n = int(rng.integers(1, 15))
        roots = rng.normal(size=n) * 10 ** rng.uniform(-2, 3, size=n)
        c = np.real(np.poly(roots)) * 10 ** rng.uniform(-5, 5) if rng.random() < 0.7 else rng.normal(size=n + 1)
        ours, theirs = polynomial_roots(c), np.roots(c)
        assert len(ours) == len(theirs) == n
        size = np.polyval(np.abs(c), np.abs(ours))
        assert np.all(np.abs(np.polyval(c, ours)) <= 1e-13 * size)
        apart = np.abs(theirs[:, None] - theirs[None, :])[~np.eye(n, dtype=bool)]
        if np.min(apart, initial=np.inf) > 1e-4 * (1.0 + np.max(np.abs(theirs))):
            assert _distance(ours, theirs) <= 1e-9
