"""Low-order process models for loop tuning, and Skogestad's half rule to obtain them.

* :class:`FOPDT` -- first order plus dead time, ``k e^{-theta s} / (tau s + 1)``;
* :class:`SOPDT` -- second order plus dead time,
  ``k e^{-theta s} / ((tau1 s + 1)(tau2 s + 1))``;
* :class:`IntegratingDeadTime` -- ``k' e^{-theta s} / (s (tau2 s + 1))``
  (``tau2 = 0`` gives the plain integrator with dead time);
* :func:`half_rule` -- reduce a :class:`~drivekit.linear.LinearModel` to one
  of the above.

The gains are in SI units of the plant's output per unit of its input
(e.g. (m**3/s)/%), the times in seconds. Each model gives an exact
:class:`~drivekit.linear.LinearModel` (the dead time kept in ``delay``) and
its frequency response with the dead time exact.
"""

from __future__ import annotations

import dataclasses
import math
from typing import TYPE_CHECKING, Any

import numpy as np

from .linear import LinearModel
from .units import ParameterError, convert_fields, param

__all__ = ["FOPDT", "SOPDT", "IntegratingDeadTime", "half_rule", "transfer_function_model"]


def transfer_function_model(num: Any, den: Any, dead_time: float = 0.0) -> LinearModel:
    """A LinearModel from transfer-function coefficients (highest power first) and a dead time.

    Parameters
    ----------
    num, den : sequence of float
        Numerator and denominator coefficients in s, highest power first;
        proper (len(num) <= len(den)). [SI]
    dead_time : float
        Output dead time. [s]

    Returns
    -------
    LinearModel
        Controllable canonical state-space form.
    """
    num = np.trim_zeros(np.atleast_1d(np.asarray(num, dtype=float)), "f")
    den = np.trim_zeros(np.atleast_1d(np.asarray(den, dtype=float)), "f")
    if den.size == 0 or num.size > den.size:
        raise ParameterError(
            f"`num`: got {len(num)} coefficients for a denominator of {len(den)}; expected a proper model"
        )
    if not math.isfinite(dead_time) or dead_time < 0:
        raise ParameterError(f"`dead_time`: got {dead_time!r} s, expected a dead time >= 0 s")
    return _linear(list(num) if num.size else [0.0], list(den), float(dead_time), {})


def _linear(num: list[float], den: list[float], delay: float, names: dict[str, Any]) -> LinearModel:
    """Controllable-canonical state-space of num/den (proper), as a LinearModel."""
    den_a = np.asarray(den, dtype=float)
    num_a = np.zeros(len(den_a))
    num_a[len(den_a) - len(num) :] = num
    num_a, den_a = num_a / den_a[0], den_a / den_a[0]
    n = len(den_a) - 1
    d = num_a[0]
    resid = num_a[1:] - d * den_a[1:]
    A = np.zeros((n, n))
    if n:
        A[0, :] = -den_a[1:]
        A[1:, :-1] = np.eye(n - 1)
    B = np.zeros((n, 1))
    if n:
        B[0, 0] = 1.0
    C = resid.reshape(1, n)
    D = np.array([[d]])
    return LinearModel(A, B, C, D, delay=delay, **names)


def _names(model: Any) -> dict[str, Any]:
    return {
        "input_name": model.input_name,
        "input_unit": model.input_unit,
        "output_name": model.output_name,
        "output_unit": model.output_unit,
        "output_display_unit": model.output_display_unit,
    }


