"""PID controllers in the forms the trade uses, and their settings in plant conventions.

:class:`PID` holds a controller in one of three forms (error e = r - y, output u):

* ``"ideal"`` (ISA, standard, non-interacting): ``kp (1 + 1/(ti s) + td s/(tf s + 1))``;
* ``"parallel"`` (independent): ``kp + 1/(ti s) + td s/(tf s + 1)``;
* ``"series"`` (interacting, classic): ``kp (1 + 1/(ti s)) (td s + 1)/(tf s + 1)``;

with the derivative filter time constant ``tf = td / N`` (N =
``derivative_filter``). Inside, everything is SI: kp in controller-output
units per SI unit of the measurement (e.g. %/(m**3/s)), times in seconds.

:meth:`PID.settings` gives the numbers a plant controller is set with:
gain in %/% (or proportional band), reset in min/repeat or repeats/min,
derivative in min, from the transmitter and output spans; and
:meth:`PID.from_settings` builds a PID back from them.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
import pint

from .linear import LinearModel
from .units import ParameterError, ParamSpec, to_si, ureg

__all__ = ["FORMS", "PID", "PlantSettings"]

#: The controller forms understood by :class:`PID`.
FORMS = ("ideal", "parallel", "series")


def _time(value: Any, name: str, what: str, *, allow_inf: bool = False, allow_zero: bool = True) -> float:
    """A time in seconds from a float (SI), Quantity or string; inf allowed where it means 'off'."""
    if allow_inf and isinstance(value, (int, float)) and not isinstance(value, bool) and value == math.inf:
        return math.inf
    spec = ParamSpec("s", what, minimum=-math.inf)
    t = to_si(value, name, spec)
    if not isinstance(t, float):
        raise ParameterError(f"`{name}`: got {value!r}, expected a single {what} in s")
    return t


@dataclasses.dataclass(frozen=True)
class PID:
    """A PID controller in ideal, parallel or series form with derivative filter.

    Parameters
    ----------
    kp : float
        Proportional gain; negative for a direct-acting loop (process gain
        < 0). [output unit / measurement SI unit]
    ti : float, Quantity or str
        Reset (integral) time; ``math.inf`` for no integral action. In the
        parallel form the integral term is ``1/(ti s)``, so ``1/ti`` is the
        integral gain and takes the sign of kp. [s]
    td : float, Quantity or str
        Derivative time; 0 for no derivative action. [s]
    form : str
        ``"ideal"``, ``"parallel"`` or ``"series"``.
    derivative_filter : float
        N in ``tf = td/N``. Default 10, common practice, no source (values
        8-20 are usual). [-]
    setpoint_weights : tuple of float
        ``(b, c)``: fraction of the setpoint in the proportional and
        derivative terms. Default (1, 0): derivative on measurement. [-]
    output_limits : tuple of float, optional
        ``(low, high)`` output limits for simulation. [output unit]
    sample_time : float, Quantity or str, optional
        Scan time of the controller; ``None`` for continuous. [s]

    Notes
    -----
    The three forms are one family of transfer functions
    ``(a2 s^2 + a1 s + a0) / (s (tf s + 1))``; :meth:`to_form` converts
    exactly by matching a2, a1, a0 with tf kept. The series form needs real
    zeros, so an ideal PID converts to series only when ``ti >= 4 td``
    (without filter; the exact condition with the filter is
    ``a1**2 >= 4 a0 a2``).

    References
    ----------
    K. J. Åström, T. Hägglund, *Advanced PID Control*, ISA 2006, §3.2
    (forms of the PID controller, conversion ideal <-> series) (from memory).

    Examples
    --------
    >>> c = PID(2.0, "1 min", "6 s")
    >>> c.ti, c.td
    (60.0, 6.0)
    >>> s = c.to_form("series")
    >>> round(s.kp, 4), round(s.ti, 3), round(s.td, 3)
    (1.7716, 53.149, 7.451)
    """

    kp: float
    ti: Any = math.inf
    td: Any = 0.0
    _: dataclasses.KW_ONLY
    form: str = "ideal"
    derivative_filter: float = 10.0
    setpoint_weights: tuple[float, float] = (1.0, 0.0)
    output_limits: tuple[float, float] | None = None
    sample_time: Any = None

    def __post_init__(self) -> None:
        if self.form not in FORMS:
            raise ParameterError(f"`form`: got {self.form!r}, expected one of {', '.join(map(repr, FORMS))}")
        kp = self.kp
        if isinstance(kp, bool) or not isinstance(kp, (int, float, np.integer, np.floating)):
            raise ParameterError(f"`kp`: got {kp!r}, expected a number (controller gain in SI units)")
        kp = float(kp)
        if not math.isfinite(kp) or kp == 0.0:
            raise ParameterError(f"`kp`: got {kp!r}, expected a finite nonzero gain")
        ti = _time(self.ti, "ti", "reset time", allow_inf=True)
        td = _time(self.td, "td", "derivative time")
        sign = 1.0 if (self.form != "parallel" or kp > 0) else -1.0
        if ti != math.inf and not ti * sign > 0:
            expected = "a reset time > 0 s" if sign > 0 else "a reset time < 0 s (the sign of kp, parallel form)"
            raise ParameterError(f"`ti`: got {ti:g} s, expected {expected} or math.inf for no integral action")
        if td * sign < 0:
            expected = "a derivative time >= 0 s" if sign > 0 else "a derivative time <= 0 s (the sign of kp)"
            raise ParameterError(f"`td`: got {td:g} s, expected {expected}")
        n = self.derivative_filter
        if isinstance(n, bool) or not isinstance(n, (int, float)) or not (math.isfinite(n) and n > 0):
            raise ParameterError(f"`derivative_filter`: got {n!r}, expected N > 0 (finite; tf = td/N)")
        b_c = tuple(self.setpoint_weights)
        if len(b_c) != 2 or not all(isinstance(x, (int, float)) and math.isfinite(x) and x >= 0 for x in b_c):
            raise ParameterError(f"`setpoint_weights`: got {self.setpoint_weights!r}, expected (b, c) with b, c >= 0")
        limits = self.output_limits
        if limits is not None:
            lim = tuple(limits)
            if (
                len(lim) != 2
                or not all(isinstance(x, (int, float)) and math.isfinite(x) for x in lim)
                or lim[0] >= lim[1]
            ):
                raise ParameterError(f"`output_limits`: got {limits!r}, expected (low, high) with low < high")
            limits = (float(lim[0]), float(lim[1]))
        ts = self.sample_time
        if ts is not None:
            ts = _time(ts, "sample_time", "scan time")
            if ts <= 0:
                raise ParameterError(f"`sample_time`: got {ts:g} s, expected a scan time > 0 s or None")
        object.__setattr__(self, "kp", kp)
        object.__setattr__(self, "ti", ti)
        object.__setattr__(self, "td", td)
        object.__setattr__(self, "derivative_filter", float(n))
        object.__setattr__(self, "setpoint_weights", (float(b_c[0]), float(b_c[1])))
        object.__setattr__(self, "output_limits", limits)
        object.__setattr__(self, "sample_time", ts)

    # -- structure -------------------------------------------------------------------
    @property
    def filter_time_constant(self) -> float:
        """Derivative filter time constant tf = td/N (0 without derivative). [s]"""
        return abs(self.td) / self.derivative_filter

    @property
    def has_integral(self) -> bool:
        """Whether the controller has integral action."""
        return self.ti != math.inf

    @property
    def has_derivative(self) -> bool:
        """Whether the controller has derivative action."""
        return self.td != 0.0

    @property
    def kind(self) -> str:
        """``"P"``, ``"PI"``, ``"PD"`` or ``"PID"``."""
        return "P" + ("I" if self.has_integral else "") + ("D" if self.has_derivative else "")

    def coefficients(self) -> tuple[float, float, float, float]:
        """``(a2, a1, a0, tf)`` of ``C(s) = (a2 s^2 + a1 s + a0) / (s (tf s + 1))``.

        Returns
        -------
        tuple of float
            a2 [output unit * s / measurement unit], a1 [output unit / measurement
            unit], a0 [output unit / (measurement unit * s)], tf [s].
        """
        kp, ti, td, tf = self.kp, self.ti, self.td, self.filter_time_constant
        inv_ti = 0.0 if ti == math.inf else 1.0 / ti
        if self.form == "ideal":
            return kp * (tf + td), kp * (1.0 + tf * inv_ti), kp * inv_ti, tf
        if self.form == "parallel":
            return kp * tf + td, kp + tf * inv_ti, inv_ti, tf
        return kp * td, kp * (1.0 + td * inv_ti), kp * inv_ti, tf

    def _num_den(self, weights: tuple[float, float] = (1.0, 1.0)) -> tuple[np.ndarray, np.ndarray]:
        """Numerator and denominator in s; ``weights`` (b, c) give the setpoint path."""
        ideal = self if self.form != "series" else self.to_form("ideal")
        b, c = weights
        kp, ti, td, tf = ideal.kp, ideal.ti, ideal.td, ideal.filter_time_constant
        inv_ti = 0.0 if ti == math.inf else 1.0 / ti
        if ideal.form == "ideal":
            p, i, d = kp * b, kp * inv_ti, kp * td * c
        else:
            p, i, d = kp * b, inv_ti, td * c
        # p + i/s + d s/(tf s + 1) = (p s (tf s + 1) + i (tf s + 1) + d s^2) / (s (tf s + 1))
        num = np.array([p * tf + d, p + i * tf, i])
        den = np.array([tf, 1.0, 0.0])
        if tf == 0.0:
            num, den = num[1:], den[1:]
        if i == 0.0:  # no integrator: cancel the s
            num, den = num[:-1], den[:-1]
            if num.size == 0:
                num = np.array([0.0])
        return num, den

    @property
    def tf(self) -> Any:
        """The controller (feedback path, error to output) as a python-control ``TransferFunction`` (SI)."""
        import control

        num, den = self._num_den()
        return control.tf(num, den, inputs="control error", outputs="controller output")

    @property
    def setpoint_tf(self) -> Any:
        """The setpoint path with weights b, c as a python-control ``TransferFunction`` (SI).

        The controller output is ``u = C_r(s) r - C(s) y`` with ``C_r`` this
        and ``C`` :attr:`tf`. For the series form the weights apply to the
        equivalent ideal form.
        """
        import control

        num, den = self._num_den(self.setpoint_weights)
        return control.tf(num, den, inputs="setpoint", outputs="controller output")

    def to_linear(self) -> LinearModel:
        """The feedback path as a :class:`~drivekit.linear.LinearModel` (proper, with the filter).

        Input ``"control error"``, output ``"controller output"``; a PI has
        one state, a PID two (integrator and filter), a P none.
        """
        return _to_linear(*self._num_den(), "control error")

    def setpoint_to_linear(self) -> LinearModel:
        """The setpoint path (weights b, c) as a :class:`~drivekit.linear.LinearModel`."""
        return _to_linear(*self._num_den(self.setpoint_weights), "setpoint")

    def frequency_response(self, omega: Any) -> np.ndarray:
        """C(jw) of the feedback path.

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]

        Returns
        -------
        numpy.ndarray of complex
        """
        w = np.atleast_1d(np.asarray(omega, dtype=float))
        num, den = self._num_den()
        s = 1j * w
        return np.polyval(num, s) / np.polyval(den, s)

    # -- conversions ---------------------------------------------------------------------
    def to_form(self, form: str) -> PID:
        """The same controller (same transfer function) in another form.

        Parameters
        ----------
        form : str
            ``"ideal"``, ``"parallel"`` or ``"series"``.

        Returns
        -------
        PID
            With tf kept, so ``N`` changes with td.

        Raises
        ------
        ParameterError
            When no exact equivalent exists: to series with complex zeros
            (``ti < 4 td`` without filter); to ideal or series from a parallel
            PID whose terms have different signs.
        """
        if form not in FORMS:
            raise ParameterError(f"`form`: got {form!r}, expected one of {', '.join(map(repr, FORMS))}")
        if form == self.form:
            return self
        a2, a1, a0, tf = self.coefficients()
        if form == "parallel":
            kp = a1 - tf * a0
            ti = math.inf if a0 == 0.0 else 1.0 / a0
            td = a2 - kp * tf
        elif form == "ideal":
            kp = a1 - tf * a0
            ti = math.inf if a0 == 0.0 else kp / a0
            td = a2 / kp - tf
        else:
            disc = a1 * a1 - 4.0 * a0 * a2
            if disc < -1e-12 * a1 * a1:
                raise ParameterError(
                    f"`form`: got 'series' for a PID with ti = {self.ti:g} s and td = {self.td:g} s "
                    f"({self.form} form), expected ti >= 4 td: the series form has real zeros only, "
                    f"this controller has complex zeros (a1**2 - 4 a0 a2 = {disc:.3g} < 0)"
                )
            kp = 0.5 * (a1 + math.copysign(math.sqrt(max(disc, 0.0)), a1))
            ti = math.inf if a0 == 0.0 else kp / a0
            td = a2 / kp
        if ti != math.inf and (ti <= 0) and form != "parallel":
            raise ParameterError(
                f"`form`: got {form!r} for a parallel PID whose integral and proportional terms have "
                f"different signs (kp = {self.kp:g}, ti = {self.ti:g} s); expected terms of one sign"
            )
        td = 0.0 if abs(td) <= 1e-15 * max(abs(a2), 1.0) else td
        n = self.derivative_filter if td == 0.0 or tf == 0.0 else abs(td) / tf
        return dataclasses.replace(self, kp=kp, ti=ti, td=td, form=form, derivative_filter=n)

    def with_sample_time(self, sample_time: Any) -> PID:
        """The same controller with a scan time (``None`` for continuous)."""
        return dataclasses.replace(self, sample_time=sample_time)

    # -- plant conventions -----------------------------------------------------------------
    def settings(
        self,
        measurement_span: tuple[Any, Any],
        output_span: tuple[Any, Any] = (0.0, 100.0),
    ) -> PlantSettings:
        """The settings a plant controller is set with: gain %/%, reset in min/repeat, derivative in min.

        Parameters
        ----------
        measurement_span : tuple of (float, Quantity or str)
            Transmitter range ``(low, high)``, e.g. ``("0 m**3/h", "500 m**3/h")``;
            plain floats are SI. [measurement SI unit]
        output_span : tuple of (float, Quantity or str)
            Controller output range ``(low, high)`` in the output unit of kp,
            default (0, 100) %. [output unit]

        Returns
        -------
        PlantSettings

        Notes
        -----
        ``gain [%/%] = |kp| * (measurement span) / (output span)``, proportional
        band ``= 100 / gain`` [%], ``repeats/min = 60 / ti[s]``. A parallel
        controller is reported through its exact ideal equivalent. kp > 0 (with
        error = setpoint - measurement) is a reverse-acting controller: the
        output falls when the measurement rises.

        References
        ----------
        ANSI/ISA-5.1 and common plant practice for %/% gain, proportional band
        and reset in repeats/min; C. L. Smith, *Practical Process Control*,
        Wiley 2009, §3 (from memory).
        """
        meas_lo, meas_hi, meas_unit = _span(measurement_span, "measurement_span", si=True)
        out_lo, out_hi, out_unit = _span(output_span, "output_span", si=False)
        c = self.to_form("ideal") if self.form == "parallel" else self
        gain = abs(c.kp) * (meas_hi - meas_lo) / (out_hi - out_lo)
        limits = None
        if c.output_limits is not None:
            limits = tuple(100.0 * (x - out_lo) / (out_hi - out_lo) for x in c.output_limits)
        return PlantSettings(
            form=c.form,
            action="reverse" if c.kp > 0 else "direct",
            gain=gain,
            proportional_band=100.0 / gain,
            reset_time=c.ti,
            derivative_time=abs(c.td),
            derivative_filter=c.derivative_filter,
            setpoint_weights=c.setpoint_weights,
            output_limits=limits,
            sample_time=c.sample_time,
            measurement_span=(meas_lo, meas_hi),
            measurement_unit=meas_unit,
            output_span=(out_lo, out_hi),
            output_unit=out_unit,
        )

    @classmethod
    def from_settings(
        cls,
        *,
        measurement_span: tuple[Any, Any],
        output_span: tuple[Any, Any] = (0.0, 100.0),
        gain: float | None = None,
        proportional_band: float | None = None,
        reset: Any = None,
        repeats_per_min: float | None = None,
        derivative: Any = 0.0,
        action: str = "reverse",
        form: str = "ideal",
        derivative_filter: float = 10.0,
        setpoint_weights: tuple[float, float] = (1.0, 0.0),
        sample_time: Any = None,
    ) -> PID:
        """Build a PID from the settings of a plant controller.

        Parameters
        ----------
        measurement_span : tuple of (float, Quantity or str)
            Transmitter range ``(low, high)``; floats are SI. [measurement SI unit]
        output_span : tuple of (float, Quantity or str)
            Output range, default (0, 100) %. [output unit]
        gain : float, optional
            Controller gain. [%/%]
        proportional_band : float, optional
            Proportional band, instead of ``gain``. [%]
        reset : float, Quantity or str, optional
            Reset time per repeat, e.g. ``"0.2 min"``; floats are seconds.
            None (and no ``repeats_per_min``) for no integral action. [s]
        repeats_per_min : float, optional
            Reset rate, instead of ``reset``. [1/min]
        derivative : float, Quantity or str
            Derivative time, e.g. ``"0.1 min"``; floats are seconds. [s]
        action : str
            ``"reverse"`` (kp > 0) or ``"direct"`` (kp < 0).
        form : str
            The controller's form, ``"ideal"`` or ``"series"``.
        derivative_filter : float
            N. [-]
        setpoint_weights : tuple of float
            (b, c). [-]
        sample_time : float, Quantity or str, optional
            Scan time. [s]

        Returns
        -------
        PID
            kp in output unit per measurement SI unit.

        Examples
        --------
        >>> c = PID.from_settings(gain=0.5, repeats_per_min=5.0, measurement_span=("0 m**3/h", "500 m**3/h"))
        >>> round(c.kp * (500 / 3600) / 100, 6), c.ti
        (0.5, 12.0)
        """
        if (gain is None) == (proportional_band is None):
            raise ParameterError(
                f"`gain`: got gain={gain!r} and proportional_band={proportional_band!r}, expected exactly one of them"
            )
        if gain is None:
            if not (isinstance(proportional_band, (int, float)) and math.isfinite(proportional_band)):
                raise ParameterError(f"`proportional_band`: got {proportional_band!r}, expected a band > 0 %")
            if proportional_band <= 0:
                raise ParameterError(f"`proportional_band`: got {proportional_band!r} %, expected a band > 0 %")
            gain = 100.0 / proportional_band
        if not (isinstance(gain, (int, float)) and math.isfinite(gain) and gain > 0):
            raise ParameterError(f"`gain`: got {gain!r}, expected a controller gain > 0 %/%")
        if reset is not None and repeats_per_min is not None:
            raise ParameterError(
                f"`reset`: got reset={reset!r} and repeats_per_min={repeats_per_min!r}, expected at most one of them"
            )
        if repeats_per_min is not None:
            if not (isinstance(repeats_per_min, (int, float)) and math.isfinite(repeats_per_min)):
                raise ParameterError(f"`repeats_per_min`: got {repeats_per_min!r}, expected a reset rate >= 0 1/min")
            if repeats_per_min < 0:
                raise ParameterError(f"`repeats_per_min`: got {repeats_per_min!r} 1/min, expected a reset rate >= 0")
            ti = math.inf if repeats_per_min == 0 else 60.0 / repeats_per_min
        elif reset is None:
            ti = math.inf
        else:
            ti = _time(reset, "reset", "reset time", allow_inf=True)
        if action not in ("reverse", "direct"):
            raise ParameterError(f"`action`: got {action!r}, expected 'reverse' or 'direct'")
        if form not in ("ideal", "series"):
            raise ParameterError(f"`form`: got {form!r}, expected 'ideal' or 'series' for plant settings")
        meas_lo, meas_hi, _ = _span(measurement_span, "measurement_span", si=True)
        out_lo, out_hi, _ = _span(output_span, "output_span", si=False)
        kp = gain * (out_hi - out_lo) / (meas_hi - meas_lo)
        if action == "direct":
            kp = -kp
        return cls(
            kp,
            ti,
            derivative,
            form=form,
            derivative_filter=derivative_filter,
            setpoint_weights=setpoint_weights,
            sample_time=sample_time,
        )

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (parameter, value, unit) in SI."""
        rows = [
            ("form", self.form, ""),
            ("kp", f"{self.kp:.4g}", "output unit per measurement SI unit"),
            ("ti", "off" if self.ti == math.inf else f"{self.ti:.4g}", "s"),
            ("td", f"{self.td:.4g}", "s"),
            ("derivative filter N", f"{self.derivative_filter:.4g}", "-"),
            ("setpoint weights b, c", f"{self.setpoint_weights[0]:g}, {self.setpoint_weights[1]:g}", "-"),
        ]
        if self.output_limits is not None:
            rows.append(("output limits", f"{self.output_limits[0]:g} .. {self.output_limits[1]:g}", "output unit"))
        if self.sample_time is not None:
            rows.append(("scan time", f"{self.sample_time:.4g}", "s"))
        return rows


