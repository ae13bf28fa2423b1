"""Branches of a root locus followed gain by gain: a compiled predictor-corrector.

The closed-loop poles are the roots of P(s; K) = D(s) + K N(s). From the
roots at one gain, the roots at the next gain are predicted, by the cubic
through the last two points and their slopes in ln K where the branch has
that history, else by a second-order Taylor step (in ln K, or in K from
K = 0), and corrected by Newton's method on P. A step is taken only when
every root converges to round-off within its own neighbourhood (the
correction moves it less than a quarter of the distance to the nearest
other prediction) and the roots' sum agrees with Vieta's formula, so two
branches can neither swap nor merge; otherwise the step is split. At a
break point the two branches that meet are set on the double root, and
leave it along the directions of :func:`_departure`. Where splitting does
not settle a step, the roots at that gain are computed as eigenvalues of
the companion matrix, paired with the predictions and polished.

Path following of this kind: Allgower & Georg, *Introduction to Numerical
Continuation Methods*, SIAM Classics in Applied Mathematics 45, 2003,
Ch. 2 (predictor-corrector) and §6.1 (step-length control); the branch
slope ds/dK = -N(s)/P'(s) (Ogata, *Modern Control Engineering*, 5th ed.,
§6-2).
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["trace_branches"]

_MAX_NEWTON = 12  # Newton iterations per root and step
_MAX_TRIES = 8  # attempts (splits included) per grid interval before eigenvalues decide
_MAX_DEPTH = 6  # nested splits of one interval
_BASIN = 0.25  # a correction may move a root at most this share of the distance to its nearest neighbour
_TOL = 1e-13  # Newton converged: error left below this share of the size of the roots
_REACH = 3.0  # the history curve predicts up to this many of its own lengths (in ln K) from its start
_LEAVING = 1e-6  # roots that met at a break gain leave it by the square-root law up to this share of that gain
_SAME_GAIN = 1e-9  # break gains this close (relative) are one: the pairs meet at once

_jit = numba.njit(cache=True, nogil=True)


@_jit
def _abs2(z: complex) -> float:
    return z.real * z.real + z.imag * z.imag


@_jit
def _horner2(c: np.ndarray, z: complex) -> tuple[complex, complex]:
    """P(z) and P'(z) of the polynomial with coefficients c (highest first)."""
    p = c[0] + 0j
    d = 0j
    for i in range(1, len(c)):
        d = d * z + p
        p = p * z + c[i]
    return p, d


@_jit
def _horner3(c: np.ndarray, z: complex) -> tuple[complex, complex]:
    """P'(z) and P''(z)/2 of the polynomial with coefficients c (highest first)."""
    p = c[0] + 0j
    d = 0j
    h = 0j
    for i in range(1, len(c)):
        h = h * z + d
        d = d * z + p
        p = p * z + c[i]
    return d, h


@_jit
def _coefficients(den: np.ndarray, num: np.ndarray, k: float, out: np.ndarray) -> bool:
    """Coefficients of D + K N, scaled to a leading 1, into ``out``; False when the leading one vanishes."""
    lead = den[0] + k * num[0]
    if lead == 0.0 or not np.isfinite(lead):
        return False
    for i in range(len(den)):
        out[i] = (den[i] + k * num[i]) / lead
    return True


