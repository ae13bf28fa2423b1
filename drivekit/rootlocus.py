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

from .locustrace import trace_branches
from .loop import Loop, as_linear
from .polyroots import polynomial_from_roots, polynomial_roots
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
    num = k * polynomial_from_roots(z)
    den = polynomial_from_roots(p)
    return num, den, used, z, p


@functools.lru_cache(maxsize=16)
def _pade_roots(order: int) -> tuple[np.ndarray, np.ndarray]:
    """Zeros and poles of the Pade approximation of e^{-s} (unit dead time); scale by 1/delay."""
    _, pd = pade_coefficients(1.0, order)
    poles = np.roots(pd)
    # the numerator is the denominator at -s: zeros mirror the poles
    return -poles, poles


def _padded(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """N(s) with leading zeros to the length of D(s), so that D + K N is a coefficient sum."""
    return np.concatenate([np.zeros(len(den) - len(num)), num])


def _closed_loop_roots(num: np.ndarray, den: np.ndarray, k: float) -> np.ndarray:
    """The n roots of D + K N (NaN for those lost where the degree drops). [1/s]"""
    roots = polynomial_roots(den + k * _padded(num, den))
    return np.concatenate([roots, np.full(len(den) - 1 - len(roots), np.nan + 0j)])


def _locus_roots(
    num: np.ndarray, den: np.ndarray, gains: np.ndarray, breaks: Any = (), poles: np.ndarray | None = None
) -> np.ndarray:
    """Continuous branches of den + K num = 0 for sorted gains K.

    Followed gain by gain from the roots at the first gain (the open-loop
    ``poles`` when it is 0 and they are given, else the roots of D + K N
    there) by the predictor-corrector in
    :mod:`drivekit.locustrace`, with the double roots at the ``breaks``
    (:class:`BreakPoint`) set where they are.
    """
    if poles is not None and gains[0] == 0.0:
        start = np.ascontiguousarray(poles, complex)
    else:
        start = np.ascontiguousarray(_closed_loop_roots(num, den, float(gains[0])), complex)
    order = sorted(breaks, key=lambda b: b.gain)
    at = np.array([b.gain for b in order], dtype=float)
    spots = np.array([b.s for b in order], dtype=float)
    return trace_branches(den, _padded(num, den), gains, start, at, spots)


def _crossing_polynomial(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """Im(D(jw) conj N(jw)) / w as a polynomial in x = w**2 (highest power first).

    With P(jw) = Pr(w) + j Pi(w) (even powers in Pr, odd in Pi), K = -D/N is
    real where Di Nr - Dr Ni = 0; this is odd in w, so its roots other than
    w = 0 are those of a polynomial in x = w**2.
    """

    def parts(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        # coefficients in x = w**2 of Pr(w) and of Pi(w)/w, highest first: (jw)**p = j**p w**p
        deg = len(c) - 1
        signed = [a if (deg - i) % 4 < 2 else -a for i, a in enumerate(c.tolist())]
        start = deg % 2  # index of the highest even power
        return np.array(signed[start::2]), np.array(signed[1 - start :: 2])

    dr, di = parts(den)
    nr, ni = parts(num)
    return _sub(
        np.convolve(di, nr) if len(di) and len(nr) else np.zeros(1), np.convolve(dr, ni) if len(ni) else np.zeros(1)
    )


def _imaginary_crossings(
    num: np.ndarray, den: np.ndarray, q: np.ndarray, q_roots: np.ndarray
) -> tuple[list[float], list[float]]:
    """Gains K > 0 and frequencies w >= 0 where den(jw) + K num(jw) = 0, from the crossing polynomial q and its roots.

    Parameters
    ----------
    num, den : numpy.ndarray
        N(s) and D(s), highest power first. [-]
    q, q_roots : numpy.ndarray
        :func:`_crossing_polynomial` and its roots. [-], [(rad/s)**2]
    """
    qc, dq = q.tolist(), _der(q).tolist()
    freqs = [0.0]
    for r in q_roots.tolist():
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


def _break_polynomial(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """N D' - D N', zero where dK/ds = 0 on K = -D/N (highest power first)."""
    return _sub(np.convolve(num, _der(den)), np.convolve(den, _der(num)))


def _break_points(num: np.ndarray, den: np.ndarray, b: np.ndarray, b_roots: np.ndarray) -> list[BreakPoint]:
    """Real roots of the break polynomial b (polished by a Newton step) with a real positive gain K = -D/N."""
    nc, dc, bc, db = num.tolist(), den.tolist(), b.tolist(), _der(b).tolist()
    found = []
    for r in b_roots.tolist():
        if abs(r.imag) <= 1e-7 * max(1.0, abs(r)):
            x, slope = r.real, _horner(db, r.real)
            fix = _horner(bc, x) / slope if slope != 0 else math.nan
            if math.isfinite(fix) and abs(fix) < 1e-6 * max(1.0, abs(x)):
                x -= fix
            nv = _horner(nc, x)
            if nv != 0:
                kk = -_horner(dc, x) / nv
                if kk > 0:
                    found.append((x, kk))
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
    Every branch point is a root of D(s) + K N(s) to round-off: each branch
    is followed from the open-loop poles gain by gain, predicted from its
    last two points and slopes (or a second-order Taylor step) and corrected
    by Newton's method, a step taken only when every root converges near its
    own prediction and the roots' sum agrees with Vieta's formula, else
    split; the double root is set at each break point and left along
    +-90 deg; eigenvalues of the companion matrix decide where splitting does
    not (:mod:`drivekit.locustrace`).

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
    cross_poly, break_poly = _crossing_polynomial(num, den), _break_polynomial(num, den)
    cross_k, cross_w = _imaginary_crossings(num, den, cross_poly, polynomial_roots(cross_poly))
    breaks = _break_points(num, den, break_poly, polynomial_roots(break_poly))
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
    branches = _locus_roots(num, den, k, breaks, p_ol)
    q = n - m
    centroid = (sum(p_ol.tolist()).real - sum(z_ol.tolist()).real) / q if q > 0 else math.nan
    angles = tuple((2 * i + 1) * 180.0 / q for i in range(q)) if q > 0 else ()
    at_one = int(np.searchsorted(k, 1.0))
    now = branches[at_one] if at_one < len(k) and k[at_one] == 1.0 else _closed_loop_roots(num, den, 1.0)
    # slowest first; of a complex pair, the upper pole only
    poles = tuple(
        ClosedLoopPole(x, -x.real / abs(x) if abs(x) > 0 else 1.0, abs(x))
        for x in sorted(now.tolist(), key=lambda x: (abs(x), abs(x.imag)))
        if x.imag >= -1e-12 * max(1.0, abs(x))
    )
    note = f"dead time replaced by a Pade approximation of order {used}" if used else "exact (no dead time)"
    ult = cross_k[0] if cross_k else math.nan
    return RootLocus(
        k, branches, p_ol, z_ol, centroid, angles, tuple(breaks), poles, tuple(cross_k), tuple(cross_w), ult, used, note
    )