def _to_linear(num: np.ndarray, den: np.ndarray, input_name: str) -> LinearModel:
    from .models import transfer_function_model

    lin = transfer_function_model(num, den)
    return dataclasses.replace(lin, input_name=input_name, output_name="controller output")


def _span(span: Any, name: str, *, si: bool) -> tuple[float, float, str]:
    """(low, high, unit text) of a span; SI for the measurement, the output's own unit otherwise."""
    try:
        lo_given, hi_given = span
    except (TypeError, ValueError):
        raise ParameterError(f"`{name}`: got {span!r}, expected (low, high)") from None
    values = []
    unit_text = ""
    first_unit: Any = None
    for v in (lo_given, hi_given):
        q: Any = v
        if isinstance(v, str):
            try:
                q = ureg.Quantity(v.strip())
            except Exception:
                raise ParameterError(f"`{name}`: could not read {v!r}; expected a value with its unit") from None
        if isinstance(q, pint.Quantity):
            if first_unit is None:
                first_unit = q.units
                unit_text = f"{q.units:~P}"
            try:
                same = q.to(first_unit)
                mag = q.to_base_units().magnitude if si else same.magnitude
            except pint.DimensionalityError:
                raise ParameterError(f"`{name}`: got {span!r}, expected low and high in one kind of unit") from None
        elif isinstance(q, (int, float, np.integer, np.floating)) and not isinstance(q, bool):
            mag = float(q)
        else:
            raise ParameterError(f"`{name}`: got {v!r}, expected a number or a value with its unit")
        values.append(float(mag))
    lo, hi = values
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        raise ParameterError(f"`{name}`: got {span!r}, expected (low, high) with low < high")
    if not unit_text:
        unit_text = "SI" if si else "%"
    return lo, hi, unit_text


