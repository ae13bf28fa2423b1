"""Points of a loop's frequency response refined to round-off, compiled.

The open loop is L(jw) = k prod(jw - z) / prod(jw - p) e^{-jw delay}. The
functions here find, between two frequencies that bracket it, a gain
crossover (|L| = 1), a phase crossover (Im L = 0), a peak of |S| or |T|
(their slope in w is zero) or the frequency where |T| falls to a level,
by Brent's method on exact evaluations of L.

Brent's method: R. P. Brent, *Algorithms for Minimization without
Derivatives*, Prentice-Hall, 1973, Ch. 4 (inverse quadratic
interpolation, secant and bisection steps, as in his zeroin).
"""

from __future__ import annotations

import math

import numba
import numpy as np

__all__ = ["GAIN_CROSSOVER", "PHASE_CROSSOVER", "S_PEAK", "T_LEVEL", "T_PEAK", "crossing", "loop_value", "target"]

#: what :func:`crossing` looks for: |L| = 1
GAIN_CROSSOVER = 0
#: Im L = 0 (Im L / |L| changes sign)
PHASE_CROSSOVER = 1
#: d ln|S| / dw = 0
S_PEAK = 2
#: d ln|T| / dw = 0
T_PEAK = 3
#: ln |T| = ln level
T_LEVEL = 4

_EPS = float(np.finfo(float).eps)

_jit = numba.njit(cache=True, nogil=True)


@_jit
def _value_and_log_slope(z: np.ndarray, p: np.ndarray, k: float, delay: float, w: float) -> tuple[complex, complex]:
    """L(jw) and d ln L(jw) / dw = j (sum 1/(jw - z) - sum 1/(jw - p) - delay)."""
    s = 1j * w
    v = k + 0j
    d = -delay + 0j
    for a in z:
        q = s - a
        v *= q
        d += 1.0 / q
    for b in p:
        q = s - b
        v /= q
        d -= 1.0 / q
    if delay:
        v *= np.exp(-s * delay)
    return v, 1j * d


@_jit
def loop_value(z: np.ndarray, p: np.ndarray, k: float, delay: float, w: float) -> complex:
    """L(jw).

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles, complex. [1/s]
    k : float
        Gain of the factored form.
    delay : float
        Dead time. [s]
    w : float
        Angular frequency. [rad/s]
    """
    s = 1j * w
    v = k + 0j
    for a in z:
        v *= s - a
    for b in p:
        v /= s - b
    if delay:
        v *= np.exp(-s * delay)
    return v


@_jit
def target(kind: int, z: np.ndarray, p: np.ndarray, k: float, delay: float, level: float, w: float) -> float:
    """The function whose sign change :func:`crossing` looks for, at w.

    ``kind`` is one of the module constants: ln|L| (gain crossover),
    Im L / |L| (phase crossover), d ln|S|/dw = -Re(L'/(1 + L)) (peak of
    |S|), d ln|T|/dw = Re(L'/(L (1 + L))) (peak of |T|), ln(|T| / level).
    """
    if kind in (T_PEAK, S_PEAK):
        v, dl = _value_and_log_slope(z, p, k, delay, w)
        r = dl / (1.0 + v)
        return -(r * v).real if kind == S_PEAK else r.real
    v = loop_value(z, p, k, delay, w)
    if kind == GAIN_CROSSOVER:
        return math.log(abs(v))
    if kind == PHASE_CROSSOVER:
        return v.imag / max(abs(v), 1e-300)
    return math.log(abs(v) / abs(1.0 + v)) - math.log(level)


@_jit
def crossing(
    kind: int, z: np.ndarray, p: np.ndarray, k: float, delay: float, a: float, b: float, level: float = 1.0
) -> float:
    """Frequency in [a, b] where :func:`target` changes sign, to round-off (nan when it does not).

    Parameters
    ----------
    kind : int
        One of the module constants.
    z, p : numpy.ndarray
        Zeros and poles, complex. [1/s]
    k : float
        Gain of the factored form.
    delay : float
        Dead time. [s]
    a, b : float
        The bracket, a < b. [rad/s]
    level : float
        Level of |T| for ``T_LEVEL``. [-]

    Returns
    -------
    float
        Frequency, within 1e-15 b + 4 eps w. [rad/s]
    """
    xtol = 1e-15 * b
    rtol = 4.0 * _EPS
    xpre, xcur = a, b
    fpre = target(kind, z, p, k, delay, level, xpre)
    fcur = target(kind, z, p, k, delay, level, xcur)
    if fpre == 0.0:
        return xpre
    if fcur == 0.0:
        return xcur
    if fpre * fcur > 0.0 or not (math.isfinite(fpre) and math.isfinite(fcur)):
        return math.nan
    xblk, fblk, spre, scur = 0.0, 0.0, 0.0, 0.0
    for _ in range(200):
        if fpre != 0.0 and fcur != 0.0 and (fpre < 0.0) != (fcur < 0.0):
            xblk, fblk = xpre, fpre
            spre = scur = xcur - xpre
        if abs(fblk) < abs(fcur):  # the best point so far is xcur
            xpre, xcur, xblk = xcur, xblk, xcur
            fpre, fcur, fblk = fcur, fblk, fcur
        delta = 0.5 * (xtol + rtol * abs(xcur))
        sbis = 0.5 * (xblk - xcur)
        if fcur == 0.0 or abs(sbis) < delta:
            return xcur
        if abs(spre) > delta and abs(fcur) < abs(fpre):
            if xpre == xblk:  # secant
                stry = -fcur * (xcur - xpre) / (fcur - fpre)
            else:  # inverse quadratic interpolation
                dpre = (fpre - fcur) / (xpre - xcur)
                dblk = (fblk - fcur) / (xblk - xcur)
                stry = -fcur * (fblk * dblk - fpre * dpre) / (dblk * dpre * (fblk - fpre))
            if 2.0 * abs(stry) < min(abs(spre), 3.0 * abs(sbis) - delta):
                spre, scur = scur, stry  # interpolation accepted
            else:
                spre, scur = sbis, sbis  # bisection
        else:
            spre, scur = sbis, sbis
        xpre, fpre = xcur, fcur
        xcur += scur if abs(scur) > delta else (delta if sbis > 0.0 else -delta)
        fcur = target(kind, z, p, k, delay, level, xcur)
    return xcur
