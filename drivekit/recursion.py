"""Compiled state recursion of the exact loop responses.

The exact responses in :mod:`drivekit.responses` sample a model with a
zero-order hold (or a first-order hold of the loop error) and then run the
recursion x[k+1] = Phi x[k] + gamma. Run here step by step in compiled
code, it costs a few microseconds per thousand steps for the small state
counts of a drive train and its controller.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["affine_orbit"]


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
