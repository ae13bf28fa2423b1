"""Setpoint-step metrics of many loop variants at once, by recursions on the stacked state matrices.

Reached through ``drivekit.batch_step_metrics``; the stacked models and the
margins are in :mod:`drivekit.batch`.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .batch import _batch_grid, _OpenLoops, _pair, _unstable, loop_matrices
from .metrics import step_metric_arrays
from .responses import _EXTEND, _LN_SETTLE, _SETTLED

__all__ = ["BatchStepMetrics", "batch_step_metrics"]

_STEP_CHUNK = 5000  # variants per pass of the time-step recursion


@dataclasses.dataclass(frozen=True, eq=False)
class BatchStepMetrics:
    """Setpoint-step metrics of N loops; arrays of length N (units as in drivekit.margins.StepMetrics)."""

    rise_time: np.ndarray
    settling_time: np.ndarray
    overshoot: np.ndarray
    undershoot: np.ndarray
    peak: np.ndarray
    peak_time: np.ndarray
    final_value: np.ndarray
    steady_state_error: np.ndarray
    iae: np.ndarray
    itae: np.ndarray

    def to_frame(self) -> Any:
        """One row per variant (pandas DataFrame)."""
        import pandas as pd

        return pd.DataFrame({f.name: getattr(self, f.name) for f in dataclasses.fields(self)})


def _spans(A: np.ndarray, B: np.ndarray, C: np.ndarray, D: np.ndarray, delay: np.ndarray) -> np.ndarray:
    """The automatic time span of drivekit.responses for each loop (Pade(2) poles for dead time)."""
    N, nz = A.shape[0], A.shape[1]
    span = np.empty(N)
    free = delay == 0
    g = 1.0 / (1.0 + D[:, 0, 0])
    if np.any(free):
        f = np.nonzero(free)[0]
        acl = A[f] - g[f, None, None] * B[f][:, :, :1] @ C[f][:, :1, :]
        span[f] = _decay_spans(np.linalg.eigvals(acl), np.zeros(len(f)))
    if np.any(~free):
        dl = np.nonzero(~free)[0]
        th = delay[dl]
        # second-order Pade e^{-th s} ~ (s^2 - 6/th s + 12/th^2)/(s^2 + 6/th s + 12/th^2), controllable form
        # (the same filter as drivekit.responses.pade_coefficients(th, 2))
        Ap = np.zeros((len(dl), 2, 2))
        Ap[:, 0, 0], Ap[:, 0, 1], Ap[:, 1, 0] = -6.0 / th, -12.0 / th**2, 1.0
        Cp = np.stack([-12.0 / th, np.zeros_like(th)], axis=1)
        be, c0, d00 = B[dl, :, 0], C[dl, 0, :], D[dl, 0, 0]
        gg = 1.0 / (1.0 + d00)
        big = np.zeros((len(dl), nz + 2, nz + 2))
        big[:, :nz, :nz] = A[dl] - gg[:, None, None] * be[:, :, None] * c0[:, None, :]
        big[:, :nz, nz:] = -gg[:, None, None] * be[:, :, None] * Cp[:, None, :]
        big[:, nz, :nz] = c0 * gg[:, None]
        big[:, nz:, nz:] = Ap
        big[:, nz, nz:] -= (gg * d00)[:, None] * Cp
        span[dl] = _decay_spans(np.linalg.eigvals(big), delay[dl])
    return span


def _decay_spans(p: np.ndarray, delay: np.ndarray) -> np.ndarray:
    scale = np.maximum(1.0, np.max(np.abs(p), axis=1))
    moving = np.abs(p) > 1e-9 * scale[:, None]
    rates = np.where(moving, np.abs(p.real), np.inf)
    decaying = moving & (rates > 1e-9 * scale[:, None])
    slow = np.min(np.where(decaying, rates, np.inf), axis=1)
    fast = np.max(np.where(moving, np.abs(p), 0.0), axis=1)
    out = delay + _LN_SETTLE / slow
    osc = ~np.isfinite(slow) & (fast > 0)
    out = np.where(osc, delay + 20.0 * math.pi / np.where(fast > 0, fast, 1.0), out)
    none = ~np.isfinite(slow) & ~(fast > 0)
    return np.where(none, np.maximum(10.0 * delay, 1.0), out)


def batch_step_metrics(
    plant: Any,
    controller: Any,
    points: int = 500,
    settling_threshold: float = 0.02,
    rise_limits: tuple[float, float] = (0.1, 0.9),
    stable: Any = None,
) -> BatchStepMetrics:
    """Setpoint unit-step metrics of N loops at once (automatic time span per variant).

    Parameters
    ----------
    plant : ModelBatch
        Plant variants.
    controller : LinearModel, ModelBatch or object with ``to_linear()``
        One controller for all, or one per variant.
    points : int
        Time points per response. [-]
    settling_threshold : float
        Settling band relative to the final value. [-]
    rise_limits : tuple of float
        Fractions of the final value for the rise time. [-]
    stable : numpy.ndarray of bool, optional
        Closed-loop stability of each variant when already known (e.g.
        ``batch_loop_margins(...).stable``); computed when omitted.

    Returns
    -------
    BatchStepMetrics
    """
    p, c = _pair(plant, controller)
    parts = []
    for start in range(0, len(p), _STEP_CHUNK):
        sl = slice(start, start + _STEP_CHUNK)
        A, B, C, D = loop_matrices(p.subset(sl), c.subset(sl))
        delay = p.delay[sl]
        if stable is None:
            ol = _OpenLoops(A, B[:, :, :1], C[:, :1, :], D[:, :1, :1], delay)
            w = _batch_grid(ol)
            lw = ol.at(np.arange(len(delay)), np.broadcast_to(w, (len(delay), len(w))))
            ok = _unstable(ol, w, lw) == 0
        else:
            ok = np.asarray(stable, dtype=bool)[sl]
        t, y, final = _settled_steps(A, B, C, D, delay, points, ok)
        parts.append(step_metric_arrays(t, y, final, np.ones(len(delay)), settling_threshold, rise_limits, True))
    return BatchStepMetrics(**{k: np.concatenate([pt[k] for pt in parts]) for k in parts[0]})


def _settled_steps(
    A: np.ndarray, B: np.ndarray, C: np.ndarray, D: np.ndarray, delay: np.ndarray, points: int, ok: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Setpoint steps with the window rule of drivekit.responses: doubled (up to 3 times) until settled."""
    span = _spans(A, B, C, D, delay)
    final = np.where(ok, _finals(A, B, C, D), np.nan)
    t, y = _simulate(A, B, C, D, delay, points, span)
    todo = np.nonzero(np.isfinite(final))[0]
    for _ in range(_EXTEND):
        if not len(todo):
            break
        late = np.abs(y[todo, -1] - final[todo]) > _SETTLED * np.abs(final[todo] - y[todo, 0])
        todo = todo[late]
        if not len(todo):
            break
        span[todo] *= 2.0
        t[todo], y[todo] = _simulate(A[todo], B[todo], C[todo], D[todo], delay[todo], points, span[todo])
    return t, y, final