@dataclasses.dataclass(frozen=True, kw_only=True)
class _ProcessModel:
    input_name: str = "input"
    input_unit: str = ""
    output_name: str = "output"
    output_unit: str = ""
    output_display_unit: str = ""

    if TYPE_CHECKING:  # declared by each model's own fields
        gain: Any
        dead_time: Any

    def __post_init__(self) -> None:
        convert_fields(self)
        if self.gain == 0.0:
            raise ParameterError(f"`gain`: got {self.gain!r}, expected a nonzero process gain")

    def _num_den(self) -> tuple[list[float], list[float]]:
        raise NotImplementedError

    def to_linear(self) -> LinearModel:
        """The model as a :class:`~drivekit.linear.LinearModel`, dead time exact in ``delay``."""
        num, den = self._num_den()
        return _linear(num, den, self.dead_time, _names(self))

    def frequency_response(self, omega: Any) -> np.ndarray:
        """Complex response G(jw) with the dead time exact.

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]

        Returns
        -------
        numpy.ndarray of complex
            In output units per input unit (SI).
        """
        w = np.atleast_1d(np.asarray(omega, dtype=float))
        s = 1j * w
        num, den = self._num_den()
        return np.polyval(num, s) / np.polyval(den, s) * np.exp(-s * self.dead_time)

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (parameter, value, unit) for display."""
        rows = []
        for f in dataclasses.fields(self):
            spec = f.metadata.get("spec")
            if spec is not None:
                rows.append((f.name.replace("_", " "), f"{getattr(self, f.name):.4g}", spec.unit or "-"))
        return rows


@dataclasses.dataclass(frozen=True, kw_only=True)
class FOPDT(_ProcessModel):
    """First order plus dead time: ``G(s) = k e^{-theta s} / (tau s + 1)``.

    Parameters
    ----------
    gain : float
        Steady-state process gain k. [output unit / input unit]
    time_constant : float, Quantity or str
        Lag tau. [s]
    dead_time : float, Quantity or str
        Dead time theta. [s]
    input_name, input_unit, output_name, output_unit, output_display_unit : str
        Labels carried to :meth:`to_linear`.

    Examples
    --------
    >>> m = FOPDT(gain=2.0, time_constant="1 min", dead_time="6 s")
    >>> m.time_constant, float(abs(m.frequency_response(0.0)[0]))
    (60.0, 2.0)
    """

    gain: Any = param("", "process gain")
    time_constant: Any = param("s", "time constant", minimum=0.0)
    dead_time: Any = param("s", "dead time", default=0.0, minimum=0.0)

    def _num_den(self) -> tuple[list[float], list[float]]:
        return [self.gain], [self.time_constant, 1.0]


@dataclasses.dataclass(frozen=True, kw_only=True)
class SOPDT(_ProcessModel):
    """Second order plus dead time: ``G(s) = k e^{-theta s} / ((tau1 s + 1)(tau2 s + 1))``.

    Parameters
    ----------
    gain : float
        Steady-state process gain k. [output unit / input unit]
    time_constant : float, Quantity or str
        Dominant lag tau1. [s]
    time_constant_2 : float, Quantity or str
        Second lag tau2 (<= tau1). [s]
    dead_time : float, Quantity or str
        Dead time theta. [s]
    input_name, input_unit, output_name, output_unit, output_display_unit : str
        Labels carried to :meth:`to_linear`.
    """

    gain: Any = param("", "process gain")
    time_constant: Any = param("s", "dominant time constant", minimum=0.0)
    time_constant_2: Any = param("s", "second time constant", minimum=0.0)
    dead_time: Any = param("s", "dead time", default=0.0, minimum=0.0)

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.time_constant_2 > self.time_constant:
            raise ParameterError(
                f"`time_constant_2`: got {self.time_constant_2:g} s, expected a second time constant "
                f"<= time_constant ({self.time_constant:g} s); swap them"
            )

    def _num_den(self) -> tuple[list[float], list[float]]:
        t1, t2 = self.time_constant, self.time_constant_2
        return [self.gain], [t1 * t2, t1 + t2, 1.0]


@dataclasses.dataclass(frozen=True, kw_only=True)
class IntegratingDeadTime(_ProcessModel):
    """Integrating process with dead time: ``G(s) = k' e^{-theta s} / (s (tau2 s + 1))``.

    Parameters
    ----------
    gain : float
        Integrating gain k' (slope of the output per unit input step).
        [output unit / (input unit * s)]
    dead_time : float, Quantity or str
        Dead time theta. [s]
    time_constant_2 : float, Quantity or str
        Optional lag tau2; 0 for the plain integrator with dead time. [s]
    input_name, input_unit, output_name, output_unit, output_display_unit : str
        Labels carried to :meth:`to_linear`.
    """

    gain: Any = param("", "integrating gain")
    dead_time: Any = param("s", "dead time", default=0.0, minimum=0.0)
    time_constant_2: Any = param("s", "lag", default=0.0, minimum=0.0)

    def _num_den(self) -> tuple[list[float], list[float]]:
        if self.time_constant_2 > 0:
            return [self.gain], [self.time_constant_2, 1.0, 0.0]
        return [self.gain], [1.0, 0.0]


# -- the half rule --------------------------------------------------------------------------
def _gain_and_integrators(model: LinearModel, poles: np.ndarray, zeros: np.ndarray) -> tuple[float, int]:
    """Gain of the time-constant form k prod(T s + 1)/(s^m prod(tau s + 1)) and m."""
    scale = max(1.0, float(np.max(np.abs(np.concatenate([poles, zeros, [1.0]])))))
    is_int = np.abs(poles) < 1e-9 * scale
    s0 = 1j * 2.0 * scale
    g = model.frequency_response(s0.imag)[0] * np.exp(1j * s0.imag * model.delay)
    # g = K prod(s0 - z)/prod(s0 - p); time-constant form gain k = K prod(-z)/prod(-p, p != 0)
    k_hf = g * np.prod(s0 - poles) / np.prod(s0 - zeros)
    k = k_hf * np.prod(-zeros) / np.prod(-poles[~is_int])
    return float(np.real(k)), int(np.count_nonzero(is_int))


def _approximate_lhp_zero(t_zero: float, lags: list[float], tau_c: float) -> tuple[float, list[float]]:
    """Skogestad's rules T1-T3 for one numerator term (T0 s + 1), T0 > 0.

    Returns the gain factor and the new list of lags.
    """
    larger = [t for t in lags if t >= t_zero]
    if larger:
        tau0 = min(larger)
    elif lags:
        tau0 = max(lags)
    else:
        raise ParameterError(
            f"`model`: has a zero with time constant {t_zero:g} s and no lag to set it against; "
            "expected a model with at least as many lags as zeros"
        )
    rest = list(lags)
    rest.remove(tau0)
    if t_zero >= tau0:
        # Rules T1, T1a, T1b
        if tau0 >= tau_c:
            return t_zero / tau0, rest
        if t_zero >= tau_c:
            return t_zero / tau_c, rest
        return 1.0, rest
    tau0_tilde = min(tau0, 5.0 * tau_c)
    if t_zero >= 5.0 * tau_c:  # Rule T2
        return t_zero / tau0, rest
    # Rule T3: (T0 s + 1)/(tau0 s + 1) ~ (tau0~/tau0) / ((tau0~ - T0) s + 1)
    return tau0_tilde / tau0, [*rest, tau0_tilde - t_zero]


def half_rule(model: LinearModel, order: int = 1) -> FOPDT | SOPDT | IntegratingDeadTime:
    """Reduce a linear model to FOPDT or SOPDT by Skogestad's half rule.

    Parameters
    ----------
    model : LinearModel
        Stable real poles (integrators allowed), real zeros, dead time.
    order : int
        1 for FOPDT, 2 for SOPDT. With integrators, an
        :class:`IntegratingDeadTime` (with its lag ``time_constant_2`` for
        ``order=2``). [-]

    Returns
    -------
    FOPDT, SOPDT or IntegratingDeadTime

    Raises
    ------
    ParameterError
        Complex or unstable poles, complex zeros, zeros at the origin, more
        than one integrator, or fewer lags than the order asks for.

    Notes
    -----
    The model is written ``k prod(-T_j s + 1) prod(T_l s + 1) e^{-theta0 s}
    / (s^m prod(tau_i s + 1))``. Right-half-plane zeros ``(-T s + 1)`` are
    approximated by a dead time ``T`` (``e^{-T s}``). Left-half-plane zeros
    ``(T0 s + 1)`` are set against the nearest larger lag tau0 by Skogestad's
    rules T1-T3 with tau_c = the effective dead time found without the
    zero (his recommended choice); most often rule T3:
    ``(T0 s + 1)/(tau0 s + 1) ~ 1/((tau0 - T0) s + 1)``. Then, with lags sorted
    ``tau1 >= tau2 >= ...``, the half rule for ``order=1``:

    .. math:: \\tau = \\tau_1 + \\tau_2/2, \\quad
              \\theta = \\theta_0 + \\tau_2/2 + \\sum_{i\\ge3} \\tau_i + \\sum_j T_j

    and for ``order=2`` ``tau1``, ``tau2 + tau3/2`` with
    ``theta0 + tau3/2 + sum_{i>=4} tau_i + sum_j T_j``. With an integrator,
    it takes the place of tau1 (tau1 -> infinity, as Skogestad treats
    integrating processes): the half of the largest neglected lag given to it
    has no effect, the other half goes to the dead time.

    Valid for dominant real dynamics; complex pole pairs (resonances) are
    refused, because the rule has no version for them.

    References
    ----------
    S. Skogestad, "Simple analytic rules for model reduction and PID
    controller tuning", J. Process Control 13 (2003) 291-309, §2 (half rule,
    eqs. for the numerator approximations T1-T3). DOI 10.1016/S0959-1524(02)00062-8.

    Examples
    --------
    Skogestad (2003) Example E1, ``1/((s+1)(0.2s+1)(0.04s+1)(0.008s+1))``:

    >>> import numpy as np
    >>> lags = [1.0, 0.2, 0.04, 0.008]
    >>> den = np.poly([-1 / t for t in lags]) * np.prod(lags)
    >>> m = half_rule(transfer_function_model([1.0], den), order=1)
    >>> round(m.time_constant, 4), round(m.dead_time, 4)
    (1.1, 0.148)
    """
    if order not in (1, 2):
        raise ParameterError(f"`order`: got {order!r}, expected 1 (FOPDT) or 2 (SOPDT)")
    if not isinstance(model, LinearModel):
        raise ParameterError(f"`model`: got {type(model).__name__}, expected a drivekit LinearModel")
    poles = np.asarray(model.poles, dtype=complex)
    zeros = np.asarray(model.zeros, dtype=complex)
    scale = max(1.0, float(np.max(np.abs(np.concatenate([poles, zeros, [1.0]])))))
    tol = 1e-9 * scale
    # repeated real poles come out of an eigenvalue solver split by about eps**(1/n): allow 1e-3
    complex_poles = poles[np.abs(poles.imag) > 1e-3 * np.abs(poles)]
    if complex_poles.size:
        raise ParameterError(
            f"`model`: has complex poles {np.round(complex_poles, 6).tolist()}; "
            "expected real poles (the half rule has no version for a resonance)"
        )
    if np.any(poles.real > tol):
        raise ParameterError(
            f"`model`: has unstable poles {poles[poles.real > tol].real.tolist()}; expected stable poles"
        )
    if np.any(np.abs(zeros.imag) > 1e-3 * np.abs(zeros)):
        raise ParameterError("`model`: has complex zeros; expected real zeros for the half rule")
    if np.any(np.abs(zeros) < tol):
        raise ParameterError("`model`: has a zero at the origin; expected a process with a steady response")
    k, n_int = _gain_and_integrators(model, poles, zeros)
    if n_int > 1:
        raise ParameterError(f"`model`: has {n_int} integrators, expected at most one")
    lags = sorted((-1.0 / p.real for p in poles if abs(p) >= tol), reverse=True)
    theta0 = float(model.delay)
    rhp = [1.0 / z.real for z in zeros if z.real > 0]
    lhp = sorted((-1.0 / z.real for z in zeros if z.real < 0), reverse=True)
    theta0 += sum(rhp)
    if lhp:
        # tau_c = effective delay of the model without its LHP zeros (Skogestad's choice tau_c = theta)
        tau_c = _reduce(lags, theta0, n_int, order)[2]
        for t_zero in lhp:
            factor, lags = _approximate_lhp_zero(t_zero, lags, tau_c)
            k *= factor
        lags = sorted(lags, reverse=True)
    tau1, tau2, theta = _reduce(lags, theta0, n_int, order)
    names = _names(model)
    if n_int:
        return IntegratingDeadTime(gain=k, dead_time=theta, time_constant_2=tau2 if order == 2 else 0.0, **names)
    if order == 1:
        return FOPDT(gain=k, time_constant=tau1, dead_time=theta, **names)
    return SOPDT(gain=k, time_constant=tau1, time_constant_2=tau2, dead_time=theta, **names)


def _reduce(lags: list[float], theta0: float, n_int: int, order: int) -> tuple[float, float, float]:
    """Half rule on sorted lags: (tau1, tau2, theta); with an integrator tau1 is unused (inf)."""
    full = [math.inf] * n_int + list(lags)
    if len(full) < order:
        if n_int or order == 1:
            full = full + [0.0] * (order - len(full))
        else:
            raise ParameterError(
                f"`order`: got 2 but the model has only {len(lags)} lag; expected order <= the number of lags"
            )
    retained = full[:order]
    neglected = full[order:]
    theta = theta0 + sum(neglected)
    if neglected:
        half = neglected[0] / 2.0
        retained[-1] += half
        theta -= half
    tau1 = retained[0]
    tau2 = retained[1] if order == 2 else 0.0
    return tau1, tau2, theta
