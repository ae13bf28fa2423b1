"""Loop margins that never lie, and step / load-disturbance metrics.

Crossings are found on a dense logarithmic grid of the exact frequency
response (dead time exact) and then refined by root finding (Brent's method)
on the response itself, not read off the grid. Stability is decided from the
closed-loop poles: eigenvalues of the closed-loop state matrix without dead
time; with dead time the Nyquist criterion, counting the turns of
``1 + L(jw)`` about the origin together with the open-loop poles.
"""

from __future__ import annotations

import dataclasses
import math
import weakref
from typing import Any

import numpy as np

from .frequency import (
    GAIN_CROSSOVER,
    PHASE_CROSSOVER,
    S_PEAK,
    T_LEVEL,
    T_PEAK,
    crossing,
    loop_value,
    margin_samples,
    responses_at,
    target,
)
from .linear import LinearModel
from .loop import Loop, as_linear
from .metrics import LoadMetrics, StepMetrics, load_metrics, step_metric_arrays, step_metrics
from .responses import zpk
from .units import ParameterError

__all__ = [
    "Crossing",
    "LoadMetrics",
    "Margins",
    "StepMetrics",
    "closed_loop_unstable_poles",
    "load_metrics",
    "loop_is_stable",
    "loop_margins",
    "step_metric_arrays",
    "step_metrics",
]

_PER_DECADE = 60


@dataclasses.dataclass(frozen=True)
class Crossing:
    """One crossing of the open loop: |L| = 1 (gain crossover) or phase -180 deg (phase crossover).

    Attributes
    ----------
    kind : str
        ``"gain crossover"`` or ``"phase crossover"``.
    omega : float
        Frequency. [rad/s]
    hz : float
        Frequency. [Hz]
    magnitude : float
        |L| there. [-]
    phase_deg : float
        Phase of L there, in (-360, 0]. [deg]
    gain_margin : float
        1/|L| at a phase crossover (nan at a gain crossover). [-]
    phase_margin : float
        180 + phase, wrapped to (-180, 180], at a gain crossover (nan otherwise). [deg]
    delay_margin : float
        Extra dead time that brings this crossover onto -1 (nan at a phase crossover). [s]
    """

    kind: str
    omega: float
    hz: float
    magnitude: float
    phase_deg: float
    gain_margin: float
    phase_margin: float
    delay_margin: float