def _finals(A: np.ndarray, B: np.ndarray, C: np.ndarray, D: np.ndarray) -> np.ndarray:
    """Steady state of y for a unit setpoint (the same with and without dead time)."""
    g = 1.0 / (1.0 + D[:, 0, 0])
    be, c0, d00 = B[:, :, 0], C[:, 0, :], D[:, 0, 0]
    acl = A - g[:, None, None] * be[:, :, None] * c0[:, None, :]
    with np.errstate(all="ignore"):
        zss = -np.linalg.solve(acl, (be * g[:, None])[:, :, None])[:, :, 0]
        y_free = np.einsum("ni,ni->n", c0, zss)
        return y_free + d00 * g * (1.0 - y_free)


def _expm(M: np.ndarray) -> np.ndarray:
    """Matrix exponentials of stacked matrices: Pade 13 with scaling and squaring, all at once.

    References
    ----------
    N. J. Higham, "The scaling and squaring method for the matrix exponential
    revisited", SIAM J. Matrix Anal. Appl. 26 (2005) 1179-1193, Algorithm 2.3
    (the degree-13 branch with theta_13 = 5.37) -- the method of scipy.linalg.expm.
    """
    b = (
        64764752532480000.0, 32382376266240000.0, 7771770303897600.0, 1187353796428800.0, 129060195264000.0,
        10559470521600.0, 670442572800.0, 33522128640.0, 1323241920.0, 40840800.0, 960960.0, 16380.0, 182.0, 1.0,
    )  # fmt: skip
    norm = np.max(np.sum(np.abs(M), axis=1), axis=1)
    s = np.maximum(0, np.ceil(np.log2(np.maximum(norm, 1e-300) / 5.371920351148152))).astype(int)
    X = M / (2.0**s)[:, None, None]
    eye = np.broadcast_to(np.eye(M.shape[1]), M.shape)
    X2 = X @ X
    X4 = X2 @ X2
    X6 = X4 @ X2
    U = X @ (X6 @ (b[13] * X6 + b[11] * X4 + b[9] * X2) + b[7] * X6 + b[5] * X4 + b[3] * X2 + b[1] * eye)
    V = X6 @ (b[12] * X6 + b[10] * X4 + b[8] * X2) + b[6] * X6 + b[4] * X4 + b[2] * X2 + b[0] * eye
    E = np.linalg.solve(V - U, V + U)
    for j in range(int(s.max(initial=0))):
        sq = s > j
        E[sq] = E[sq] @ E[sq]
    return E


