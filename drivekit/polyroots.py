"""Roots of a real polynomial by the Aberth-Ehrlich iteration, compiled.

All roots are improved together: each by a Newton step on p divided by
the repulsion of the others, z_i <- z_i - w_i with
w_i = N_i / (1 - N_i sum_{j != i} 1/(z_i - z_j)) and N_i = p(z_i)/p'(z_i)
(Ehrlich, Comm. ACM 10 (1967) 107-108; Aberth, Math. Comp. 27 (1973)
339-344). A root stops moving when p there is as small as rounding the
coefficients can make it, |p(z)| <= 4 n eps sum |c_k| |z|^k (Bini, Numer.
Algorithms 13 (1996) 179-200, §2), after one more step where that step is
small; the start is a circle of radius the
geometric mean of the roots' sizes. Where the iteration does not settle,
the eigenvalues of the companion matrix decide (as numpy.roots).
"""

from __future__ import annotations

import math

import numba
import numpy as np

__all__ = ["polynomial_from_roots", "polynomial_roots"]

_MAX_SWEEPS = 200
_EPS = float(np.finfo(float).eps)


@numba.njit(cache=True, nogil=True)
def _aberth(c: np.ndarray) -> tuple[np.ndarray, bool]:
    """Roots of the polynomial c (c[0] != 0, c[-1] != 0, degree >= 1) and whether all settled."""
    n = len(c) - 1
    size = np.abs(c)
    radius = (abs(c[n]) / abs(c[0])) ** (1.0 / n)
    z = np.empty(n, np.complex128)
    for i in range(n):
        angle = 2.0 * math.pi * i / n + 0.4  # off the real axis, so conjugate pairs can form
        z[i] = radius * complex(math.cos(angle), math.sin(angle))
    done = np.zeros(n, np.bool_)
    left = n
    for _ in range(_MAX_SWEEPS):
        for i in range(n):
            if done[i]:
                continue
            s = z[i]
            p = c[0] + 0j
            d = 0j
            for k in range(1, n + 1):
                d = d * s + p
                p = p * s + c[k]
            a = abs(s)
            bound = size[0]
            for k in range(1, n + 1):
                bound = bound * a + size[k]
            repel = 0j
            for j in range(n):
                if j != i:
                    repel += 1.0 / (s - z[j])
            ratio = p / d
            step = ratio / (1.0 - ratio * repel)
            if abs(p) <= 4.0 * n * _EPS * bound:  # at rounding level: this last step only sharpens it
                done[i] = True
                left -= 1
                if not (abs(step) <= 1e-8 * max(a, 1e-300)):
                    continue  # a step that large at that level is noise (a multiple root)
            z[i] = s - step
        if left == 0:
            return z, True
    return z, False


def polynomial_roots(c: np.ndarray) -> np.ndarray:
    """Roots of a real polynomial (coefficients highest power first), like numpy.roots.

    Parameters
    ----------
    c : numpy.ndarray
        Real coefficients, highest power first; leading and trailing zeros
        allowed (a trailing zero is a root at 0).

    Returns
    -------
    numpy.ndarray
        Complex roots, as many as the degree after the leading zeros.

    Examples
    --------
    >>> np.round(np.sort(polynomial_roots(np.array([1.0, -3.0, 2.0])).real), 12).tolist()
    [1.0, 2.0]
    """
    c = np.asarray(c, dtype=float)
    nz = np.flatnonzero(c)
    if not len(nz):
        return np.zeros(0, complex)
    zero = len(c) - 1 - int(nz[-1])
    c = np.ascontiguousarray(c[nz[0] : nz[-1] + 1])
    if len(c) < 2:
        return np.zeros(zero, complex)
    roots, settled = _aberth(c)
    if not settled or not np.all(np.isfinite(roots)):
        roots = np.roots(c).astype(complex)
    return np.concatenate([roots, np.zeros(zero, complex)]) if zero else roots


def polynomial_from_roots(roots: np.ndarray) -> np.ndarray:
    """Real coefficients (highest power first, leading 1) of the polynomial with these roots.

    Parameters
    ----------
    roots : numpy.ndarray
        Roots, complex ones in conjugate pairs. [1/s]

    Returns
    -------
    numpy.ndarray
        ``len(roots) + 1`` real coefficients (products formed in plain
        Python arithmetic, which is fastest for the few roots of a loop).

    Examples
    --------
    >>> polynomial_from_roots(np.array([-1.0, -2.0])).tolist()
    [1.0, 3.0, 2.0]
    """
    c = [1.0 + 0j]
    for r in np.asarray(roots, complex).tolist():
        c = [a - r * b for a, b in zip([*c, 0j], [0j, *c], strict=True)]
    return np.array(c).real
