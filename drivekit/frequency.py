"""Compiled evaluations of a frequency response: the Bode grid, the margin grid, and points refined on them.

A model or open loop is L(jw) = k prod(jw - z) / prod(jw - p) e^{-jw delay}.
:func:`bode_samples` evaluates it on the grid of the Bode and Nyquist
plots, :func:`margin_samples` on the dense grid the margins search; the
other functions find, between two frequencies that bracket it, a gain
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

__all__ = [
    "GAIN_CROSSOVER",
    "PHASE_CROSSOVER",
    "S_PEAK",
    "T_LEVEL",
    "T_PEAK",
    "bode_samples",
    "crossing",
    "loop_value",
    "margin_samples",
    "responses_at",
    "target",
]

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
    """L(jw) at one frequency: the zeros' factors, one division by the poles' product, then the dead time.

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
    if len(p):
        den = s - p[0]
        for b in p[1:]:
            den *= s - b
        v /= den
    if delay:
        v *= np.exp(-1j * (w * delay))
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


@_jit
def responses_at(z: np.ndarray, p: np.ndarray, k: float, delay: float, w: np.ndarray) -> np.ndarray:
    """L(jw) at each frequency of w.

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles, complex. [1/s]
    k : float
        Gain of the factored form.
    delay : float
        Dead time. [s]
    w : numpy.ndarray
        Angular frequencies, one-dimensional. [rad/s]

    Returns
    -------
    numpy.ndarray
        Complex, one value per frequency.
    """
    out = np.empty(len(w), np.complex128)
    for i in range(len(w)):
        out[i] = loop_value(z, p, k, delay, w[i])
    return out


@_jit
def _corners(z: np.ndarray, p: np.ndarray, delay: float) -> tuple[float, float]:
    """Slowest and fastest corner: pole or zero magnitude (those at the origin left out) or 1/delay. [rad/s]"""
    biggest = 0.0
    for r in z:
        biggest = max(biggest, abs(r))
    for r in p:
        biggest = max(biggest, abs(r))
    small = 1e-12 * max(1.0, biggest)
    low, high = np.inf, -np.inf
    for r in z:
        if abs(r) > small:
            low, high = min(low, abs(r)), max(high, abs(r))
    for r in p:
        if abs(r) > small:
            low, high = min(low, abs(r)), max(high, abs(r))
    if delay > 0:
        low, high = min(low, 1.0 / delay), max(high, 1.0 / delay)
    if low > high:
        return 1.0, 1.0
    return low, high


@_jit
def _log_grid(lo: float, hi: float, count: int, out: np.ndarray) -> None:
    """10**x for count x evenly from lo to hi into out[:count] (as numpy.logspace)."""
    step = (hi - lo) / (count - 1)
    for i in range(count):
        out[i] = 10.0 ** (i * step + lo)
    out[count - 1] = 10.0**hi


@_jit
def margin_samples(
    z: np.ndarray, p: np.ndarray, k: float, delay: float, per_decade: int
) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies and L(jw) of the grid the margins are searched on.

    A logarithmic grid, ``per_decade`` points a decade, from 1e-4 times the
    slowest corner (pole, zero or 1/delay) to 1e3 times the fastest; with a
    dead time, linear points pi/(8 delay) apart are added up to where |L|
    stays below 0.01, so that the dead time's phase turns less than 22.5
    deg between neighbours (which the stability count by the argument
    principle relies on).

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles, complex. [1/s]
    k : float
        Gain of the factored form.
    delay : float
        Dead time. [s]
    per_decade : int
        Points per decade of the logarithmic grid. [-]

    Returns
    -------
    tuple of numpy.ndarray
        Increasing frequencies [rad/s] and L there (complex).
    """
    low, high = _corners(z, p, delay)
    lo = math.log10(low) - 4.0
    hi = math.log10(high) + 3.0
    count = int((hi - lo) * per_decade) + 1
    w = np.empty(count)
    _log_grid(lo, hi, count, w)
    lw = np.empty(count, np.complex128)
    last = -1
    for i in range(count):
        lw[i] = loop_value(z, p, k, delay, w[i])
        if abs(lw[i]) >= 0.01:
            last = i
    if delay <= 0 or last < 0:
        return w, lw
    w_cut = w[min(last + 1, count - 1)]
    spacing = math.pi / (8.0 * delay)
    extra = int(min(w_cut / spacing, 20000.0))
    if extra < 2:
        return w, lw
    # the linear points, merged into the logarithmic ones (a frequency on both kept once)
    lin_step = (w_cut - spacing) / (extra - 1)
    out_w = np.empty(count + extra)
    out_l = np.empty(count + extra, np.complex128)
    i = j = used = 0
    previous = -1.0
    while i < count or j < extra:
        if j >= extra or (i < count and w[i] <= (w_cut if j == extra - 1 else j * lin_step + spacing)):
            x, v = w[i], lw[i]
            i += 1
        else:
            x = w_cut if j == extra - 1 else j * lin_step + spacing
            v = loop_value(z, p, k, delay, x)
            j += 1
        if x != previous:
            out_w[used] = x
            out_l[used] = v
            used += 1
            previous = x
    return out_w[:used], out_l[:used]


@_jit
def bode_samples(z: np.ndarray, p: np.ndarray, k: float, delay: float, points: int) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies and L(jw) of the automatic Bode grid.

    A logarithmic grid a decade beyond the slowest and the fastest corner
    (pole, zero or 1/delay), rounded out to whole decades, with nine extra
    points across each lightly damped pair (damping below 0.3), wn (1 +
    zeta x) for x from -3 to 3, so that its peak is drawn; at most a
    quarter of the points are extra.

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles, complex. [1/s]
    k : float
        Gain of the factored form.
    delay : float
        Dead time. [s]
    points : int
        Number of points, >= 10. [-]

    Returns
    -------
    tuple of numpy.ndarray
        Increasing frequencies [rad/s] and L there (complex).
    """
    low, high = _corners(z, p, delay)
    lo = math.floor(math.log10(low)) - 1.0
    hi = math.ceil(math.log10(high)) + 1.0
    roots = np.concatenate((z, p))
    room = points // 4
    extra = np.empty(9 * len(roots))
    used = 0
    for r in roots:
        wn = abs(r)
        if wn > 0 and abs(r.imag) > 0 and -r.real / wn < 0.3:
            zeta = max(-r.real / wn, 1e-4)
            for i in range(9):
                x = wn * (1.0 + zeta * (-3.0 + 0.75 * i))
                if x > 0 and used < room:
                    extra[used] = x
                    used += 1
    count = points - used
    w = np.empty(points)
    _log_grid(lo, hi, count, w)
    w[count:] = extra[:used]
    w.sort()
    return w, responses_at(z, p, k, delay, w)