@_jit
def _predict(
    num: np.ndarray, c: np.ndarray, lead: float, z: np.ndarray, k0: float, k1: float, out: np.ndarray, w: np.ndarray
) -> None:
    """Roots at k1 from the roots z at k0: a second-order Taylor step in u = ln K (in K from K = 0).

    ``c`` holds the coefficients of D + k0 N divided by their leading one,
    ``lead``; ``w`` is scratch space of shape (12, n). Differentiating
    P(s(K), K) = 0 with P = D + K N gives P_s s' + N = 0 and
    P_ss s'^2 + 2 N_s s' + P_s s'' = 0. A root where P_s vanishes (two
    roots together) is predicted to stay.
    """
    n = len(z)
    u = np.log(k1 / k0) if k0 > 0.0 else 0.0
    h = k1 - k0
    sr, si = w[0], w[1]
    nr, ni, ndr, ndi = w[2], w[3], w[4], w[5]  # N and N'
    pr, pi, dr, di = w[6], w[7], w[8], w[9]  # P and P'
    hr, hi = w[10], w[11]  # P''/2
    for i in range(n):
        sr[i], si[i] = z[i].real, z[i].imag
        nr[i], ni[i], ndr[i], ndi[i] = num[0], 0.0, 0.0, 0.0
        pr[i], pi[i], dr[i], di[i] = c[0], 0.0, 0.0, 0.0
        hr[i], hi[i] = 0.0, 0.0
    # Horner's rule in real arithmetic, the roots side by side
    for j in range(1, len(c)):
        a, b = num[j], c[j]
        for i in range(n):
            x, y = sr[i], si[i]
            hr[i], hi[i] = hr[i] * x - hi[i] * y + dr[i], hr[i] * y + hi[i] * x + di[i]
            dr[i], di[i] = dr[i] * x - di[i] * y + pr[i], dr[i] * y + di[i] * x + pi[i]
            pr[i], pi[i] = pr[i] * x - pi[i] * y + b, pr[i] * y + pi[i] * x
            ndr[i], ndi[i] = ndr[i] * x - ndi[i] * y + nr[i], ndr[i] * y + ndi[i] * x + ni[i]
            nr[i], ni[i] = nr[i] * x - ni[i] * y + a, nr[i] * y + ni[i] * x
    for i in range(n):
        slope = complex(dr[i], di[i]) * lead
        size2 = _abs2(slope)
        if not (size2 > 0.0 and size2 < np.inf):
            out[i] = z[i]
            continue
        inv = slope.conjugate() * (-1.0 / size2)  # -1/P_s
        d1 = complex(nr[i], ni[i]) * inv
        d2 = (2.0 * complex(hr[i], hi[i]) * lead * d1 * d1 + 2.0 * complex(ndr[i], ndi[i]) * d1) * inv
        if k0 > 0.0:
            du = k0 * d1  # ds/du; d2s/du2 = du + k0**2 d2
            out[i] = z[i] + u * (du + 0.5 * u * (du + k0 * k0 * d2))
        else:
            out[i] = z[i] + h * (d1 + 0.5 * h * d2)


@_jit
def _correct(c: np.ndarray, guess: np.ndarray, out: np.ndarray, w: np.ndarray, held: np.ndarray) -> bool:
    """Newton's method on the polynomial c from each guess into ``out``; True when every root converged in its basin.

    Converged when the step is at round-off, or when the error left after
    it, about (n - 1) step**2 / gap for a simple root (gap: distance to the
    nearest other root), is below ``_TOL`` of the size of the roots. Roots
    marked in ``held`` keep their guess (a double root already known).
    ``w`` is scratch space with at least 8 rows of length n.
    """
    n = len(guess)
    sr, si, pr, pi, dr, di, gap2, quad = w[0], w[1], w[2], w[3], w[4], w[5], w[6], w[7]
    scale = 1.0
    for i in range(n):
        sr[i], si[i] = guess[i].real, guess[i].imag
        scale = max(scale, 1.0 + np.sqrt(_abs2(guess[i])))
    tiny2 = (_TOL * scale) ** 2
    m2 = max(n - 1, 1) ** 2
    for i in range(n):
        g = np.inf
        for j in range(n):
            if j != i:
                g = min(g, _abs2(guess[i] - guess[j]))
        gap2[i] = g
        quad[i] = tiny2 * g / m2  # converged when step**4 (n - 1)**2 <= (tol scale gap)**2
    active = ~held
    left = n - int(np.sum(held))
    for _ in range(_MAX_NEWTON):
        if left == 0:
            break
        for i in range(n):
            pr[i], pi[i], dr[i], di[i] = c[0], 0.0, 0.0, 0.0
        for j in range(1, len(c)):  # P and P' by Horner's rule, the roots side by side
            b = c[j]
            for i in range(n):
                x, y = sr[i], si[i]
                dr[i], di[i] = dr[i] * x - di[i] * y + pr[i], dr[i] * y + di[i] * x + pi[i]
                pr[i], pi[i] = pr[i] * x - pi[i] * y + b, pr[i] * y + pi[i] * x
        for i in range(n):
            if active[i]:
                q = dr[i] * dr[i] + di[i] * di[i]
                if not (q > 0.0 and q < np.inf):
                    return False
                # step = P / P'
                step_r = (pr[i] * dr[i] + pi[i] * di[i]) / q
                step_i = (pi[i] * dr[i] - pr[i] * di[i]) / q
                a2 = step_r * step_r + step_i * step_i
                if not a2 < np.inf:
                    return False
                sr[i] -= step_r
                si[i] -= step_i
                if a2 <= tiny2 or a2 * a2 <= quad[i]:
                    active[i] = False
                    left -= 1
    if left:
        return False
    total = 0j
    for i in range(n):
        out[i] = complex(sr[i], si[i])
        if _abs2(out[i] - guess[i]) > _BASIN * _BASIN * gap2[i]:  # each root stays near its own prediction
            return False
        total += out[i]
    # Vieta: the roots sum to minus the second coefficient (two roots found twice leave it off)
    return n == 0 or abs(total + c[1]) <= 1e-10 * scale * n


