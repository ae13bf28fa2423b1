"""Root locus of a loop: closed-loop poles of 1 + K L(s) = 0 as the loop gain K varies.

The given open loop L is taken as K = 1 (the present tuning). A dead time has
no finite root locus; it is replaced by a Pade approximation whose order is a
parameter, and the result says so.
"""

from __future__ import annotations

import dataclasses
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


def _rational(L: Any, pade_order: int) -> tuple[np.ndarray, np.ndarray, int]:
    model = as_linear(L.open_loop if isinstance(L, Loop) else L)
    z, p, k = zpk(model)
    num = k * np.real(np.poly(z)) if len(z) else np.array([k])
    den = np.real(np.poly(p)) if len(p) else np.array([1.0])
    used = 0
    if model.delay > 0:
        pn, pd = pade_coefficients(model.delay, pade_order)
        num, den, used = np.polymul(num, pn), np.polymul(den, pd), pade_order
    return num, den, used


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


def _follow(roots: np.ndarray) -> np.ndarray:
    """Order roots so that each column moves continuously from one gain to the next.

    Nearest neighbours between successive gains are found for all gains at
    once; where two roots claim the same neighbour the optimal assignment
    decides. The matchings are then chained from the first gain.
    """
    G, n = roots.shape
    if G < 2 or n < 2:
        return roots.copy()
    cost = np.abs(roots[:-1, :, None] - roots[1:, None, :])
    match = np.argmin(cost, axis=2)
    srt = np.sort(match, axis=1)
    clash = np.nonzero(np.any(srt[:, 1:] == srt[:, :-1], axis=1))[0]
    for i in clash:
        match[i] = scipy.optimize.linear_sum_assignment(cost[i])[1]
    order = np.empty((G, n), dtype=int)
    cur = list(range(n))
    order[0] = cur
    for i, row in enumerate(match.tolist(), start=1):
        cur = [row[j] for j in cur]
        order[i] = cur
    return np.take_along_axis(roots, order, axis=1)


_EXACT_STRIDE = 6  # closed-loop poles by eigenvalues at every 6th gain, the others by Newton from there
_NEWTON_STEPS = 4