@dataclasses.dataclass(frozen=True)
class Margins:
    """Stability margins of a loop, with every crossing and a plain-words verdict.

    Attributes
    ----------
    gain_margin : float
        Headline gain margin (the crossing closest to 0 dB). [-]
    gain_margin_db : float
        The same in dB. [dB]
    phase_margin : float
        Headline phase margin (the smallest in size). [deg]
    gain_crossover : float
        Frequency of the headline phase margin. [rad/s]
    phase_crossover : float
        Frequency of the headline gain margin. [rad/s]
    gain_crossover_hz, phase_crossover_hz : float
        The same in Hz. [Hz]
    delay_margin : float
        Smallest extra dead time over all gain crossovers that makes the loop
        unstable (0 when already unstable). [s]
    ms : float
        Peak sensitivity max |S|. [-]
    mt : float
        Peak complementary sensitivity max |T|. [-]
    bandwidth : float
        First frequency where |T| falls 3 dB below its low-frequency value. [rad/s]
    stable : bool
        Closed-loop stability from the closed-loop poles.
    unstable_poles : int
        Number of closed-loop poles in the right half plane. [-]
    open_loop_unstable_poles : int
        Open-loop poles in the right half plane. [-]
    verdict : str
        Plain words.
    crossings : tuple of Crossing
        Every crossing found, by frequency.
    delay : float
        Dead time in the loop. [s]
    """

    gain_margin: float
    gain_margin_db: float
    phase_margin: float
    gain_crossover: float
    phase_crossover: float
    gain_crossover_hz: float
    phase_crossover_hz: float
    delay_margin: float
    ms: float
    mt: float
    bandwidth: float
    stable: bool
    unstable_poles: int
    open_loop_unstable_poles: int
    verdict: str
    crossings: tuple[Crossing, ...]
    delay: float

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (quantity, value, unit) for display."""
        return [
            ("verdict", self.verdict, ""),
            ("gain margin", f"{self.gain_margin:.3g} ({self.gain_margin_db:.3g} dB)", "-"),
            ("phase crossover", f"{self.phase_crossover:.4g} ({self.phase_crossover_hz:.3g} Hz)", "rad/s"),
            ("phase margin", f"{self.phase_margin:.3g}", "deg"),
            ("gain crossover", f"{self.gain_crossover:.4g} ({self.gain_crossover_hz:.3g} Hz)", "rad/s"),
            ("delay margin", f"{self.delay_margin:.3g}", "s"),
            ("Ms = max |S|", f"{self.ms:.3g}", "-"),
            ("Mt = max |T|", f"{self.mt:.3g}", "-"),
            ("bandwidth (-3 dB of T)", f"{self.bandwidth:.4g}", "rad/s"),
        ]


# ---------------------------------------------------------------------------------------
def _as_open_loop(L: Any, delay: float) -> LinearModel:
    if isinstance(L, Loop):
        return as_linear(L.open_loop, delay)
    return as_linear(L, delay)


def _unstable_count(poles: np.ndarray, scale: float) -> int:
    return int(np.sum(poles.real > 1e-9 * scale))


def _nyquist_unstable(p: np.ndarray, w: np.ndarray, lw: np.ndarray, d_inf: float) -> int:
    """Closed-loop right-half-plane poles by the argument principle on P = det(sI - A)(1 + L).

    For a retarded loop (|L| -> |d_inf| < 1 at high frequency) the change of
    arg P(jw) over w in [0, inf) is (n - 2 Z) pi/2 (Pontryagin's form of the
    argument principle; Stepan, *Retarded Dynamical Systems*, 1989, Ch. 2 (from
    memory)), with n open-loop poles and Z closed-loop poles in the right half plane.
    """
    n = len(p)
    arg_d = float(np.sum(math.pi / 2.0 - np.angle(1j * w[0] - p)))
    one = 1.0 + lw
    turn = float(np.sum(np.angle(one[1:] / one[:-1])))  # the unwrapped phase change (grid steps < pi)
    tail = float(np.angle((1.0 + d_inf) / one[-1]))
    total = arg_d + turn + tail
    z = (n - 2.0 * total / math.pi) / 2.0
    return max(0, round(z))


def closed_loop_unstable_poles(L: Any, delay: float = 0.0) -> int:
    """Number of closed-loop poles in the right half plane for unity negative feedback around L.

    Parameters
    ----------
    L : LinearModel, Loop or python-control LTI
        Open loop.
    delay : float
        Dead time added to the model's own. [s]

    Returns
    -------
    int
    """
    return _evaluated(_as_open_loop(L, delay)).unstable


def loop_is_stable(L: Any, delay: float = 0.0) -> bool:
    """True when every closed-loop pole lies in the open left half plane.

    Parameters
    ----------
    L : LinearModel, Loop or python-control LTI
        Open loop.
    delay : float
        Dead time added to the model's own. [s]
    """
    return closed_loop_unstable_poles(L, delay) == 0


class _Evaluated:
    """The open loop on its margin grid, kept per model object (margins, stability and responses share it)."""

    def __init__(self, model: LinearModel) -> None:
        z, p, k = zpk(model)
        # the factors as the compiled grid and refinement take them
        self.factors = (np.ascontiguousarray(z, complex), np.ascontiguousarray(p, complex), float(k), model.delay)
        w, lw = margin_samples(*self.factors, _PER_DECADE)
        self.model, self.z, self.p, self.k, self.w, self.lw = model, z, p, k, w, lw
        self._unstable: int | None = None

    @property
    def unstable(self) -> int:
        if self._unstable is None:
            self._unstable = _closed_loop_unstable(self.model, self.z, self.p, self.w, self.lw, self.k)
        return self._unstable


_EVALUATED: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _evaluated(model: LinearModel) -> _Evaluated:
    hit = _EVALUATED.get(model)
    if hit is None:
        hit = _EVALUATED[model] = _Evaluated(model)
    return hit


def _closed_loop_unstable(
    model: LinearModel, z: np.ndarray, p: np.ndarray, w: np.ndarray, lw: np.ndarray, k: float
) -> int:
    d = float(model.D[0, 0])
    if model.delay == 0 or model.order == 0:
        if model.order == 0:
            return 0
        if abs(1.0 + d) < 1e-12:
            return model.order
        acl = model.A - np.outer(model.B[:, 0], model.C[0]) / (1.0 + d)
        cl = np.linalg.eigvals(acl)
        return _unstable_count(cl, max(1.0, float(np.max(np.abs(cl)))))
    if abs(d) >= 0.5:
        raise ParameterError(
            f"`L`: has a feedthrough of {d:g} together with a dead time; expected |D| < 0.5 "
            "(otherwise the loop is of neutral type and the count is not decided here)"
        )
    return _nyquist_unstable(np.asarray(p, complex), w, lw, d)


def _sign_changes(x: np.ndarray) -> np.ndarray:
    """Indices i where x changes sign between i and i+1, or is exactly 0 at i (each crossing once)."""
    s = np.sign(x)
    return np.nonzero((s[:-1] * s[1:] < 0) | (s[:-1] == 0))[0]


def _peaks(ev: _Evaluated, s_abs: np.ndarray, t_abs: np.ndarray) -> tuple[float, float]:
    """Maxima of |S| and |T| near their grid maxima, where their slopes in w change sign.

    d ln|S|/dw = -Re(L'/(1 + L)) and d ln|T|/dw = Re(L'/(L (1 + L))) with
    L' = dL/dw; the zero of the slope between the grid neighbours of the
    grid maximum is found by Brent's method. Without a sign change there
    the maximum is zoomed into (five 8-fold zooms on log w).
    """
    w = ev.w
    out = []
    for kind, peak, vals in ((0, S_PEAK, s_abs), (1, T_PEAK, t_abs)):
        i = int(np.argmax(vals))
        best = float(vals[i])
        if 0 < i < len(w) - 1:
            a, b = float(w[i - 1]), float(w[i + 1])
            if target(peak, *ev.factors, 1.0, a) > 0.0 > target(peak, *ev.factors, 1.0, b):
                v = loop_value(*ev.factors, crossing(peak, *ev.factors, a, b))
                best = max(best, abs(1.0 / (1.0 + v)) if kind == 0 else abs(v / (1.0 + v)))
            else:
                best = max(best, _zoom_peak(ev, kind, i))
        out.append(best)
    return out[0], out[1]


def _zoom_peak(ev: _Evaluated, kind: int, i: int) -> float:
    """Maximum of |S| (kind 0) or |T| (kind 1) near grid point i: five 8-fold zooms on log w."""
    w = ev.w
    lo, hi = math.log(w[i - 1]), math.log(w[i + 1])
    best = -math.inf
    for _ in range(5):
        x = lo + (hi - lo) * _FRAC
        v = responses_at(*ev.factors, np.exp(x))
        f = np.abs(1.0 / (1.0 + v)) if kind == 0 else np.abs(v / (1.0 + v))
        j = int(np.argmax(f))
        best = max(best, float(f[j]))
        j = min(max(j, 1), 15)
        lo, hi = float(x[j - 1]), float(x[j + 1])
    return best


_FRAC = np.linspace(0.0, 1.0, 17)


def loop_margins(L: Any, delay: float = 0.0) -> Margins:
    """Gain, phase and delay margins, Ms, Mt, bandwidth and a stability verdict of a loop.

    Parameters
    ----------
    L : LinearModel, Loop or python-control LTI
        The open loop L = C G (its own dead time included), or a :class:`Loop`.
    delay : float
        Dead time added to the model's own. [s]

    Returns
    -------
    Margins

    Notes
    -----
    Gain margin at a phase crossover w180 (Im L = 0, Re L < 0): 1/|L(j w180)|;
    phase margin at a gain crossover wc (|L| = 1): 180 deg + arg L(j wc);
    delay margin PM/wc with the phase margin taken in [0, 360) deg; Ms and Mt
    (Astrom & Murray, *Feedback Systems*, 2nd ed., 2021, §10.3 and §13.3).
    The headline gain margin is the crossing nearest 0 dB and the headline
    phase margin the smallest in size, as python-control's
    ``stability_margins`` reports them; every crossing is in ``crossings``.
    Margins are only meaningful as distances to instability when the loop is
    stable; ``verdict`` says so in plain words.

    Examples
    --------
    >>> import control
    >>> m = loop_margins(control.tf([1.0], [1.0, 3.0, 2.0, 0.0]))
    >>> round(m.gain_margin, 9), round(m.phase_crossover**2, 9)
    (6.0, 2.0)
    """
    model = _as_open_loop(L, delay)
    ev = _evaluated(model)
    z, p, w, lw, k = ev.z, ev.p, ev.w, ev.lw, ev.k
    theta = model.delay

    crossings: list[Crossing] = []
    mag = np.abs(lw)
    logm = np.log(np.maximum(mag, 1e-300))
    for i in _sign_changes(logm):
        wc = crossing(GAIN_CROSSOVER, *ev.factors, w[i], w[i + 1])
        val = loop_value(*ev.factors, wc)
        ph = math.degrees(math.atan2(val.imag, val.real))
        pm = ((ph + 180.0 + 180.0) % 360.0) - 180.0
        if pm == -180.0:
            pm = 180.0
        dm = math.radians(pm % 360.0) / wc
        crossings.append(Crossing("gain crossover", wc, wc / (2 * math.pi), abs(val), _ph(val), math.nan, pm, dm))
    im = lw.imag
    if theta > 0:  # beyond the densely sampled band |L| < 0.01: gain margins above 40 dB are not listed
        big = np.nonzero(mag >= 0.01)[0]
        im = im[: (big[-1] + 2 if len(big) else 1)]
    for i in _sign_changes(im):
        if lw.real[i] >= 0 and lw.real[i + 1] >= 0:
            continue
        w180 = crossing(PHASE_CROSSOVER, *ev.factors, w[i], w[i + 1])
        val = loop_value(*ev.factors, w180)
        if val.real >= 0:
            continue
        gm = 1.0 / abs(val)
        crossings.append(
            Crossing("phase crossover", w180, w180 / (2 * math.pi), abs(val), _ph(val), gm, math.nan, math.nan)
        )
    crossings.sort(key=lambda c: c.omega)

    n_rhp_cl = ev.unstable
    n_rhp_ol = _unstable_count(np.asarray(p), max(1.0, float(np.max(np.abs(p), initial=0.0))))
    stable = n_rhp_cl == 0
    gains = [c for c in crossings if c.kind == "phase crossover"]
    phases = [c for c in crossings if c.kind == "gain crossover"]
    if gains:
        g_head = min(gains, key=lambda c: abs(math.log(c.gain_margin)))
        gm, w180 = g_head.gain_margin, g_head.omega
    else:
        gm, w180 = math.inf, math.nan
    if phases:
        p_head = min(phases, key=lambda c: abs(c.phase_margin))
        pm, wc = p_head.phase_margin, p_head.omega
        dm = min(c.delay_margin for c in phases) if stable else 0.0
    else:
        pm, wc = math.inf, math.nan
        dm = math.inf if stable else 0.0

    s_abs = 1.0 / np.abs(1.0 + lw)
    t_abs = mag * s_abs

    ms, mt = _peaks(ev, s_abs, t_abs)
    t0, s0 = _dc_sensitivities(z, p, k)
    d_inf = float(model.D[0, 0])
    # the peaks may sit at the ends of the axis (w -> 0 or w -> inf)
    ms = max(ms, s0, 1.0 / abs(1.0 + d_inf))
    mt = max(mt, t0, abs(d_inf / (1.0 + d_inf)))
    bw = _bandwidth(ev, t_abs, t0)
    verdict = _verdict(stable, n_rhp_cl, n_rhp_ol, gains, phases)
    with np.errstate(divide="ignore"):
        gm_db = 20.0 * math.log10(gm) if gm > 0 else -math.inf
    return Margins(
        gm, gm_db, pm, wc, w180, wc / (2 * math.pi), w180 / (2 * math.pi), dm, ms, mt, bw,
        stable, n_rhp_cl, n_rhp_ol, verdict, tuple(crossings), theta,
    )  # fmt: skip


def _ph(val: complex) -> float:
    ph = math.degrees(math.atan2(val.imag, val.real))
    return ph - 360.0 if ph > 0 else ph


def _dc_sensitivities(z: np.ndarray, p: np.ndarray, k: float) -> tuple[float, float]:
    """(|T(0)|, |S(0)|): (1, 0) with an integrator in L, else from L(0)."""
    scale = max(1.0, float(np.max(np.abs(np.concatenate([z, p])), initial=0.0)))
    n_int = int(np.sum(np.abs(p) < 1e-12 * scale)) - int(np.sum(np.abs(z) < 1e-12 * scale))
    if n_int > 0:
        return 1.0, 0.0
    if n_int < 0:
        return 0.0, 1.0
    pz = p[np.abs(p) >= 1e-12 * scale]
    zz = z[np.abs(z) >= 1e-12 * scale]
    l0 = (k * np.prod(-zz) / np.prod(-pz)).real
    if l0 == -1.0:
        return math.inf, math.inf
    return abs(l0 / (1.0 + l0)), abs(1.0 / (1.0 + l0))


def _bandwidth(ev: _Evaluated, t_abs: np.ndarray, ref: float) -> float:
    if not math.isfinite(ref) or ref <= 0:
        return math.nan
    level = ref / math.sqrt(2.0)
    below = np.nonzero(t_abs < level)[0]
    if not len(below) or below[0] == 0:
        return math.nan
    i = below[0]
    return crossing(T_LEVEL, *ev.factors, ev.w[i - 1], ev.w[i], level)


def _verdict(stable: bool, n_cl: int, n_ol: int, gains: list[Crossing], phases: list[Crossing]) -> str:
    if not stable:
        return f"unstable: {n_cl} closed-loop pole{'s' if n_cl != 1 else ''} in the right half plane"
    text = "stable"
    if n_ol:
        text += (
            f"; the open loop has {n_ol} unstable pole{'s' if n_ol != 1 else ''}, so the loop is only stable "
            "with the controller active"
        )
    low = [c for c in gains if c.gain_margin < 1.0]
    high = [c for c in gains if c.gain_margin > 1.0]
    if low:
        lim = max(c.gain_margin for c in low)
        text += f"; conditionally stable: reducing the loop gain below {lim:.3g} times makes it unstable"
    if high:
        text += f"; raising the loop gain {min(c.gain_margin for c in high):.3g} times makes it unstable"
    if not phases:
        text += "; |L| never crosses 1, so there is no phase margin"
    return text