@_jit
def _slopes(num: np.ndarray, lead: float, z: np.ndarray, k: float, w: np.ndarray, out: np.ndarray) -> bool:
    """Branch slopes ds/du = -K N(s) / P_s(s) (u = ln K) at the roots z into ``out``; False if one is not finite.

    P_s / ``lead`` at the roots is read from rows 4 and 5 of ``w``, where the
    last Newton sweep of :func:`_correct` left it.
    """
    for i in range(len(z)):
        s = z[i]
        nv = num[0] + 0j
        for j in range(1, len(num)):
            nv = nv * s + num[j]
        d = complex(w[4, i], w[5, i]) * lead
        if not (_abs2(d) > 0.0 and _abs2(d) < np.inf):
            return False
        out[i] = -k * nv / d
        if not _abs2(out[i]) < np.inf:
            return False
    return True


@_jit
def _conjugate_pairs(z: np.ndarray) -> None:
    """Make the roots of the real polynomial real or exact conjugate pairs, in place.

    A root is paired with the root nearest its mirror image when that one is
    nearer than the root's own mirror image, and the pair averaged; a root
    without a partner is real, and loses the rounding left in its imaginary
    part.
    """
    n = len(z)
    done = np.zeros(n, np.bool_)
    for i in range(n):
        if done[i] or z[i].imag == 0.0:
            continue
        mirror = z[i].conjugate()
        best = _abs2(z[i] - mirror)
        j = -1
        for q in range(n):
            if q != i and not done[q]:
                dist = _abs2(z[q] - mirror)
                if dist < best:
                    best, j = dist, q
        if j >= 0:
            mean = 0.5 * (z[i] + z[j].conjugate())
            z[i] = mean
            z[j] = mean.conjugate()
            done[j] = True
        else:  # a root without a partner is real
            z[i] = z[i].real
        done[i] = True


@_jit
def _extrapolate(
    z0: np.ndarray, m0: np.ndarray, u0: float, z1: np.ndarray, m1: np.ndarray, u1: float, u2: float, out: np.ndarray
) -> bool:
    """Roots at u2 from the cubic Hermite curve through (u0, z0, slope m0) and (u1, z1, m1); False when u2 is too far.

    Third-order accurate in the step, from values the tracing has already
    computed (no further polynomial evaluation).
    """
    du = u1 - u0
    if not du > 0.0:
        return False
    t = (u2 - u0) / du
    if not (t > 1.0 and t <= _REACH):
        return False
    r = 1.0 - t
    h00 = (1.0 + 2.0 * t) * r * r
    h10 = t * r * r * du
    h01 = t * t * (3.0 - 2.0 * t)
    h11 = t * t * (t - 1.0) * du
    for i in range(len(z0)):
        out[i] = h00 * z0[i] + h10 * m0[i] + h01 * z1[i] + h11 * m1[i]
    return True


@_jit
def _pair(roots: np.ndarray, ref: np.ndarray, out: np.ndarray) -> None:
    """Roots into ``out`` in the order of ref, nearest pairs first (each root once)."""
    n = len(ref)
    used_r = np.zeros(n, np.bool_)
    used_e = np.zeros(n, np.bool_)
    for _ in range(n):
        best = np.inf
        bi, bj = -1, -1
        for i in range(n):
            if used_r[i]:
                continue
            for j in range(n):
                if not used_e[j]:
                    dist = _abs2(ref[i] - roots[j])
                    if bi < 0 or dist < best:
                        best, bi, bj = dist, i, j
        out[bi] = roots[bj]
        used_r[bi] = True
        used_e[bj] = True


@_jit
def _eigen_roots(c: np.ndarray) -> np.ndarray:
    """Roots of the polynomial c (leading coefficient 1) as eigenvalues of its companion matrix."""
    n = len(c) - 1
    comp = np.zeros((n, n), np.complex128)
    for j in range(n):
        comp[0, j] = -c[j + 1]
    for i in range(1, n):
        comp[i, i - 1] = 1.0
    return np.linalg.eigvals(comp)


