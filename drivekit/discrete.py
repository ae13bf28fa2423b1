"""The controller at its scan time: discretised PID, zero-order-hold plant, and what sampling costs in margin.

* :func:`discretize_pid` -- the PID's transfer function in z by Tustin,
  backward Euler or forward Euler substitution;
* :func:`zoh_plant` -- the exact zero-order-hold equivalent of a plant,
  dead time included (whole and fractional samples);
* :func:`scan_time_effect` -- phase and gain margin of the continuous loop,
  of the loop with the half-sample delay approximation ``Ts/2``, and the
  exact margins of the sampled loop (ZOH plant and discrete controller).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
import scipy.linalg

from .linear import LinearModel
from .pid import PID
from .units import ParameterError, ParamSpec, to_si

__all__ = ["METHODS", "DiscreteModel", "ScanTimeEffect", "discretize_pid", "scan_time_effect", "zoh_plant"]

#: Substitutions for s understood by :func:`discretize_pid`.
METHODS = ("tustin", "backward_euler", "forward_euler")


def _sample_time(value: Any, name: str = "sample_time") -> float:
    ts = to_si(value, name, ParamSpec("s", "scan time", minimum=0.0, include_minimum=False))
    if not isinstance(ts, float):
        raise ParameterError(f"`{name}`: got {value!r}, expected one scan time > 0 s")
    return ts


@dataclasses.dataclass(frozen=True)
class DiscreteModel:
    """A discrete-time SISO model ``x[k+1] = A x[k] + B u[k]``, ``y[k] = C x[k] + D u[k]``.

    Attributes
    ----------
    A, B, C, D : numpy.ndarray
        State-space matrices.
    sample_time : float
        Sampling interval Ts. [s]
    num, den : numpy.ndarray
        Transfer function in z, highest power first, ``den[0] = 1``.
    method : str
        How it was obtained (``"zoh"``, ``"tustin"``, ...).
    """

    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: np.ndarray
    sample_time: float
    num: np.ndarray
    den: np.ndarray
    method: str

    @property
    def tf(self) -> Any:
        """As a python-control discrete ``TransferFunction`` (dt = sample_time)."""
        import control

        return control.tf(self.num, self.den, self.sample_time)

    def frequency_response(self, omega: Any) -> np.ndarray:
        """H(e^{j w Ts}).

        Parameters
        ----------
        omega : array
            Angular frequencies, up to the Nyquist frequency pi/Ts. [rad/s]

        Returns
        -------
        numpy.ndarray of complex
        """
        w = np.atleast_1d(np.asarray(omega, dtype=float))
        z = np.exp(1j * w * self.sample_time)
        return np.polyval(self.num, z) / np.polyval(self.den, z)

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (item, value, unit): the coefficients in z**-1 for a controller's difference equation."""
        n = len(self.den) - 1
        num = np.concatenate([np.zeros(len(self.den) - len(self.num)), self.num])
        rows = [("sample time", f"{self.sample_time:.4g}", "s"), ("method", self.method, "")]
        rows += [(f"b{i} (u: e[k-{i}])", f"{num[i]:.6g}", "-") for i in range(n + 1)]
        rows += [(f"a{i} (u[k-{i}])", f"{self.den[i]:.6g}", "-") for i in range(1, n + 1)]
        return rows