@dataclasses.dataclass(frozen=True)
class PlantSettings:
    """A PID's settings in the conventions of plant controllers.

    Attributes
    ----------
    form : str
        ``"ideal"`` or ``"series"``.
    action : str
        ``"reverse"`` (output falls as the measurement rises) or ``"direct"``.
    gain : float
        Controller gain. [%/%]
    proportional_band : float
        100 / gain. [%]
    reset_time : float
        Reset (integral) time, inf without integral action. [s]
    derivative_time : float
        Derivative time. [s]
    derivative_filter : float
        N. [-]
    setpoint_weights : tuple of float
        (b, c). [-]
    output_limits : tuple of float or None
        Output limits. [% of output span]
    sample_time : float or None
        Scan time. [s]
    measurement_span : tuple of float
        Transmitter range. [measurement SI unit]
    measurement_unit : str
        Unit the span was given in.
    output_span : tuple of float
        Output range. [output unit]
    output_unit : str
        Output unit.
    """

    form: str
    action: str
    gain: float
    proportional_band: float
    reset_time: float
    derivative_time: float
    derivative_filter: float
    setpoint_weights: tuple[float, float]
    output_limits: tuple[float, ...] | None
    sample_time: float | None
    measurement_span: tuple[float, float]
    measurement_unit: str
    output_span: tuple[float, float]
    output_unit: str

    @property
    def reset_min_per_repeat(self) -> float:
        """Reset time in minutes per repeat (inf without integral action). [min]"""
        return self.reset_time / 60.0

    @property
    def repeats_per_min(self) -> float:
        """Reset rate (0 without integral action). [1/min]"""
        return 60.0 / self.reset_time

    @property
    def derivative_min(self) -> float:
        """Derivative time in minutes. [min]"""
        return self.derivative_time / 60.0

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (setting, value, unit) ready to type into a controller."""
        off = self.reset_time == math.inf
        rows = [
            ("controller form", self.form, ""),
            ("action", self.action, ""),
            ("gain", f"{self.gain:.3g}", "%/%"),
            ("proportional band", f"{self.proportional_band:.3g}", "%"),
            ("reset", "off" if off else f"{self.reset_min_per_repeat:.3g}", "min/repeat"),
            ("reset rate", "0" if off else f"{self.repeats_per_min:.3g}", "repeats/min"),
            ("reset time", "off" if off else f"{self.reset_time:.3g}", "s"),
            ("derivative", f"{self.derivative_min:.3g}", "min"),
            ("derivative time", f"{self.derivative_time:.3g}", "s"),
        ]
        if self.derivative_time > 0:
            rows.append(("derivative filter N", f"{self.derivative_filter:.3g}", "-"))
        rows.append(("setpoint weights b, c", f"{self.setpoint_weights[0]:g}, {self.setpoint_weights[1]:g}", "-"))
        if self.output_limits is not None:
            rows.append(("output limits", f"{self.output_limits[0]:.3g} .. {self.output_limits[1]:.3g}", "%"))
        if self.sample_time is not None:
            rows.append(("scan time", f"{self.sample_time:.3g}", "s"))
        return rows