@_jit
def _polish(c: np.ndarray, z: np.ndarray) -> None:
    """A few Newton steps on the polynomial c at each root of z, in place, each kept only where it lowers |P|.

    Eigenvalues of the companion matrix are accurate relative to the
    matrix, which can leave small roots of a polynomial with large
    coefficients short of round-off; the guard keeps coinciding roots,
    where Newton's method wanders, as they were.
    """
    for i in range(len(z)):
        s = z[i]
        p, d = _horner2(c, s)
        for _ in range(3):
            if not (_abs2(d) > 0.0 and _abs2(d) < np.inf):
                break
            t = s - p / d
            pt, dt = _horner2(c, t)
            if not _abs2(pt) < _abs2(p):
                break
            s, p, d = t, pt, dt
        z[i] = s


@_jit
def _split(k0: float, k1: float) -> float:
    """A gain between k0 and k1: their geometric mean above K = 0, else a sixteenth of the way."""
    if k0 > 0.0:
        return np.sqrt(k0 * k1)
    return k0 + (k1 - k0) / 16.0


@_jit
def _departure(den: np.ndarray, num: np.ndarray, sb: float, kb: float, k1: float, work: np.ndarray) -> complex:
    """Offset at gain k1 of the two roots leaving the double root sb of the break gain kb.

    From P(sb + d, kb + h) = P_ss d**2 / 2 + N h + ... = 0 (P and P_s vanish
    at a break point): d = sqrt(-2 N(sb) h / P_ss(sb)), along the real axis or
    across it (Ogata, *Modern Control Engineering*, 5th ed., §6-2: branches
    leave a break point at +-90 deg to each other). ``work`` is scratch
    space for the coefficients at kb.
    """
    if not _coefficients(den, num, kb, work):
        return 0j
    nv, _ = _horner2(num, sb + 0j)
    _, half = _horner3(work, sb + 0j)  # P_ss / 2 divided by the leading coefficient
    if half == 0:
        return 0j
    return np.sqrt(-nv * (k1 - kb) / (half * (den[0] + kb * num[0])) + 0j)