def _locus_roots(num: np.ndarray, den: np.ndarray, gains: np.ndarray) -> np.ndarray:
    """Continuous branches of den + K num = 0 for sorted gains K.

    Eigenvalues of the companion matrices at every ``_EXACT_STRIDE``-th gain;
    in between, the branch interpolated in K (cubic Hermite with the branch
    slopes, Ogata 5th ed. §6-2 for dK/ds) and polished by Newton steps on
    the polynomial. A gain whose polished roots fail a check (Newton step not
    at round-off, two roots merged, or the root sum off the coefficient by
    Vieta's formula) is solved by eigenvalues as well.
    """
    G = len(gains)
    if G <= 3 * _EXACT_STRIDE:
        return _follow(_roots_batch(num, den, gains))
    exact = np.unique(np.concatenate([np.arange(0, G, _EXACT_STRIDE), [G - 1]]))
    coarse = _follow(_roots_batch(num, den, gains[exact]))
    out = np.empty((G, coarse.shape[1]), complex)
    out[exact] = coarse
    rest = np.setdiff1d(np.arange(G), exact)
    j = np.searchsorted(exact, rest) - 1
    ka, kb = gains[exact[j]], gains[exact[j + 1]]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(kb > ka, (gains[rest] - ka) / (kb - ka), 0.0)
    # cubic Hermite in K with the branch slopes ds/dK = -N(s) / (D'(s) + K N'(s)) at the exact gains
    ke = gains[exact][:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = -np.polyval(num, coarse) / (
            np.polyval(np.polyder(den), coarse) + ke * np.polyval(np.polyder(num), coarse)
        )
    t = frac[:, None]
    width = (kb - ka)[:, None]
    z = (
        (2 * t**3 - 3 * t**2 + 1) * coarse[j]
        + (t**3 - 2 * t**2 + t) * width * slope[j]
        + (-2 * t**3 + 3 * t**2) * coarse[j + 1]
        + (t**3 - t**2) * width * slope[j + 1]
    )
    z = np.where(np.isfinite(z), z, coarse[j])
    nump = np.concatenate([np.zeros(len(den) - len(num)), num])
    coeffs = den[None, :] + gains[rest, None] * nump[None, :]
    coeffs = coeffs / coeffs[:, :1]
    step = np.zeros_like(z)
    for _ in range(_NEWTON_STEPS):
        p = np.ones_like(z)
        dp = np.zeros_like(z)
        for c in coeffs[:, 1:].T:
            dp = dp * z + p
            p = p * z + c[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            step = p / dp
        z = z - step
    with np.errstate(invalid="ignore"):
        scale = 1.0 + np.max(np.abs(z), axis=1)
    gap = np.where(np.eye(z.shape[1], dtype=bool)[None], np.inf, np.abs(z[:, :, None] - z[:, None, :]))
    bad = (
        ~np.all(np.isfinite(z), axis=1)
        | (np.max(np.abs(step), axis=1) > 1e-10 * scale)
        | (np.min(gap, axis=(1, 2)) < 1e-6 * scale)
        | (np.abs(np.sum(z, axis=1) + coeffs[:, 1]) > 1e-9 * scale * z.shape[1])
    )
    if np.any(bad):
        redo = _roots_batch(num, den, gains[rest[bad]])
        # order the recomputed roots like their interpolated guess
        for r, guess in zip(np.nonzero(bad)[0], redo, strict=True):
            col = scipy.optimize.linear_sum_assignment(np.abs(z[r][:, None] - guess[None, :]))[1]
            z[r] = guess[col]
    out[rest] = z
    return out


def _imaginary_crossings(num: np.ndarray, den: np.ndarray) -> tuple[list[float], list[float]]:
    """Gains K > 0 and frequencies w >= 0 where den(jw) + K num(jw) = 0."""

    def on_axis(c: np.ndarray) -> np.ndarray:
        deg = len(c) - 1
        return np.array([c[i] * (1j) ** (deg - i) for i in range(len(c))])

    dw, nw = on_axis(den), on_axis(num)
    q = np.polymul(dw, np.conj(nw)).imag
    q = np.trim_zeros(q, "f")
    freqs = [0.0]
    if len(q) > 1:
        r = np.roots(q)
        freqs += [float(x.real) for x in r if abs(x.imag) <= 1e-7 * max(1.0, abs(x)) and x.real > 0]
    gains, omegas = [], []
    for w in freqs:
        nv, dv = np.polyval(num, 1j * w), np.polyval(den, 1j * w)
        if abs(nv) < 1e-300:
            continue
        kk = -dv / nv
        if kk.real > 0 and abs(kk.imag) <= 1e-6 * abs(kk):
            gains.append(float(kk.real))
            omegas.append(w)
    order = np.argsort(gains)
    return [gains[i] for i in order], [omegas[i] for i in order]


def _break_points(num: np.ndarray, den: np.ndarray) -> list[BreakPoint]:
    """Real roots of N D' - D N' = 0 with a real positive gain K = -D/N (on the locus)."""
    eq = np.polysub(np.polymul(num, np.polyder(den)), np.polymul(den, np.polyder(num)))
    eq = np.trim_zeros(eq, "f")
    if len(eq) < 2:
        return []
    out = []
    for r in np.roots(eq):
        if abs(r.imag) > 1e-7 * max(1.0, abs(r)):
            continue
        s = float(r.real)
        nv = np.polyval(num, s)
        if nv == 0:
            continue
        kk = -np.polyval(den, s) / nv
        if kk > 0:
            out.append(BreakPoint(s, float(kk)))
    return sorted(out, key=lambda b: b.s)


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

    Examples
    --------
    >>> import control
    >>> rl = root_locus(control.tf([1.0], [1.0, 1.0, 0.0]))
    >>> [round(b.s, 12) for b in rl.break_points], round(rl.break_points[0].gain, 12)
    ([-0.5], 0.25)
    """
    num, den, used = _rational(L, pade_order)
    n, m = len(den) - 1, len(np.trim_zeros(num, "f")) - 1
    if n < 1:
        raise ParameterError("`L`: has no poles, so there is no root locus")
    cross_k, cross_w = _imaginary_crossings(num, den)
    breaks = _break_points(num, den)
    if gains is None:
        marks = [1.0, *cross_k, *(b.gain for b in breaks)]
        k = np.logspace(math.log10(min(marks)) - 3, math.log10(max(marks)) + 2, points)
        k = np.unique(np.concatenate([[0.0], k, marks]))
    else:
        k = np.asarray(gains, dtype=float)
        if k.ndim != 1 or np.any(k < 0) or not np.all(np.isfinite(k)):
            raise ParameterError("`gains`: expected a 1-D array of finite gain factors >= 0")
        k = np.sort(k)
    branches = _locus_roots(num, den, k)
    p_ol = np.roots(den)
    z_ol = np.roots(np.trim_zeros(num, "f")) if m > 0 else np.zeros(0, complex)
    q = n - m
    centroid = float((np.sum(p_ol).real - np.sum(z_ol).real) / q) if q > 0 else math.nan
    angles = tuple(float((2 * i + 1) * 180.0 / q) for i in range(q)) if q > 0 else ()
    now = _roots_batch(num, den, np.array([1.0]))[0]
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
