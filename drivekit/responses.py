"""Step, impulse and frequency responses of linear models and loops, dead time exact.

Time responses
    Exact for a linear model driven by a step: the matrix exponential is taken
    once per grid step and the states follow ``x[k+1] = Ad x[k] + Bd`` (the
    grid is filled by doubling, so 500 points cost nine matrix products). An
    open-loop dead time is a time shift. With the dead time inside a loop the
    controller and plant are discretised together on a grid whose step
    divides the dead time, so the delayed measurement falls on grid points;
    between grid points it is interpolated linearly from samples already
    computed (a first-order hold, error O(h**2) in the step h), while the
    setpoint and load steps enter exactly. No Pade approximation is used.
    The delay line (the samples in transit) joins the loop's state, so the
    loop is again one affine recursion filled by doubling; a dead time of
    more than 40 grid steps is stepped in blocks of the dead time instead.

Time span (the rule)
    ``t_end = delay + ln(200) / sigma``, where ``sigma`` is the smallest decay
    rate ``|Re p|`` among the poles that are not integrators (for a loop with
    dead time, poles of the loop with a second-order Pade approximation, used
    only for this choice). A mode decays to 0.5 % of its start in
    ``ln(200)/sigma``. Without any such pole: ``delay + 10/|p_fastest|`` or,
    failing that, ``max(10 delay, 1 s)``. The resolution is then
    ``t_end/(points - 1)``, lengthened so that it divides a loop's dead time
    (the window never ends before ``t_end``). For a loop the window is then
    doubled (up to three times) while the response is still more than 1 %
    of its final change away from the final value at the end, so a slow
    closed-loop mode with a large residue (a PI zero close to it) settles
    inside the window. Pass ``t_end`` to look closer.

Frequency grid
    From a decade below the slowest pole, zero or ``1/delay`` to a decade above
    the fastest, logarithmic, with extra points around lightly damped modes.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from typing import Any

import numpy as np
import scipy.linalg

from .frequency import bode_samples, responses_at
from .linear import LinearModel
from .loop import Loop, LoopMatrices, as_linear, zpk
from .polyroots import polynomial_from_roots, polynomial_roots
from .recursion import affine_orbit
from .units import ParameterError

__all__ = [
    "FrequencyResponse",
    "StepResponse",
    "frequency_grid",
    "frequency_response",
    "impulse_response",
    "load_response",
    "pade_coefficients",
    "step_response",
    "time_span",
]

_SETTLE_FRACTION = 0.005  # 0.5 %: the rule for the time span
_LN_SETTLE = math.log(1.0 / _SETTLE_FRACTION)


# ---------------------------------------------------------------------------------------
# result objects
@dataclasses.dataclass(frozen=True, eq=False)
class StepResponse:
    """A time response on a uniform grid.

    Attributes
    ----------
    t : numpy.ndarray
        Time from the step. [s]
    y : numpy.ndarray
        Measured output, SI output unit (for a unit step of the input).
    u : numpy.ndarray
        Controller output for a loop, the input itself for an open-loop response. [input unit]
    setpoint : numpy.ndarray
        Setpoint r(t) (zeros for a load or open-loop response). [SI output unit]
    final_value : float
        Steady-state output from the model (nan when it does not settle).
    kind : str
        ``"open loop step"``, ``"setpoint step"``, ``"load step"`` or ``"... impulse"``.
    delay : float
        Dead time of the model or loop. [s]
    tail_iae : float
        Integral of ``|y - final_value|`` beyond the last point, from the same
        recursion continued three more windows (loop steps; 0 otherwise). [unit*s]
    tail_itae : float
        Integral of ``t |y - final_value|`` beyond the last point. [unit*s**2]
    """

    t: np.ndarray
    y: np.ndarray
    u: np.ndarray
    setpoint: np.ndarray
    final_value: float
    kind: str
    delay: float = 0.0
    tail_iae: float = 0.0
    tail_itae: float = 0.0

    def to_frame(self) -> Any:
        """The response as a pandas DataFrame (columns t [s], y, u, setpoint)."""
        import pandas as pd

        return pd.DataFrame({"t [s]": self.t, "y": self.y, "u": self.u, "setpoint": self.setpoint})

    def table(self) -> list[tuple[str, str]]:
        """Summary rows (quantity, value) for display."""
        return [
            ("response", self.kind),
            ("points", str(len(self.t))),
            ("time span [s]", f"{self.t[-1]:.4g}"),
            ("final value", f"{self.final_value:.4g}"),
        ]


@dataclasses.dataclass(frozen=True, eq=False)
class FrequencyResponse:
    """Frequency response with the dead time exact.

    Attributes
    ----------
    omega : numpy.ndarray
        Angular frequency. [rad/s]
    response : numpy.ndarray
        Complex response G(jw) (for a loop, the open loop L(jw)).
    mag : numpy.ndarray
        |G(jw)|. [SI output unit / input unit]
    mag_db : numpy.ndarray
        20 log10 |G|. [dB]
    phase_deg : numpy.ndarray
        Phase, continuous (one -90 deg per integrator at low frequency, the
        dead time's -w theta included). [deg]
    sensitivity_mag, complementary_mag : numpy.ndarray or None
        |S| and |T| for a loop, None for a plain model. [-]
    """

    omega: np.ndarray
    response: np.ndarray
    mag: np.ndarray
    mag_db: np.ndarray
    phase_deg: np.ndarray
    sensitivity_mag: np.ndarray | None = None
    complementary_mag: np.ndarray | None = None

    @property
    def hz(self) -> np.ndarray:
        """Frequency. [Hz]"""
        return self.omega / (2.0 * math.pi)

    @property
    def nyquist(self) -> tuple[np.ndarray, np.ndarray]:
        """(real, imaginary) parts for a Nyquist plot."""
        return self.response.real, self.response.imag

    def to_frame(self) -> Any:
        """The response as a pandas DataFrame."""
        import pandas as pd

        data = {
            "omega [rad/s]": self.omega,
            "f [Hz]": self.hz,
            "magnitude": self.mag,
            "magnitude [dB]": self.mag_db,
            "phase [deg]": self.phase_deg,
        }
        if self.sensitivity_mag is not None:
            data["|S|"] = self.sensitivity_mag
            data["|T|"] = self.complementary_mag  # type: ignore[assignment]  # set together with |S|
        return pd.DataFrame(data)

    def table(self) -> list[tuple[str, str]]:
        """Summary rows (quantity, value) for display."""
        return [
            ("points", str(len(self.omega))),
            ("range [rad/s]", f"{self.omega[0]:.3g} .. {self.omega[-1]:.3g}"),
            ("peak magnitude [dB]", f"{np.max(self.mag_db):.3g}"),
        ]


# ---------------------------------------------------------------------------------------
# poles, zeros and gain
def zpk_response(z: np.ndarray, p: np.ndarray, k: float, delay: float, omega: np.ndarray) -> np.ndarray:
    """k prod(jw - z)/prod(jw - p) e^{-jw delay}.

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles. [1/s]
    k : float
        Gain of the factored form.
    delay : float
        Dead time. [s]
    omega : numpy.ndarray
        Angular frequencies. [rad/s]

    Returns
    -------
    numpy.ndarray of complex
    """
    w = np.asarray(omega, dtype=float)
    flat = np.ascontiguousarray(w.ravel())
    zc, pc = np.ascontiguousarray(z, complex), np.ascontiguousarray(p, complex)
    return responses_at(zc, pc, float(k), float(delay), flat).reshape(w.shape)


def continuous_phase(z: np.ndarray, p: np.ndarray, k: float, delay: float, omega: np.ndarray) -> np.ndarray:
    """Phase as the sum of each factor's angle: continuous in w, integrators at -90 deg each. [rad]

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles. [1/s]
    k : float
        Gain; a negative gain adds -180 deg.
    delay : float
        Dead time. [s]
    omega : numpy.ndarray
        Angular frequencies (> 0). [rad/s]
    """
    w = np.asarray(omega, dtype=float)
    roots = np.concatenate([np.asarray(z, complex), np.asarray(p, complex)])
    sign = np.concatenate([np.ones(len(z)), -np.ones(len(p))])
    # angle of jw - r is atan2(w - Im r, -Re r) for each factor
    phase = np.arctan2(w[:, None] - roots.imag, -roots.real) @ sign
    return phase - (math.pi if k < 0 else 0.0) - w * delay


# ---------------------------------------------------------------------------------------
# frequency response
def frequency_grid(z: np.ndarray, p: np.ndarray, delay: float = 0.0, points: int = 400) -> np.ndarray:
    """Automatic grid: a decade beyond the slowest and fastest pole, zero or 1/delay. [rad/s]

    Parameters
    ----------
    z, p : numpy.ndarray
        Zeros and poles. [1/s]
    delay : float
        Dead time. [s]
    points : int
        Number of points. [-]
    """
    zc, pc = np.ascontiguousarray(z, complex), np.ascontiguousarray(p, complex)
    return bode_samples(zc, pc, 1.0, float(delay), int(points))[0]


def frequency_response(sys: Any, omega: Any = None, points: int = 400) -> FrequencyResponse:
    """Bode and Nyquist data of a model, or of a loop's open loop with |S| and |T|.

    Parameters
    ----------
    sys : LinearModel, Loop or python-control LTI
        The model or loop.
    omega : array, optional
        Angular frequencies; chosen automatically when omitted. [rad/s]
    points : int
        Number of points of the automatic grid. [-]

    Returns
    -------
    FrequencyResponse
    """
    loop = sys if isinstance(sys, Loop) else None
    model = loop.open_loop if loop is not None else as_linear(sys)
    z, p, k = zpk(model)
    if omega is None:
        if points < 10:
            raise ParameterError(f"`points`: got {points!r}, expected at least 10")
        zc, pc = np.ascontiguousarray(z, complex), np.ascontiguousarray(p, complex)
        w, g = bode_samples(zc, pc, float(k), model.delay, int(points))
    else:
        w = np.asarray(omega, dtype=float)
        if w.ndim != 1 or np.any(w <= 0) or not np.all(np.isfinite(w)):
            raise ParameterError("`omega`: expected a 1-D array of finite frequencies > 0 rad/s")
        g = zpk_response(z, p, k, model.delay, w)
    mag = np.abs(g)
    with np.errstate(divide="ignore"):
        mag_db = 20.0 * np.log10(mag)
    phase = np.degrees(continuous_phase(z, p, k, model.delay, w))
    s_mag = t_mag = None
    if loop is not None:
        s_mag = np.abs(1.0 / (1.0 + g))
        t_mag = np.abs(g / (1.0 + g))
    return FrequencyResponse(w, g, mag, mag_db, phase, s_mag, t_mag)


# ---------------------------------------------------------------------------------------
# time span
def pade_coefficients(delay: float, order: int) -> tuple[np.ndarray, np.ndarray]:
    """Numerator and denominator of the [order/order] Pade approximation of e^{-delay s}.

    Parameters
    ----------
    delay : float
        Dead time. [s]
    order : int
        Order of numerator and denominator. [-]

    Returns
    -------
    tuple of numpy.ndarray
        Coefficients, highest power first, denominator monic.

    References
    ----------
    Golub & Van Loan, *Matrix Computations*, 4th ed., 2013, §9.3.1 (diagonal
    Pade approximants of the exponential): c_j = (2n-j)! n! / ((2n)! j! (n-j)!).
    """
    n = int(order)
    if n < 1 or n > 10:
        raise ParameterError(f"`order`: got {order!r}, expected an integer Pade order from 1 to 10")
    c, sign = _pade_table(n)
    powers = delay ** np.arange(n + 1)
    den = (c * powers)[::-1]
    num = (sign * c * powers)[::-1]
    return num / den[0], den / den[0]


@functools.lru_cache(maxsize=16)
def _pade_table(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Coefficients c_j = (2n-j)! n! / ((2n)! j! (n-j)!) and signs (-1)**j of the [n/n] Pade approximant."""
    c = np.array(
        [
            math.factorial(2 * n - j)
            * math.factorial(n)
            / (math.factorial(2 * n) * math.factorial(j) * math.factorial(n - j))
            for j in range(n + 1)
        ]
    )
    return c, (-1.0) ** np.arange(n + 1)


def _decay_span(poles: np.ndarray, delay: float) -> float:
    # a few poles: plain arithmetic
    p = np.asarray(poles, complex).tolist()
    size = [abs(x) for x in p]
    scale = max(1.0, max(size, default=0.0))
    moving = [x for x, a in zip(p, size, strict=True) if a > 1e-9 * scale]
    decaying = [abs(x.real) for x in moving if abs(x.real) > 1e-9 * scale]
    if decaying:
        return delay + _LN_SETTLE / min(decaying)
    if moving:
        return delay + 10.0 * 2.0 * math.pi / max(abs(x) for x in moving)
    return max(10.0 * delay, 1.0)


def _outer(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Outer product a b^T of two vectors (numpy.outer without its argument handling)."""
    return a[:, None] * b[None, :]


def _pade_loop_poles(loop: Loop, order: int = 2) -> np.ndarray:
    """Poles of the loop with the dead time replaced by a Pade approximation (for the span only).

    Roots of D Dp + N Np, with L = N/D the open loop and Np/Dp the Pade
    approximation of its dead time.
    """
    z, p, k = zpk(loop.open_loop)
    num, den = pade_coefficients(loop.delay, order)
    char = np.convolve(polynomial_from_roots(p), den)
    char[len(char) - len(z) - order - 1 :] += np.convolve(k * polynomial_from_roots(z), num)
    return polynomial_roots(char)


def time_span(sys: Any) -> float:
    """End time of the automatic grid (see the module notes for the rule). [s]

    Parameters
    ----------
    sys : LinearModel or Loop
        Model (open loop) or loop (closed loop).
    """
    if isinstance(sys, Loop):
        if sys.delay:
            return _decay_span(_pade_loop_poles(sys), sys.delay)
        return _decay_span(np.linalg.eigvals(sys.closed_loop_matrix()), 0.0)
    model = as_linear(sys)
    return _decay_span(model.poles, model.delay)


def _grid(t_end: Any, sys: Any, points: int) -> tuple[float, int]:
    if not isinstance(points, (int, np.integer)) or points < 3:
        raise ParameterError(f"`points`: got {points!r}, expected an integer >= 3")
    if t_end is None:
        t_end = time_span(sys)
    t_end = float(t_end)
    if not math.isfinite(t_end) or t_end <= 0:
        raise ParameterError(f"`t_end`: got {t_end!r} s, expected a time > 0 s")
    return t_end, int(points)


# ---------------------------------------------------------------------------------------
# exact recursions
def _zoh(A: np.ndarray, B: np.ndarray, h: float) -> tuple[np.ndarray, np.ndarray]:
    """Zero-order-hold discretisation by one matrix exponential (Franklin, Powell & Workman, 3rd ed., §4.3.3)."""
    n, m = A.shape[0], B.shape[1]
    M = np.zeros((n + m, n + m))
    M[:n, :n] = A * h
    M[:n, n:] = B * h
    E = scipy.linalg.expm(M)
    return E[:n, :n], E[:n, n:]


def _open_loop(model: LinearModel, t: np.ndarray, impulse: bool) -> np.ndarray:
    n = model.order
    y = np.zeros(len(t))
    start = int(np.searchsorted(t, model.delay - 1e-12 * max(1.0, model.delay)))
    if start >= len(t):
        return y
    if n == 0:
        if not impulse:
            y[start:] = model.D[0, 0]
        return y
    h = t[1] - t[0]
    tau0 = t[start] - model.delay
    Phi, Gam = _zoh(model.A, model.B, h)
    gam = Gam[:, 0] if not impulse else np.zeros(n)
    if impulse:
        x0 = scipy.linalg.expm(model.A * tau0) @ model.B[:, 0]
    else:
        x0 = _zoh(model.A, model.B, tau0)[1][:, 0] if tau0 > 0 else np.zeros(n)
    X = affine_orbit(Phi, gam, x0, len(t) - start)
    y[start:] = X @ model.C[0] + (0.0 if impulse else model.D[0, 0])
    return y


def _inputs(m: LoopMatrices, r: float, d: float) -> tuple[np.ndarray, np.ndarray, float, float, float]:
    """Constant inputs q = (d, r) with their columns: Bq (n, 2), d0 = y0 part, du = u part; d00, d10."""
    q = np.array([d, r])
    return q, m.B[:, 1:3], float(m.D[0, 1:3] @ q), float(m.D[1, 1:3] @ q), float(m.D[0, 0])


def _free_loop(m: LoopMatrices, r: float, d: float) -> tuple[np.ndarray, np.ndarray]:
    """State matrix and constant input of the loop with its dead time removed (e = r - y0)."""
    q, Bq, d0, _, d00 = _inputs(m, r, d)
    g = 1.0 / (1.0 + d00)
    Acl = m.A - g * _outer(m.B[:, 0], m.C[0])
    bin_ = m.B[:, 0] * g * (r - d0) + Bq @ q
    return Acl, bin_


def _free_outputs(m: LoopMatrices, X: np.ndarray, r: float, d: float) -> tuple[np.ndarray, np.ndarray]:
    _, _, d0, du, d00 = _inputs(m, r, d)
    g = 1.0 / (1.0 + d00)
    y_free = X @ m.C[0]
    e = g * (r - y_free - d0)
    return y_free + d00 * e + d0, X @ m.C[1] + m.D[1, 0] * e + du


def _closed_loop_free(
    m: LoopMatrices, h: float, count: int, r: float, d: float, z0: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Delay-free loop, exact: y0 = y, e = r - y."""
    Acl, bin_ = _free_loop(m, r, d)
    Phi, Gam = _zoh(Acl, bin_[:, None], h)
    X = affine_orbit(Phi, Gam[:, 0], z0, count)
    return _free_outputs(m, X, r, d)


def loop_grid(delay: float, t_end: float, points: int) -> tuple[float, int, float]:
    """Grid step h, whole samples m and fraction f of the dead time (delay = (m + f) h).

    The step is lengthened so that it divides the dead time whenever the dead
    time is at least one nominal step (f = 0); the grid then reaches at least
    ``t_end``. Shorter dead times keep the nominal step with m = 0.
    """
    h = t_end / (points - 1)
    if delay <= 0:
        return h, 0, 0.0
    m = math.floor(delay / h * (1.0 + 1e-12))
    if m >= 1:
        return delay / m, int(m), 0.0
    return h, 0, delay / h


def _loop_discrete(m: LoopMatrices, h: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Phi, Ga (e at step start), Gb (e at step end), Gq (constant d and r) for a ramp in e."""
    n = m.A.shape[0]
    M = np.zeros((n + 4, n + 4))
    M[:n, :n] = m.A
    M[:n, n : n + 3] = m.B
    M[n, n + 3] = 1.0
    E = scipy.linalg.expm(M * h)
    g1 = E[:n, n + 3] / h
    return E[:n, :n], E[:n, n] - g1, g1, E[:n, n + 1 : n + 3]


_AUGMENTED_MAX = 40  # dead-time samples up to which the delay line joins the state (doubling orbit)


def _delayed_map(
    m: LoopMatrices, h: float, ms: int, f: float, r: float, d: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """One grid step of the loop with dead time as an affine map w' = F w + g of an augmented state.

    w = (z, y0[k-ms], ..., y0[k-1]) for ms >= 1; (z, y[k]) for ms = 0 (dead
    time f h shorter than a step, the delayed sample interpolated). Returns
    F, g, and the rows (with constants) giving y[k] and u[k] from w[k].
    """
    Phi, Ga, Gb, Gq = _loop_discrete(m, h)
    q, _, d0, du, d00 = _inputs(m, r, d)
    n = m.A.shape[0]
    c0, cu, d10 = m.C[0], m.C[1], float(m.D[1, 0])
    size = n + max(ms, 1)
    unit = np.eye(size)
    # each quantity is (row over w, constant)
    e0 = (-unit[n], r)  # e[k] = r - (delayed sample)
    zrow = np.zeros(size)
    zrow_c0 = zrow.copy()
    zrow_c0[:n] = c0
    y0 = (zrow_c0 + d00 * e0[0], d00 * r + d0)
    F = np.zeros((size, size))
    g = np.zeros(size)
    F[:n, :n] = Phi
    F[:n] += _outer(Ga, e0[0])
    g[:n] = Ga * r + Gq @ q
    if ms >= 1:
        e1 = (-unit[n + 1], r) if ms >= 2 else (-y0[0], r - y0[1])
        F[:n] += _outer(Gb, e1[0])
        g[:n] += Gb * e1[1]
        F[n : n + ms - 1, n + 1 : n + ms] = np.eye(ms - 1)
        F[n + ms - 1], g[n + ms - 1] = y0
    else:
        beta = float(c0 @ Gb) + d00
        # alpha = y0[k+1] if e[k+1] = r; v' = ((1 - f) alpha + f y0[k]) / (1 + (1 - f) beta)
        free_rows, free_c = F[:n].copy(), g[:n].copy()
        alpha = (c0 @ free_rows, float(c0 @ (free_c + Gb * r)) + d00 * r + d0)
        scale = 1.0 / (1.0 + (1.0 - f) * beta)
        v1 = (scale * ((1.0 - f) * alpha[0] + f * y0[0]), scale * ((1.0 - f) * alpha[1] + f * y0[1]))
        F[:n] = free_rows - _outer(Gb, v1[0])
        g[:n] = free_c + Gb * (r - v1[1])
        F[n], g[n] = v1
    y_row = unit[n]
    u_row = zrow.copy()
    u_row[:n] = cu
    u_row += d10 * e0[0]
    return F, g, y_row, u_row, np.array([0.0, d10 * r + du])


def _closed_loop_augmented(
    m: LoopMatrices, h: float, count: int, ms: int, f: float, r: float, d: float, z0: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    F, g, y_row, u_row, const = _delayed_map(m, h, ms, f, r, d)
    w0 = np.zeros(F.shape[0])
    w0[: len(z0)] = z0
    W = affine_orbit(F, g, w0, count)
    return W @ y_row + const[0], W @ u_row + const[1]


def _closed_loop_blocks(
    m: LoopMatrices, h: float, count: int, ms: int, r: float, d: float, z0: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Long dead time (ms steps): blocks of ms steps in which every delayed sample is already known."""
    Phi, Ga, Gb, Gq = _loop_discrete(m, h)
    q, _, d0, du, d00 = _inputs(m, r, d)
    n, b = m.A.shape[0], ms
    c0, cu, d10 = m.C[0], m.C[1], float(m.D[1, 0])
    gq = Gq @ q
    # powers Phi^j, j = 0..b, by doubling
    P = np.empty((b + 1, n, n))
    P[0], P[1] = np.eye(n), Phi
    have = 2
    while have <= b:
        take = min(have - 1, b + 1 - have)
        P[have : have + take] = P[have - 1] @ P[1 : take + 1]
        have += take
    # z[j] = Phi^j z0 + sum_i Phi^(j-1-i) (Ga E_i + Gb E_(i+1)) + sum_i Phi^i gq, j = 0..b
    pa, pb, pg = P @ Ga, P @ Gb, P @ gq  # (b+1, n)
    j = np.arange(b + 1)[:, None]
    i = np.arange(b + 1)[None, :]
    lag_a, lag_b = j - 1 - i, j - i
    Ze = np.where((lag_a >= 0)[..., None], pa[np.clip(lag_a, 0, b)], 0.0)
    Ze = Ze + np.where(((lag_b >= 0) & (i >= 1))[..., None], pb[np.clip(lag_b, 0, b)], 0.0)  # (b+1, b+1, n)
    Zc = np.concatenate([np.zeros((1, n)), np.cumsum(pg[:-1], axis=0)])  # (b+1, n)
    Y0z = np.einsum("k,jkl->jl", c0, P[:b])  # (b, n)
    Y0e = Ze[:b] @ c0 + d00 * np.eye(b + 1)[:b]
    Y0c = Zc[:b] @ c0 + d0
    Uz = np.einsum("k,jkl->jl", cu, P[:b])
    Ue = Ze[:b] @ cu + d10 * np.eye(b + 1)[:b]
    Uc = Zc[:b] @ cu + du
    offsets = np.arange(b + 1) - ms
    padded = np.zeros(count + b + 1)  # y0 with zeros before t = 0 at the front
    u = np.zeros(count)
    y = np.zeros(count)
    z = z0.astype(float).copy()
    for k0 in range(0, count, b):
        idx = k0 + offsets + b
        v = padded[idx]
        v[b] = c0 @ z + d00 * (r - v[0]) + d0  # the sample at k0 (delay = b steps)
        E = r - v
        take = min(b, count - k0)
        padded[k0 + b : k0 + b + take] = (Y0z @ z + Y0e @ E + Y0c)[:take]
        u[k0 : k0 + take] = (Uz @ z + Ue @ E + Uc)[:take]
        y[k0 : k0 + take] = v[:take]
        z = P[b] @ z + E @ Ze[b] + Zc[b]
    return y, u


def _loop_response(
    loop: Loop, t_end: float, points: int, r: float, d: float, impulse: bool, extra: int = 0
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Times, y and u of a loop response on ``points`` grid points, plus ``extra`` points beyond."""
    m = loop.matrices
    n = m.A.shape[0]
    z0 = np.zeros(n)
    if impulse:  # a unit impulse in r (or d) sets the states at 0+
        if abs(m.D[0, 0]) > 0 or abs(m.D[0, 1]) > 0 or np.any(m.D[:, 2] != 0):
            raise ParameterError("`loop`: impulse response needs a strictly proper controller-plant series")
        z0 = m.B[:, 0] * r + m.B[:, 1] * d + m.B[:, 2] * r
        r, d = 0.0, 0.0
    h, ms, f = loop_grid(loop.delay, t_end, points)
    count = points + extra
    t = h * np.arange(count)
    if loop.delay == 0:
        y, u = _closed_loop_free(m, h, count, r, d, z0)
    elif ms <= _AUGMENTED_MAX:
        y, u = _closed_loop_augmented(m, h, count, ms, f, r, d, z0)
    else:
        y, u = _closed_loop_blocks(m, h, count, ms, r, d, z0)
    return t, y, u


def _closed_loop_final(loop: Loop, r: float, d: float) -> float:
    """Steady state of y for constant r and d: the same with and without the dead time (nan if unstable)."""
    from .margins import loop_is_stable

    if not loop_is_stable(loop):
        return math.nan
    m = loop.matrices
    Acl, bin_ = _free_loop(m, r, d)
    zss = -np.linalg.solve(Acl, bin_)
    y, _ = _free_outputs(m, zss[None, :], r, d)
    return float(y[0])


_EXTEND = 3  # times the automatic span may be doubled until the response has settled
_SETTLED = 0.01  # settled: the end of the window within 1 % of the final change (half the 2 % band)
_TAIL = 3  # the response is continued for this many windows to integrate the tail


def _settled_loop_response(
    loop: Loop, t_end: Any, points: int, r: float, d: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, float, float, float]:
    """Loop step response whose automatic window covers the settling (doubled while it does not).

    Returns t, y, u on the window, the final value, and the integrals of
    |y - final| and t |y - final| beyond the window (from the same recursion
    continued for ``_TAIL`` windows).
    """
    auto = t_end is None
    t_end, points = _grid(t_end, loop, points)
    final = _closed_loop_final(loop, r, d)
    for _ in range(_EXTEND + 1):
        t, y, u = _loop_response(loop, t_end, points, r, d, impulse=False, extra=_TAIL * (points - 1))
        if not auto or not math.isfinite(final):
            break
        dev = np.abs(y[:points] - final)
        size = abs(final - y[0]) if r else float(np.max(dev))
        if dev[points - 1] <= _SETTLED * size:
            break
        t_end *= 2.0
    tail = np.abs(y[points - 1 :] - final) if math.isfinite(final) else np.full(len(y) - points + 1, np.nan)
    tt = t[points - 1 :]
    h = float(t[1] - t[0])  # trapezoidal rule on the uniform grid
    tail_iae = h * (float(tail.sum()) - 0.5 * float(tail[0] + tail[-1]))
    ttail = tail * tt
    tail_itae = h * (float(ttail.sum()) - 0.5 * float(ttail[0] + ttail[-1]))
    return t[:points], y[:points], u[:points], final, tail_iae, tail_itae


def step_response(sys: Any, t_end: Any = None, points: int = 500) -> StepResponse:
    """Unit step response: open loop for a model, setpoint step for a loop.

    Parameters
    ----------
    sys : LinearModel, Loop or python-control LTI
        Model (unit step of its input) or loop (unit setpoint step).
    t_end : float, optional
        End time; by the rule in the module notes when omitted. [s]
    points : int
        Number of time points. [-]

    Returns
    -------
    StepResponse
    """
    if isinstance(sys, Loop):
        t, y, u, final, tail, tail_t = _settled_loop_response(sys, t_end, points, 1.0, 0.0)
        return StepResponse(t, y, u, np.ones(len(t)), final, "setpoint step", sys.delay, tail, tail_t)
    model = as_linear(sys)
    t_end, points = _grid(t_end, model, points)
    t = np.linspace(0.0, t_end, points)
    y = _open_loop(model, t, impulse=False)
    final = model.dc_gain_si
    final = final if math.isfinite(final) and np.all(model.poles.real < 0) else math.nan
    return StepResponse(t, y, np.ones(points), np.zeros(points), final, "open loop step", model.delay)


def load_response(loop: Loop, t_end: Any = None, points: int = 500) -> StepResponse:
    """Unit load step at the plant input, setpoint held at zero.

    Parameters
    ----------
    loop : Loop
        The loop.
    t_end : float, optional
        End time; automatic when omitted. [s]
    points : int
        Number of time points. [-]

    Returns
    -------
    StepResponse
        ``y`` is the deviation of the measurement, ``u`` the controller's answer.
    """
    if not isinstance(loop, Loop):
        raise ParameterError(f"`loop`: got {type(loop).__name__}, expected a Loop")
    t, y, u, final, tail, tail_t = _settled_loop_response(loop, t_end, points, 0.0, 1.0)
    return StepResponse(t, y, u, np.zeros(len(t)), final, "load step", loop.delay, tail, tail_t)


def impulse_response(sys: Any, t_end: Any = None, points: int = 500) -> StepResponse:
    """Unit impulse response (open loop for a model, setpoint impulse for a loop).

    Parameters
    ----------
    sys : LinearModel, Loop or python-control LTI
        Model or loop.
    t_end : float, optional
        End time; automatic when omitted. [s]
    points : int
        Number of time points. [-]

    Returns
    -------
    StepResponse
        The regular part (a feedthrough's Dirac pulse is left out).
    """
    if isinstance(sys, Loop):
        t_end, points = _grid(t_end, sys, points)
        t, y, u = _loop_response(sys, t_end, points, 1.0, 0.0, impulse=True)
        return StepResponse(t, y, u, np.zeros(points), 0.0, "setpoint impulse", sys.delay)
    model = as_linear(sys)
    t_end, points = _grid(t_end, model, points)
    t = np.linspace(0.0, t_end, points)
    y = _open_loop(model, t, impulse=True)
    return StepResponse(t, y, np.zeros(points), np.zeros(points), 0.0, "open loop impulse", model.delay)