@_jit
def trace_branches(
    den: np.ndarray, num: np.ndarray, gains: np.ndarray, start: np.ndarray, breaks: np.ndarray, spots: np.ndarray
) -> np.ndarray:
    """Roots of den + K num at each of the sorted gains, each column one branch.

    Parameters
    ----------
    den : numpy.ndarray
        D(s), highest power first, degree n >= 1. [-]
    num : numpy.ndarray
        N(s), padded with leading zeros to the length of den. [-]
    gains : numpy.ndarray
        Gain factors K >= 0, increasing. [-]
    start : numpy.ndarray
        The n roots at gains[0], complex. [1/s]
    breaks : numpy.ndarray
        Gains of the break points, increasing; there two branches meet at a
        double root, which is set there, and leave it along the directions
        of :func:`_departure`. [-]
    spots : numpy.ndarray
        The break points, real, in the order of ``breaks``. [1/s]

    Returns
    -------
    numpy.ndarray
        Shape (len(gains), n), complex; a row of NaN where the degree drops. [1/s]
    """
    n = len(den) - 1
    G = len(gains)
    out = np.empty((G, n), np.complex128)
    c0 = np.empty(n + 1)  # at the gain reached
    c1 = np.empty(n + 1)  # at the gain tried
    guess = np.empty(n, np.complex128)
    trial = np.empty(n, np.complex128)
    stack = np.empty(_MAX_DEPTH + 1)
    work = np.empty((12, n))
    free = np.zeros(n, np.bool_)
    held = np.zeros(n, np.bool_)
    # the point reached (k, z, slopes m) and the one before it (u_prev = ln K, z_prev, m_prev)
    z = start.copy()
    k = gains[0]
    m = np.empty(n, np.complex128)
    z_prev = np.empty(n, np.complex128)
    m_prev = np.empty(n, np.complex128)
    m_new = np.empty(n, np.complex128)
    u_prev = 0.0
    lead0 = den[0] + k * num[0]
    if _coefficients(den, num, k, c0):
        _polish(c0, z)
    out[0] = z
    has_m = False
    has_prev = False
    # pairs of roots that met at a break point (spot, gain) and are still leaving it; those meeting now
    most = n // 2 + 1
    pairs = np.empty((most, 2), np.int64)
    pair_spot = np.empty(most)
    pair_gain = np.empty(most)
    npairs = 0
    meeting = np.empty((most, 2), np.int64)
    cb = np.empty(n + 1)
    nb = 0
    while nb < len(breaks) and breaks[nb] <= k:
        nb += 1
    for g in range(1, G):
        target = gains[g]
        if not _coefficients(den, num, target, c1):
            out[g] = np.nan
            continue
        while k < target:
            # the next stop: the break points on the way (all of those at one gain, to rounding, together),
            # or the target
            stop, first, last = target, nb, nb
            if nb < len(breaks) and breaks[nb] <= target:
                stop = breaks[nb]
                while last < len(breaks) and breaks[last] <= stop * (1.0 + _SAME_GAIN):
                    last += 1
                nb = last
            depth = 0
            stack[0] = stop
            tries = 0
            while depth >= 0:
                tgt = stack[depth]
                if not (
                    has_prev and has_m and _extrapolate(z_prev, m_prev, u_prev, z, m, np.log(k), np.log(tgt), guess)
                ):
                    _predict(num, c0, lead0, z, k, tgt, guess, work)
                for i in range(n):  # a prediction that failed stays where it was
                    if not _abs2(guess[i]) < np.inf:
                        guess[i] = z[i]
                for q in range(npairs):  # leaving a double root: the square-root law, each on its own side
                    a, b = pairs[q, 0], pairs[q, 1]
                    d = _departure(den, num, pair_spot[q], pair_gain[q], tgt, cb)
                    if _abs2(z[a] - pair_spot[q] - d) > _abs2(z[a] - pair_spot[q] + d):
                        d = -d
                    guess[a] = pair_spot[q] + d
                    guess[b] = pair_spot[q] - d
                _coefficients(den, num, tgt, c1)
                meet = 0
                mask = free
                if depth == 0 and last > first and n >= 2:
                    # at each break point the two free roots predicted nearest meet
                    held[:] = False
                    for j in range(first, last):
                        a = b = -1
                        for i in range(n):
                            if held[i]:
                                continue
                            dist = _abs2(guess[i] - spots[j])
                            if a < 0 or dist < _abs2(guess[a] - spots[j]):
                                a, b = i, a
                            elif b < 0 or dist < _abs2(guess[b] - spots[j]):
                                b = i
                        if b < 0:
                            break
                        held[a] = held[b] = True
                        guess[a] = guess[b] = spots[j]
                        meeting[meet, 0], meeting[meet, 1] = a, b
                        meet += 1
                    mask = held
                tries += 1
                ok = newton = _correct(c1, guess, trial, work, mask)
                if not ok and (tries >= _MAX_TRIES or depth >= _MAX_DEPTH):
                    # splitting does not settle it: eigenvalues at this gain, paired with the predictions
                    _pair(_eigen_roots(c1), guess, trial)
                    _polish(c1, trial)
                    meet = 0
                    newton = False
                    ok = True
                if ok:
                    lead1 = den[0] + tgt * num[0]
                    # slopes for the next extrapolation only where Newton's method converged on simple roots
                    has_new = newton and meet == 0 and tgt > 0.0 and _slopes(num, lead1, trial, tgt, work, m_new)
                    has_prev = has_m and k > 0.0
                    if has_prev:
                        u_prev = np.log(k)
                        z_prev[:] = z
                        m_prev[:] = m
                    z[:] = trial
                    m[:] = m_new
                    has_m = has_new
                    # pairs still within a whisker of their break gain keep leaving it by the square-root law
                    kept = 0
                    for q in range(npairs):
                        if abs(tgt - pair_gain[q]) <= _LEAVING * pair_gain[q]:
                            pairs[kept] = pairs[q]
                            pair_spot[kept], pair_gain[kept] = pair_spot[q], pair_gain[q]
                            kept += 1
                    for q in range(meet):
                        pairs[kept] = meeting[q]
                        pair_spot[kept], pair_gain[kept] = spots[first + q], tgt
                        kept += 1
                    npairs = kept
                    if npairs:
                        has_m = False
                    k = tgt
                    c0[:] = c1
                    lead0 = lead1
                    depth -= 1
                else:
                    depth += 1
                    stack[depth] = _split(k, tgt)
        _conjugate_pairs(z)
        out[g] = z
    return out