def _substitute(num: np.ndarray, den: np.ndarray, p: np.ndarray, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Replace s by p(z)/q(z) in num(s)/den(s) and clear the fractions."""
    m = len(den) - 1
    num = np.concatenate([np.zeros(m + 1 - len(num)), num])

    def poly(coeffs: np.ndarray) -> np.ndarray:
        out = np.zeros(1)
        for k, a in enumerate(coeffs[::-1]):  # a_k s^k
            term = np.array([a])
            for _ in range(k):
                term = np.polymul(term, p)
            for _ in range(m - k):
                term = np.polymul(term, q)
            out = np.polyadd(out, term)
        return out

    nz, dz = poly(num), poly(den)
    lead = dz[0]
    return nz / lead, dz / lead


def discretize_pid(pid: PID, sample_time: Any = None, method: str = "tustin") -> DiscreteModel:
    """The PID's feedback path in z at the controller's scan time.

    Parameters
    ----------
    pid : PID
        The continuous controller (any form, with its derivative filter).
    sample_time : float, Quantity or str, optional
        Scan time Ts; default the PID's own ``sample_time``. [s]
    method : str
        ``"tustin"``: ``s = (2/Ts)(z - 1)/(z + 1)``; ``"backward_euler"``:
        ``s = (z - 1)/(Ts z)``; ``"forward_euler"``: ``s = (z - 1)/Ts``.

    Returns
    -------
    DiscreteModel

    Notes
    -----
    Forward Euler maps a stable filter pole to an unstable one when
    ``Ts > 2 tf`` (tf = td/N); it is offered because some controllers
    compute their integral that way, not as a recommendation.

    References
    ----------
    G. F. Franklin, J. D. Powell, M. L. Workman, *Digital Control of
    Dynamic Systems*, 3rd ed., Addison-Wesley 1998, §6.2 (numerical
    integration); K. J. Åström, B. Wittenmark, *Computer-Controlled
    Systems*, 3rd ed., Prentice Hall 1997, §8.2 and §8.5 (digital PID) (from memory).

    Examples
    --------
    >>> d = discretize_pid(PID(2.0, 10.0), 0.1)
    >>> [round(float(x), 6) for x in d.num], [round(float(x), 6) for x in d.den]
    ([2.01, -1.99], [1.0, -1.0])
    """
    if not isinstance(pid, PID):
        raise ParameterError(f"`pid`: got {type(pid).__name__}, expected a drivekit PID")
    if method not in METHODS:
        raise ParameterError(f"`method`: got {method!r}, expected one of {', '.join(map(repr, METHODS))}")
    if sample_time is None:
        if pid.sample_time is None:
            raise ParameterError("`sample_time`: got None and the PID has no scan time, expected a scan time > 0 s")
        sample_time = pid.sample_time
    ts = _sample_time(sample_time)
    tf = pid.tf
    num = np.asarray(tf.num[0][0], dtype=float)
    den = np.asarray(tf.den[0][0], dtype=float)
    if method == "tustin":
        p, q = np.array([2.0, -2.0]), np.array([ts, ts])
    elif method == "backward_euler":
        p, q = np.array([1.0, -1.0]), np.array([ts, 0.0])
    else:
        p, q = np.array([1.0, -1.0]), np.array([ts])
    nz, dz = _substitute(num, den, p, q)
    nz = np.concatenate([np.zeros(len(dz) - len(nz)), nz]) if len(nz) < len(dz) else nz
    a, b, c, d = _tf2ss(nz, dz)
    return DiscreteModel(a, b, c, d, ts, nz, dz, method)


def _tf2ss(num: np.ndarray, den: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    import scipy.signal

    if len(den) == 1:
        return np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.array([[num[-1] / den[0]]])
    a, b, c, d = scipy.signal.tf2ss(num, den)
    return a, b, c, d


def _ss2tf(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    import scipy.signal

    if a.shape[0] == 0:
        return np.array([float(d[0, 0])]), np.array([1.0])
    num, den = scipy.signal.ss2tf(a, b, c, d)
    return np.asarray(num[0], dtype=float), np.asarray(den, dtype=float)


def _integrals(A: np.ndarray, B: np.ndarray, h: float) -> tuple[np.ndarray, np.ndarray]:
    """(e^{A h}, integral_0^h e^{A s} ds B) from one matrix exponential (Van Loan)."""
    n = A.shape[0]
    m = np.zeros((n + 1, n + 1))
    m[:n, :n] = A
    m[:n, n:] = B
    e = scipy.linalg.expm(m * h)
    return e[:n, :n], e[:n, n:]


def zoh_plant(plant: LinearModel, sample_time: Any) -> DiscreteModel:
    """Exact zero-order-hold equivalent of a plant with its dead time.

    Parameters
    ----------
    plant : LinearModel
        Continuous plant, dead time in ``delay``.
    sample_time : float, Quantity or str
        Sampling interval Ts. [s]

    Returns
    -------
    DiscreteModel
        States: the plant's, then (for a fractional delay) the previous
        input, then one state per whole sample of delay.

    Notes
    -----
    With ``theta = d Ts + tau'``, ``0 <= tau' < Ts``, the input held over a
    sample reaches the plant partly in this interval and partly in the next:

    .. math::

        x[k+1] = \\Phi x[k] + \\Gamma_0 u[k-d] + \\Gamma_1 u[k-d-1]

    with ``Phi = e^{A Ts}``, ``Gamma_0 = int_0^{Ts - tau'} e^{A s} ds B`` and
    ``Gamma_1 = e^{A (Ts - tau')} int_0^{tau'} e^{A s} ds B``. Exact at the
    sampling instants for inputs held constant between them.

    References
    ----------
    K. J. Åström, B. Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
    Prentice Hall 1997, §2.3 (sampling a system with time delay); Franklin,
    Powell & Workman, *Digital Control of Dynamic Systems*, 3rd ed., §4.3.4
    (from memory).
    """
    if not isinstance(plant, LinearModel):
        raise ParameterError(f"`plant`: got {type(plant).__name__}, expected a drivekit LinearModel")
    ts = _sample_time(sample_time)
    A, B, C, D = (np.asarray(x, dtype=float) for x in (plant.A, plant.B, plant.C, plant.D))
    n = A.shape[0]
    d = math.floor(plant.delay / ts + 1e-9)
    frac = plant.delay - d * ts
    if frac < 1e-9 * ts:
        frac = 0.0
    if frac == 0.0:
        phi, gam = _integrals(A, B, ts)
        a, b, c, dd = phi, gam, C, D
    else:
        phi_a, gam0 = _integrals(A, B, ts - frac)
        phi_b, g_frac = _integrals(A, B, frac)
        phi = phi_a @ phi_b
        gam1 = phi_a @ g_frac
        # state [x; u[k-1]]
        a = np.zeros((n + 1, n + 1))
        a[:n, :n] = phi
        a[:n, n:] = gam1
        b = np.zeros((n + 1, 1))
        b[:n] = gam0
        b[n, 0] = 1.0
        c = np.hstack([C, D])  # y[k] = C x[k] + D u(k Ts - tau') = C x + D u[k-1]
        dd = np.zeros((1, 1))
    for _ in range(d):  # each whole sample of delay: one shift-register state at the input
        m = a.shape[0]
        a2 = np.zeros((m + 1, m + 1))
        a2[1:, 1:] = a
        a2[1:, :1] = b
        b2 = np.zeros((m + 1, 1))
        b2[0, 0] = 1.0
        c2 = np.hstack([dd, c])
        a, b, c, dd = a2, b2, c2, np.zeros((1, 1))
    num, den = _ss2tf(a, b, c, dd)
    return DiscreteModel(a, b, c, dd, ts, num, den, "zoh")


@dataclasses.dataclass(frozen=True)
class ScanTimeEffect:
    """Margins of a loop run continuously, with the Ts/2 approximation, and exactly sampled.

    Attributes
    ----------
    sample_time : float
        Scan time Ts. [s]
    method : str
        Controller discretisation.
    phase_margin_continuous, phase_margin_half_sample, phase_margin_sampled : float
        Phase margin of the continuous loop, with an added dead time Ts/2, and of
        the sampled loop (ZOH plant, discrete controller). [deg]
    gain_margin_continuous, gain_margin_half_sample, gain_margin_sampled : float
        Gain margins, inf where the phase does not reach -180 deg. [-]
    crossover_continuous, crossover_sampled : float
        Gain-crossover frequencies. [rad/s]
    ms_continuous, ms_half_sample, ms_sampled : float
        Peak sensitivities. [-]
    phase_loss_estimate : float
        ``wc Ts / 2`` in degrees: the half-sample estimate of the phase lost. [deg]
    """

    sample_time: float
    method: str
    phase_margin_continuous: float
    phase_margin_half_sample: float
    phase_margin_sampled: float
    gain_margin_continuous: float
    gain_margin_half_sample: float
    gain_margin_sampled: float
    crossover_continuous: float
    crossover_sampled: float
    ms_continuous: float
    ms_half_sample: float
    ms_sampled: float
    phase_loss_estimate: float

    def table(self) -> list[tuple[str, str, str, str, str]]:
        """Rows (quantity, continuous, with Ts/2 delay, sampled exactly, unit)."""
        return [
            (
                "phase margin",
                f"{self.phase_margin_continuous:.3g}",
                f"{self.phase_margin_half_sample:.3g}",
                f"{self.phase_margin_sampled:.3g}",
                "deg",
            ),
            (
                "gain margin",
                f"{self.gain_margin_continuous:.3g}",
                f"{self.gain_margin_half_sample:.3g}",
                f"{self.gain_margin_sampled:.3g}",
                "-",
            ),
            ("Ms", f"{self.ms_continuous:.3g}", f"{self.ms_half_sample:.3g}", f"{self.ms_sampled:.3g}", "-"),
            ("gain crossover", f"{self.crossover_continuous:.4g}", "", f"{self.crossover_sampled:.4g}", "rad/s"),
        ]


def _margins(w: np.ndarray, loop: np.ndarray) -> tuple[float, float, float, float]:
    """(PM [deg] at the first gain crossover, GM at the first phase crossover, wc, Ms) from sampled L."""
    mag = np.abs(loop)
    ms = float(np.max(1.0 / np.abs(1.0 + loop)))
    phase = np.unwrap(np.angle(loop))
    log_mag = np.log(mag)
    ic = np.nonzero(np.diff(np.sign(log_mag)))[0]
    if ic.size:
        i = ic[0]
        f = -log_mag[i] / (log_mag[i + 1] - log_mag[i])
        wc = float(w[i] * (w[i + 1] / w[i]) ** f)
        pm = float(180.0 + np.degrees(phase[i] + f * (phase[i + 1] - phase[i])))
    else:
        wc, pm = math.nan, math.inf
    ip = np.nonzero(np.diff(np.sign(phase + np.pi)))[0]
    if ip.size:
        i = ip[0]
        f = (-np.pi - phase[i]) / (phase[i + 1] - phase[i])
        gm = float(1.0 / math.exp(log_mag[i] + f * (log_mag[i + 1] - log_mag[i])))
    else:
        gm = math.inf
    return pm, gm, wc, ms


def scan_time_effect(plant: LinearModel, pid: PID, sample_time: Any = None, method: str = "tustin") -> ScanTimeEffect:
    """What running the controller at a scan time does to the loop's margins.

    Parameters
    ----------
    plant : LinearModel
        Continuous plant with its dead time.
    pid : PID
        The controller (continuous design).
    sample_time : float, Quantity or str, optional
        Scan time; default the PID's ``sample_time``. [s]
    method : str
        Controller discretisation, see :func:`discretize_pid`.

    Returns
    -------
    ScanTimeEffect

    Notes
    -----
    The sample and hold acts, for frequencies well below pi/Ts, like a dead
    time of Ts/2, so the phase margin falls by about ``wc Ts/2``. The
    sampled margins are exact: the ZOH plant (:func:`zoh_plant`) and the
    discrete controller evaluated on the unit circle ``z = e^{j w Ts}`` up
    to the Nyquist frequency. Margins are at the first crossings.

    References
    ----------
    K. J. Åström, B. Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
    Prentice Hall 1997, §8.2 (approximating continuous designs; the hold as
    a delay of Ts/2) (from memory); Franklin, Powell & Workman, *Digital Control of Dynamic
    Systems*, 3rd ed., §6.3 (from memory).
    """
    if not isinstance(plant, LinearModel):
        raise ParameterError(f"`plant`: got {type(plant).__name__}, expected a drivekit LinearModel")
    ctrl = discretize_pid(pid, sample_time, method)
    ts = ctrl.sample_time
    gd = zoh_plant(plant, ts)
    w_nyq = math.pi / ts
    rates = np.abs(plant.poles[np.abs(plant.poles) > 0]) if plant.order else np.zeros(0)
    w_lo = 1e-4 * min(float(rates.min()) if rates.size else 1.0, w_nyq)
    w = np.logspace(math.log10(w_lo), math.log10(w_nyq * (1 - 1e-6)), 20000)
    g = plant.frequency_response(w)
    c = pid.frequency_response(w)
    pm_c, gm_c, wc_c, ms_c = _margins(w, g * c)
    pm_h, gm_h, _, ms_h = _margins(w, g * c * np.exp(-1j * w * ts / 2))
    pm_s, gm_s, wc_s, ms_s = _margins(w, gd.frequency_response(w) * ctrl.frequency_response(w))
    return ScanTimeEffect(
        sample_time=ts,
        method=method,
        phase_margin_continuous=pm_c,
        phase_margin_half_sample=pm_h,
        phase_margin_sampled=pm_s,
        gain_margin_continuous=gm_c,
        gain_margin_half_sample=gm_h,
        gain_margin_sampled=gm_s,
        crossover_continuous=wc_c,
        crossover_sampled=wc_s,
        ms_continuous=ms_c,
        ms_half_sample=ms_h,
        ms_sampled=ms_s,
        phase_loss_estimate=math.degrees(wc_c * ts / 2),
    )