def _simulate(
    A: np.ndarray, B: np.ndarray, C: np.ndarray, D: np.ndarray, delay: np.ndarray, points: int, span: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Setpoint unit step of each loop with the scheme of drivekit.responses, vectorised over variants."""
    N = A.shape[0]
    h = span / (points - 1)
    ms = np.where(delay > 0, np.floor(delay / h * (1.0 + 1e-12)), 0).astype(int)
    h = np.where(ms >= 1, delay / np.maximum(ms, 1), h)
    f = np.where((delay > 0) & (ms == 0), delay / h, 0.0)
    t = h[:, None] * np.arange(points)[None, :]
    y = np.zeros((N, points))
    free = delay == 0
    if np.any(free):
        y[free] = _free_steps(A[free], B[free], C[free], D[free], h[free], points)
    rest = np.nonzero(~free)[0]
    if len(rest):
        y[rest] = _delayed_steps(A[rest], B[rest], C[rest], D[rest], h[rest], ms[rest], f[rest], points)
    return t, y


def _free_steps(A: np.ndarray, B: np.ndarray, C: np.ndarray, D: np.ndarray, h: np.ndarray, points: int) -> np.ndarray:
    """Delay-free loops: exact closed-loop ZOH, states by doubling."""
    N, n = A.shape[0], A.shape[1]
    g = 1.0 / (1.0 + D[:, 0, 0])
    be, c0, d00 = B[:, :, 0], C[:, 0, :], D[:, 0, 0]
    M = np.zeros((N, n + 1, n + 1))
    M[:, :n, :n] = A - g[:, None, None] * be[:, :, None] * c0[:, None, :]
    M[:, :n, n] = be * g[:, None]
    E = _expm(M * h[:, None, None])
    P, G = E[:, :n, :n], E[:, :n, n]
    X = np.zeros((N, points, n))
    filled = 1
    while filled < points:
        take = min(filled, points - filled)
        X[:, filled : filled + take] = X[:, :take] @ np.swapaxes(P, 1, 2) + G[:, None, :]
        G = np.einsum("nij,nj->ni", P, G) + G
        P = P @ P
        filled += take
    yf = np.einsum("nki,ni->nk", X, c0)
    return yf + d00[:, None] * g[:, None] * (1.0 - yf)


def _history_steps(
    PhiT: np.ndarray,
    c0: np.ndarray,
    d00: np.ndarray,
    Ga: np.ndarray,
    Gb: np.ndarray,
    ms: np.ndarray,
    points: int,
) -> np.ndarray:
    """Setpoint steps of loops whose dead time is ms >= 1 whole steps, in blocks of ms steps.

    Within a block every delayed sample is already known, so the block's
    outputs follow from the state at its start and those samples by fixed
    matrices (powers of Phi): the scheme of drivekit.responses for long
    dead times, here for every variant of one ms at once.
    """
    N = c0.shape[0]
    y = np.zeros((N, points))
    Phi = np.swapaxes(PhiT, 1, 2)
    for b in np.unique(ms).tolist():
        g = np.nonzero(ms == b)[0]
        y[g] = _blocks(Phi[g], c0[g], d00[g], Ga[g], Gb[g], b, points)
    return y


def _blocks(
    Phi: np.ndarray, c0: np.ndarray, d00: np.ndarray, Ga: np.ndarray, Gb: np.ndarray, b: int, points: int
) -> np.ndarray:
    """Unit setpoint steps of N loops with a dead time of exactly b grid steps (see _history_steps)."""
    N, n = c0.shape
    P = np.empty((N, b + 1, n, n))
    P[:, 0] = np.eye(n)
    for j in range(1, b + 1):
        P[:, j] = Phi @ P[:, j - 1]
    pa = P @ Ga[:, None, :, None]  # (N, b+1, n, 1)
    pb = P @ Gb[:, None, :, None]
    # z[j] = Phi^j z0 + sum_i Phi^(j-1-i) Ga e_i + sum_(i>=1) Phi^(j-i) Gb e_i, j = 0..b
    Ze = np.zeros((N, b + 1, b + 1, n))
    for j in range(b + 1):
        for i in range(b + 1):
            if j - 1 - i >= 0:
                Ze[:, j, i] += pa[:, j - 1 - i, :, 0]
            if i >= 1 and j - i >= 0:
                Ze[:, j, i] += pb[:, j - i, :, 0]
    Y0z = np.einsum("nk,njkl->njl", c0, P[:, :b])  # (N, b, n)
    Y0e = np.einsum("njik,nk->nji", Ze[:, :b], c0)  # (N, b, b+1)
    Y0e[:, np.arange(b), np.arange(b)] += d00[:, None]
    Pb, Zb = P[:, b], Ze[:, b]  # (N, n, n), (N, b+1, n)
    past = np.zeros((points + 2 * b + 1, N))  # y0 history, time-major, sample k in row k + b
    y = np.empty((points, N))
    z = np.zeros((N, n))
    for k0 in range(0, points, b):
        v = past[k0 : k0 + b + 1].T.copy()  # y0[k0 - b .. k0], the last one computed now
        v[:, b] = np.einsum("ni,ni->n", c0, z) + d00 * (1.0 - v[:, 0])
        E = 1.0 - v
        take = min(b, points - k0)
        block = np.einsum("nji,ni->nj", Y0z, z) + np.einsum("nji,ni->nj", Y0e, E)
        past[k0 + b : k0 + b + take] = block[:, :take].T
        y[k0 : k0 + take] = v[:, :take].T
        z = np.einsum("nij,nj->ni", Pb, z) + np.einsum("ni,nij->nj", E, Zb)
    return y.T


def _delayed_steps(
    A: np.ndarray,
    B: np.ndarray,
    C: np.ndarray,
    D: np.ndarray,
    h: np.ndarray,
    ms: np.ndarray,
    f: np.ndarray,
    points: int,
) -> np.ndarray:
    """Loops with dead time: e ramps between grid points, delayed samples from the stored history."""
    N, n = A.shape[0], A.shape[1]
    be, bd = B[:, :, 0], B[:, :, 1]
    c0, d00 = C[:, 0, :], D[:, 0, 0]
    M = np.zeros((N, n + 3, n + 3))
    M[:, :n, :n] = A
    M[:, :n, n] = be
    M[:, :n, n + 1] = bd
    M[:, n, n + 2] = 1.0
    E = _expm(M * h[:, None, None])
    PhiT = np.ascontiguousarray(np.swapaxes(E[:, :n, :n], 1, 2))
    g1 = E[:, :n, n + 2] / h[:, None]
    Ga, Gb = E[:, :n, n] - g1, g1
    short = ms == 0  # dead time shorter than a step: the delayed sample interpolated (implicit)
    if not np.any(short):
        return _history_steps(PhiT, c0, d00, Ga, Gb, ms, points)
    top = int(ms.max(initial=0))
    hist = np.zeros((N, points + top + 1))  # y0 history, sample k at column k + top
    rows = np.arange(N)
    back = top - ms  # column of y0[k - ms] is k + back
    y = np.zeros((N, points))
    z = np.zeros((N, n))
    beta = np.einsum("ni,ni->n", c0, Gb) + d00
    v_now = np.zeros(N)
    for k in range(points):
        v_k = np.where(short, v_now, hist[rows, k + back])
        e = 1.0 - v_k
        y0 = np.einsum("ni,ni->n", c0, z) + d00 * e
        hist[:, k + top] = y0
        y[:, k] = v_k
        z_free = np.einsum("ni,nij->nj", z, PhiT) + Ga * e[:, None]
        v_next = hist[rows, k + 1 + back]
        if np.any(short):
            alpha = np.einsum("ni,ni->n", c0, z_free + Gb) + d00
            v_next = np.where(short, ((1.0 - f) * alpha + f * y0) / (1.0 + (1.0 - f) * beta), v_next)
        z = z_free + Gb * (1.0 - v_next)[:, None]
        v_now = v_next
    return y
