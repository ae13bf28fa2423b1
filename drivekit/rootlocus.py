"""Root locus of a loop: closed-loop poles of 1 + K L(s) = 0 as the loop gain K varies.

The given open loop L is taken as K = 1 (the present tuning). A dead time has
no finite root locus; it is replaced by a Pade approximation whose order is a
parameter, and the result says so.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from typing import Any

import numpy as np
import scipy.optimize

from .loop import Loop, as_linear
from .responses import pade_coefficients, zpk
from .units import ParameterError

__all__ = ["BreakPoint", "ClosedLoopPole", "RootLocus", "root_locus"]


@dataclasses.dataclass(frozen=True)
class BreakPoint:
    """A point where branches meet on the real axis and leave it (break-away) or join it (break-in).

    Attributes
    ----------
    s : float
        Location on the real axis. [1/s]
    gain : float
        Loop-gain factor K there. [-]
    """

    s: float
    gain: float


@dataclasses.dataclass(frozen=True)
class ClosedLoopPole:
    """A closed-loop pole at the present gain.

    Attributes
    ----------
    pole : complex
        Location. [1/s]
    damping : float
        Damping ratio -Re(p)/|p|. [-]
    natural_frequency : float
        |p|. [rad/s]
    """

    pole: complex
    damping: float
    natural_frequency: float


@dataclasses.dataclass(frozen=True, eq=False)
class RootLocus:
    """Branches of the root locus and its landmarks.

    Attributes
    ----------
    gains : numpy.ndarray
        Loop-gain factors K, increasing, starting at 0 (K = 1 is the given loop). [-]
    branches : numpy.ndarray
        Closed-loop poles, shape (len(gains), n); column j is one branch followed
        continuously. [1/s]
    open_loop_poles, open_loop_zeros : numpy.ndarray
        Of the (Pade-approximated) open loop. [1/s]
    centroid : float
        Where the asymptotes meet (nan without asymptotes). [1/s]
    asymptote_angles : tuple of float
        Angles of the asymptotes. [deg]
    break_points : tuple of BreakPoint
        Break-away and break-in points on the locus.
    poles : tuple of ClosedLoopPole
        Closed-loop poles at K = 1, slowest first.
    crossing_gains : tuple of float
        Gains where a branch crosses the imaginary axis. [-]
    crossing_frequencies : tuple of float
        Frequencies of those crossings. [rad/s]
    ultimate_gain : float
        Smallest gain factor at which a branch reaches the imaginary axis (nan if none). [-]
    pade_order : int
        Order of the Pade approximation used for the dead time (0: none needed). [-]
    note : str
        Plain words about approximations.
    """

    gains: np.ndarray
    branches: np.ndarray
    open_loop_poles: np.ndarray
    open_loop_zeros: np.ndarray
    centroid: float
    asymptote_angles: tuple[float, ...]
    break_points: tuple[BreakPoint, ...]
    poles: tuple[ClosedLoopPole, ...]
    crossing_gains: tuple[float, ...]
    crossing_frequencies: tuple[float, ...]
    ultimate_gain: float
    pade_order: int
    note: str

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (quantity, value, unit) for display."""
        rows = [
            ("ultimate gain factor", f"{self.ultimate_gain:.4g}", "-"),
            ("asymptote centroid", f"{self.centroid:.4g}", "1/s"),
            ("asymptote angles", ", ".join(f"{a:.0f}" for a in self.asymptote_angles), "deg"),
        ]
        rows += [(f"break point (K = {b.gain:.3g})", f"{b.s:.4g}", "1/s") for b in self.break_points]
        for p in self.poles:
            rows.append(
                (
                    "closed-loop pole at K = 1",
                    f"{p.pole.real:.4g}{p.pole.imag:+.4g}j (zeta {p.damping:.3g}, wn {p.natural_frequency:.4g})",
                    "1/s",
                )
            )
        rows.append(("note", self.note, ""))
        return rows


