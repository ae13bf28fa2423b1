"""Compiled kernels of the exact loop responses: loop matrices and the state recursion.

The exact responses in :mod:`drivekit.responses` sample a model with a
zero-order hold (or a first-order hold of the loop error) and then run the
recursion x[k+1] = Phi x[k] + gamma. Run here step by step in compiled
code, it costs a few microseconds per thousand steps for the small state
counts of a drive train and its controller; the small matrices the
recursion starts from are assembled here too.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["affine_orbit", "pade_loop_matrix"]


@numba.njit(cache=True, nogil=True)
def _orbit(phi_t: np.ndarray, gam: np.ndarray, x0: np.ndarray, count: int) -> np.ndarray:
    n = phi_t.shape[0]
    X = np.empty((count, n))
    if count == 0:
        return X
    X[0] = x0
    for k in range(1, count):
        row = X[k]
        prev = X[k - 1]
        for i in range(n):
            row[i] = gam[i]
        for j in range(n):  # x[k] = gamma + sum_j Phi[:, j] x[k-1, j]
            xj = prev[j]
            col = phi_t[j]
            for i in range(n):
                row[i] += col[i] * xj
    return X


def affine_orbit(Phi: np.ndarray, gam: np.ndarray, x0: np.ndarray, count: int) -> np.ndarray:
    """States x[k], k < count, of x[k+1] = Phi x[k] + gamma.

    Parameters
    ----------
    Phi : numpy.ndarray
        State transition matrix, shape (n, n). [-]
    gam : numpy.ndarray
        Constant input per step, shape (n,). [state units]
    x0 : numpy.ndarray
        Initial state, shape (n,). [state units]
    count : int
        Number of states wanted, x[0] included. [-]

    Returns
    -------
    numpy.ndarray
        Shape (count, n).

    Examples
    --------
    >>> affine_orbit(np.array([[0.5]]), np.array([1.0]), np.array([0.0]), 4)[:, 0].tolist()
    [0.0, 1.0, 1.5, 1.75]
    """
    phi_t = np.ascontiguousarray(np.asarray(Phi, dtype=float).T)
    return _orbit(phi_t, np.ascontiguousarray(gam, dtype=float), np.ascontiguousarray(x0, dtype=float), int(count))


@numba.njit(cache=True, nogil=True)
def pade_loop_matrix(
    A: np.ndarray, be: np.ndarray, c0: np.ndarray, d00: float, num: np.ndarray, den: np.ndarray
) -> np.ndarray:
    """State matrix of the loop with its dead time replaced by a Pade filter.

    The filter num/den (controllable canonical form) sits in the feedback
    path: e = r - (Cp w + Dp y0), y0 = c0 z + d00 e.

    Parameters
    ----------
    A : numpy.ndarray
        State matrix of controller and plant in series, (nz, nz). [1/s]
    be : numpy.ndarray
        Their input column for the control error, (nz,).
    c0 : numpy.ndarray
        Their output row for the undelayed measurement, (nz,).
    d00 : float
        Their feedthrough from error to measurement. [-]
    num, den : numpy.ndarray
        Pade numerator and monic denominator, highest power first, equal lengths.

    Returns
    -------
    numpy.ndarray
        (nz + order, nz + order). [1/s]
    """
    nz = A.shape[0]
    n = len(den) - 1
    dp = num[0]
    cp = np.empty(n)
    for j in range(n):
        cp[j] = num[j + 1] - dp * den[j + 1]
    g = 1.0 / (1.0 + dp * d00)
    out = np.zeros((nz + n, nz + n))
    for i in range(nz):
        for j in range(nz):
            out[i, j] = A[i, j] - g * dp * be[i] * c0[j]
        for j in range(n):
            out[i, nz + j] = -g * be[i] * cp[j]
    for j in range(nz):
        out[nz, j] = g * c0[j]
    for j in range(n):
        out[nz, nz + j] = -den[j + 1] - g * d00 * cp[j]
    for i in range(1, n):
        out[nz + i, nz + i - 1] = 1.0
    return out