def _poly(roots: np.ndarray) -> list[complex]:
    """Monic polynomial coefficients (highest first) from its roots, in plain Python arithmetic."""
    c = [1.0 + 0j]
    for r in roots.tolist():
        c = [a - r * b for a, b in zip([*c, 0j], [0j, *c], strict=True)]
    return c


def _der(c: np.ndarray) -> np.ndarray:
    """Coefficients of the derivative (highest power first)."""
    n = len(c) - 1
    return c[:-1] * np.arange(n, 0, -1) if n > 0 else np.zeros(1)


def _sub(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """a - b for coefficient arrays of any lengths (highest power first)."""
    n = max(len(a), len(b))
    out = np.zeros(n)
    out[n - len(a) :] = a
    out[n - len(b) :] -= b
    return out


def _roots(c: np.ndarray) -> np.ndarray:
    """Roots of a real polynomial (highest power first) as eigenvalues of its companion matrix, like numpy.roots."""
    nz = np.flatnonzero(c)
    if not len(nz):
        return np.zeros(0, complex)
    zero = len(c) - 1 - nz[-1]
    c = c[nz[0] : nz[-1] + 1]
    n = len(c) - 1
    if n < 1:
        return np.zeros(zero, complex)
    comp = np.zeros((n, n))
    comp[0] = -c[1:] / c[0]
    comp.flat[n :: n + 1] = 1.0
    r = np.linalg.eigvals(comp).astype(complex)
    return np.concatenate([r, np.zeros(zero, complex)]) if zero else r


def _value(c: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Polynomial (highest power first) at the points x, by Horner's rule (plain Python for a few points)."""
    if np.size(x) <= 16:
        coeffs = c.tolist()
        out = []
        for v in np.ravel(x).tolist():
            y = coeffs[0]
            for a in coeffs[1:]:
                y = y * v + a
            out.append(y)
        return np.array(out, dtype=np.result_type(c, x)).reshape(np.shape(x))
    y = np.full(np.shape(x), c[0], dtype=np.result_type(c, x))
    for a in c[1:].tolist():
        y *= x
        y += a
    return y


def _rational(L: Any, pade_order: int) -> tuple[np.ndarray, np.ndarray, int, np.ndarray, np.ndarray]:
    """Numerator, denominator (monic), Pade order used, open-loop zeros and poles."""
    model = as_linear(L.open_loop if isinstance(L, Loop) else L)
    z, p, k = zpk(model)
    used = 0
    if model.delay > 0:
        zp, pp = _pade_roots(pade_order)
        z = np.concatenate([z, zp / model.delay])
        p = np.concatenate([p, pp / model.delay])
        k = k * (-1.0) ** pade_order
        used = pade_order
    num = k * np.array(_poly(z)).real
    den = np.array(_poly(p)).real
    return num, den, used, z, p


@functools.lru_cache(maxsize=16)
def _pade_roots(order: int) -> tuple[np.ndarray, np.ndarray]:
    """Zeros and poles of the Pade approximation of e^{-s} (unit dead time); scale by 1/delay."""
    _, pd = pade_coefficients(1.0, order)
    poles = np.roots(pd)
    # the numerator is the denominator at -s: zeros mirror the poles
    return -poles, poles


def _roots_batch(num: np.ndarray, den: np.ndarray, gains: np.ndarray) -> np.ndarray:
    """Roots of den + K num for every K, by eigenvalues of stacked companion matrices."""
    n = len(den) - 1
    nump = np.concatenate([np.zeros(len(den) - len(num)), num])
    coeffs = den[None, :] + gains[:, None] * nump[None, :]
    coeffs = coeffs / coeffs[:, :1]
    comp = np.zeros((len(gains), n, n))
    comp[:, 0, :] = -coeffs[:, 1:]
    if n > 1:
        comp[:, np.arange(1, n), np.arange(n - 1)] = 1.0
    return np.linalg.eigvals(comp)


def _match(prev: np.ndarray, new: np.ndarray, ahead: np.ndarray | None = None) -> np.ndarray:
    """Column order of each row of ``new`` that follows the same row of ``prev`` (nearest, no root twice).

    With ``ahead`` (a predicted position for each root of ``prev``) a root
    may also be matched near its prediction; the nearer of the two counts.
    """
    cost = np.abs(prev[:, :, None] - new[:, None, :])
    if ahead is not None:
        cost = np.fmin(cost, np.abs(ahead[:, :, None] - new[:, None, :]))
    match = np.argmin(cost, axis=2)
    srt = np.sort(match, axis=1)
    for i in np.nonzero(np.any(srt[:, 1:] == srt[:, :-1], axis=1))[0]:
        match[i] = scipy.optimize.linear_sum_assignment(cost[i])[1]
    return match


def _follow(roots: np.ndarray, guess: np.ndarray | None = None) -> np.ndarray:
    """Column order (G, n) of each gain's roots so that each column moves continuously with the gain.

    Each gain's roots are matched to the next gain's nearest roots, for all
    gains at once, where ``guess`` (the roots predicted at the next gain from
    each row, same column order as ``roots``) says where to look; where two
    roots claim the same neighbour the optimal assignment decides. The
    matchings are then chained from the first gain.
    """
    G, n = roots.shape
    if G < 2 or n < 2:
        order = np.empty((G, n), dtype=int)
        order[:] = np.arange(n)
        return order
    ahead = None if guess is None else np.where(np.isfinite(guess[:-1]), guess[:-1], roots[:-1])
    match = _match(roots[:-1], roots[1:], ahead)
    cur = list(range(n))
    rows = [cur]
    for row in match.tolist():
        cur = [row[j] for j in cur]
        rows.append(cur)
    return np.array(rows, dtype=int)


def _slopes(num: np.ndarray, den: np.ndarray, roots: np.ndarray, gains: np.ndarray) -> np.ndarray:
    """Branch slopes ds/dK = -N(s) / (D'(s) + K N'(s)) at the roots (Ogata 5th ed. §6-2)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return -_value(num, roots) / (_value(_der(den), roots) + gains[:, None] * _value(_der(num), roots))


_EXACT_STRIDE = 12  # closed-loop poles by eigenvalues at every 12th gain, the others by Newton from there
_NEWTON_STEPS = 3
_MORE_STEPS = 3  # where the first steps were not enough
_HARD_REACH = 1  # grid gains on each side of a break point solved by eigenvalues


def _newton(z: np.ndarray, coeffs: np.ndarray, steps: int) -> tuple[np.ndarray, np.ndarray]:
    """Newton steps on monic polynomials (rows of coeffs) at every root guess of the same row; roots and last step."""
    # coefficient columns as complex (rows, 1) blocks: no real-to-complex cast inside the loop
    cols = np.ascontiguousarray(coeffs.T[1:, :, None], dtype=complex)
    step = z
    for _ in range(steps):
        p = z + cols[0]
        if len(cols) > 1:
            dp = z + p  # Horner's derivative after the first two coefficients
            p *= z
            p += cols[1]
            for c in cols[2:]:
                dp *= z
                dp += p
                p *= z
                p += c
        else:
            dp = np.ones_like(z)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = p / dp
        z = z - step
    return z, step


@functools.lru_cache(maxsize=16)
def _pairs(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Index pairs i < j of n roots."""
    first, second = np.triu_indices(n, 1)
    return first, second


def _converged(z: np.ndarray, step: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rows whose Newton iterates are at round-off, and their size 1 + max |root|.

    Done when the last step is below 1e-10 of the size, or when the error
    left after it, at most about (n - 1) step**2 / gap near simple roots
    (the quadratic term of Newton's method, |p''/(2 p')| <= sum 1/|r_i - r_j|
    <= (n - 1)/gap with gap the smallest distance between roots), is below
    1e-12 of the size.
    """
    n = z.shape[1]
    with np.errstate(invalid="ignore"):
        scale = 1.0 + np.max(np.abs(z), axis=1)
        last = np.max(np.abs(step), axis=1)
        done = last <= 1e-10 * scale
        rest = np.nonzero(~done & np.isfinite(scale) & (last < 1e-4 * scale))[0]
        if len(rest):
            first, second = _pairs(n)
            zr = z[rest]
            gap = np.min(np.abs(zr[:, first] - zr[:, second]), axis=1) if n > 1 else np.full(len(rest), np.inf)
            done[rest] = (n - 1) * last[rest] ** 2 <= 1e-12 * scale[rest] * gap
    return done, scale


def _locus_roots(num: np.ndarray, den: np.ndarray, gains: np.ndarray, hard: Any = ()) -> np.ndarray:
    """Continuous branches of den + K num = 0 for sorted gains K.

    Eigenvalues of the companion matrices at every ``_EXACT_STRIDE``-th gain
    and at the gains nearest each of the ``hard`` gains (break points, where
    branches meet and Newton's method converges slowly); in between, the
    branch interpolated in ln K (cubic Hermite with the branch slopes, Ogata
    5th ed. §6-2 for dK/ds) and polished by Newton steps on the polynomial.
    A gain whose polished roots fail a check (Newton step not at round-off,
    or the root sum off the coefficient by Vieta's formula, as when two
    guesses went to one root and left another out) is solved by eigenvalues
    as well.
    """
    G = len(gains)
    if G <= 3 * _EXACT_STRIDE:
        roots = _roots_batch(num, den, gains)
        return np.take_along_axis(roots, _follow(roots), axis=1)
    is_exact = np.zeros(G, bool)
    is_exact[::_EXACT_STRIDE] = True
    is_exact[-1] = True
    for i in np.searchsorted(gains, np.asarray(hard, float)).tolist():
        is_exact[max(0, i - _HARD_REACH) : i + _HARD_REACH + 1] = True
    exact = np.nonzero(is_exact)[0]
    rest = np.nonzero(~is_exact)[0]
    ke = gains[exact]
    roots = _roots_batch(num, den, ke)
    slope = _slopes(num, den, roots, ke)
    # first-order prediction of each root at the next exact gain (in ln K above K = 0) guides the matching
    ahead = np.empty_like(roots)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        grow = np.where(ke[:-1] > 0, ke[:-1] * np.log(ke[1:] / np.where(ke[:-1] > 0, ke[:-1], 1.0)), ke[1:])
        ahead[:-1] = roots[:-1] + grow[:, None] * slope[:-1]
    ahead[-1] = roots[-1]
    order = _follow(roots, ahead)
    coarse = np.take_along_axis(roots, order, axis=1)
    slope = np.take_along_axis(slope, order, axis=1)
    out = np.empty((G, coarse.shape[1]), complex)
    out[exact] = coarse
    j = np.searchsorted(exact, rest) - 1
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # cubic Hermite in u = ln K (slopes K ds/dK) where the interval starts above K = 0, else in K;
        # its coefficients in t = (u - ua)/(ub - ua) per interval between exact gains, then each gain's cubic
        logk = ke[:-1] > 0
        ue = np.log(np.where(ke > 0, ke, 1.0))
        ua = np.where(logk, ue[:-1], ke[:-1])
        width = np.where(logk, ue[1:], ke[1:]) - ua
        scale_a = np.where(logk, ke[:-1], 1.0)[:, None] * width[:, None]
        scale_b = np.where(logk, ke[1:], 1.0)[:, None] * width[:, None]
        sa, sb = slope[:-1] * scale_a, slope[1:] * scale_b
        za, dz = coarse[:-1], coarse[1:] - coarse[:-1]
        c2 = 3 * dz - 2 * sa - sb
        c3 = sa + sb - 2 * dz
        gk = gains[rest]
        x = np.where(logk[j], np.log(np.where(gk > 0, gk, 1.0)), gk)
        t = ((x - ua[j]) / width[j])[:, None]
        z = za[j] + t * (sa[j] + t * (c2[j] + t * c3[j]))
        z = np.where(np.isfinite(z), z, za[j] + t * dz[j])
    nump = np.concatenate([np.zeros(len(den) - len(num)), num])
    coeffs = den[None, :] + gains[rest, None] * nump[None, :]
    coeffs = coeffs / coeffs[:, :1]
    z, step = _newton(z, coeffs, _NEWTON_STEPS)
    done, scale = _converged(z, step)
    slow = np.nonzero(~done)[0]
    if len(slow):  # a few more steps where the guess was poor
        z[slow], step[slow] = _newton(z[slow], coeffs[slow], _MORE_STEPS)
        done[slow], scale[slow] = _converged(z[slow], step[slow])
    # two guesses drawn to one root leave another root out: the roots' sum is then off by their distance
    with np.errstate(invalid="ignore"):
        bad = ~done | ~(np.abs(np.sum(z, axis=1) + coeffs[:, 1]) <= 1e-11 * scale * z.shape[1])
    if np.any(bad):
        redo = _roots_batch(num, den, gains[rest[bad]])
        # order the recomputed roots like their interpolated guess
        guess = np.where(np.isfinite(z[bad]), z[bad], 0.0)
        z[bad] = np.take_along_axis(redo, _match(guess, redo), axis=1)
    out[rest] = z
    return out


def _imaginary_crossings(num: np.ndarray, den: np.ndarray) -> tuple[list[float], list[float]]:
    """Gains K > 0 and frequencies w >= 0 where den(jw) + K num(jw) = 0.

    With P(jw) = Pr(w) + j Pi(w) (even powers in Pr, odd in Pi), K is real
    where Im(D(jw) conj N(jw)) = Di Nr - Dr Ni = 0; this is odd in w, so its
    roots other than w = 0 are those of a polynomial in x = w**2.
    """

    def parts(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        # coefficients in x = w**2 of Pr(w) and of Pi(w)/w, highest first: (jw)**p = j**p w**p
        deg = len(c) - 1
        signed = [a if (deg - i) % 4 < 2 else -a for i, a in enumerate(c.tolist())]
        start = deg % 2  # index of the highest even power
        return np.array(signed[start::2]), np.array(signed[1 - start :: 2])

    dr, di = parts(den)
    nr, ni = parts(num)
    q = _sub(
        np.convolve(di, nr) if len(di) and len(nr) else np.zeros(1), np.convolve(dr, ni) if len(ni) else np.zeros(1)
    )
    qc, dq = q.tolist(), _der(q).tolist()
    freqs = [0.0]
    for r in _roots(q).tolist():
        if abs(r.imag) <= 1e-7 * max(1.0, abs(r)) and r.real > 0:
            # one Newton step on q in x polishes the eigenvalue root
            x, slope = r.real, _horner(dq, r.real)
            fix = _horner(qc, x) / slope if slope != 0 else math.nan
            if math.isfinite(fix) and abs(fix) < 1e-6 * x:
                x -= fix
            freqs.append(math.sqrt(x))
    nc, dc = num.tolist(), den.tolist()
    found = []
    for w in freqs:
        s = 1j * w
        nv = _horner(nc, s)
        if abs(nv) >= 1e-300:
            kk = -_horner(dc, s) / nv
            if kk.real > 0 and abs(kk.imag) <= 1e-6 * abs(kk):
                found.append((kk.real, w))
    found.sort()
    return [k for k, _ in found], [w for _, w in found]


def _horner(coeffs: list[float], x: Any) -> Any:
    """Polynomial (coefficients highest first) at one point x, by Horner's rule in plain arithmetic."""
    y = coeffs[0]
    for a in coeffs[1:]:
        y = y * x + a
    return y


def _break_points(num: np.ndarray, den: np.ndarray) -> list[BreakPoint]:
    """Real roots of N D' - D N' = 0 with a real positive gain K = -D/N (on the locus)."""
    nc, dc = num.tolist(), den.tolist()
    found = []
    for r in _roots(_sub(np.convolve(num, _der(den)), np.convolve(den, _der(num)))).tolist():
        if abs(r.imag) <= 1e-7 * max(1.0, abs(r)):
            nv = _horner(nc, r.real)
            if nv != 0:
                kk = -_horner(dc, r.real) / nv
                if kk > 0:
                    found.append((r.real, kk))
    return [BreakPoint(a, b) for a, b in sorted(found)]


def root_locus(L: Any, gains: Any = None, pade_order: int = 3, points: int = 150) -> RootLocus:
    """Root locus of unity negative feedback around K L(s), K from 0 up.

    Parameters
    ----------
    L : LinearModel, Loop or python-control LTI
        Open loop at the present tuning (K = 1).
    gains : array, optional
        Gain factors K >= 0; chosen automatically when omitted. [-]
    pade_order : int
        Order of the Pade approximation of a dead time. [-]
    points : int
        Number of gains of the automatic range. [-]

    Returns
    -------
    RootLocus

    Notes
    -----
    Asymptote centroid (sum p - sum z)/(n - m) and angles (2q + 1) 180/(n - m);
    break points from dK/ds = 0; imaginary-axis crossings from
    Im(D(jw) conj N(jw)) = 0 (Ogata, *Modern Control Engineering*, 5th ed.,
    §6-2). The automatic range runs from 1e-3 of the smallest landmark gain
    (present gain, crossings, break points) to 100 times the largest.
    Every branch point is a root of D(s) + K N(s) to round-off: eigenvalues
    of the companion matrix at every 12th gain and beside the break points,
    Newton-polished interpolation in between, checked by the step size and
    the root sum (Vieta), with eigenvalues again where a check fails.

    Examples
    --------
    >>> import control
    >>> rl = root_locus(control.tf([1.0], [1.0, 1.0, 0.0]))
    >>> [round(b.s, 12) for b in rl.break_points], round(rl.break_points[0].gain, 12)
    ([-0.5], 0.25)
    """
    num, den, used, z_ol, p_ol = _rational(L, pade_order)
    lead = np.flatnonzero(num)
    n, m = len(den) - 1, (len(num) - 1 - int(lead[0]) if len(lead) else -1)
    if n < 1:
        raise ParameterError("`L`: has no poles, so there is no root locus")
    cross_k, cross_w = _imaginary_crossings(num, den)
    breaks = _break_points(num, den)
    if gains is None:
        marks = [1.0, *cross_k, *(b.gain for b in breaks)]
        k = np.logspace(math.log10(min(marks)) - 3, math.log10(max(marks)) + 2, points)
        k = np.concatenate([[0.0], k, marks])
        k.sort()
        k = k[np.concatenate([[True], k[1:] != k[:-1]])]
    else:
        k = np.asarray(gains, dtype=float)
        if k.ndim != 1 or np.any(k < 0) or not np.all(np.isfinite(k)):
            raise ParameterError("`gains`: expected a 1-D array of finite gain factors >= 0")
        k = np.sort(k)
    branches = _locus_roots(num, den, k, [b.gain for b in breaks])
    q = n - m
    centroid = float((np.sum(p_ol).real - np.sum(z_ol).real) / q) if q > 0 else math.nan
    angles = tuple(float((2 * i + 1) * 180.0 / q) for i in range(q)) if q > 0 else ()
    at_one = np.nonzero(k == 1.0)[0]
    now = branches[at_one[0]] if len(at_one) else _roots_batch(num, den, np.array([1.0]))[0]
    now = now[np.lexsort((np.abs(now.imag), np.abs(now)))]
    poles = tuple(
        ClosedLoopPole(complex(x), float(-x.real / abs(x)) if abs(x) > 0 else 1.0, float(abs(x)))
        for x in now
        if x.imag >= -1e-12 * max(1.0, abs(x))
    )
    note = f"dead time replaced by a Pade approximation of order {used}" if used else "exact (no dead time)"
    ult = cross_k[0] if cross_k else math.nan
    return RootLocus(
        k, branches, p_ol, z_ol, centroid, angles, tuple(breaks), poles, tuple(cross_k), tuple(cross_w), ult, used, note
    )
