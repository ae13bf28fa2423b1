"""Linear models of a drive train at an operating point: the numbers a loop is designed on."""

from __future__ import annotations

import dataclasses
import functools
import math
from typing import Any

import numpy as np
import scipy.linalg

from .units import pretty_unit, ureg

__all__ = ["FactoredForm", "LinearModel", "Mode", "ModelComparison"]

_ZERO_TOL = 1e-9


@dataclasses.dataclass(frozen=True)
class Mode:
    """One mode (a real pole or a complex pair) of a linear model.

    Attributes
    ----------
    pole : complex
        The pole (upper one of a pair). [1/s]
    time_constant : float
        -1/Re(pole): the decay time of the mode (its envelope for a pair);
        inf for an integrator, negative for an unstable mode. [s]
    natural_frequency : float
        |pole|. [rad/s]
    damping : float
        Damping ratio -Re(pole)/|pole|; 1 for a stable real pole. [-]
    stage : str
        The stage whose states take the largest part in the mode.
    participation : dict
        Participation factor of each state in the mode, summing to 1. [-]
    """

    pole: complex
    time_constant: float
    natural_frequency: float
    damping: float
    stage: str
    participation: dict[str, float]


@dataclasses.dataclass(frozen=True)
class FactoredForm:
    """A transfer function written as gain times time-constant factors.

    Attributes
    ----------
    gain : float
        Low-frequency gain K in display units (with integrators, the gain of
        s**k G(s)). [output unit / input unit]
    gain_unit : str
        Unit of ``gain``.
    numerator, denominator : tuple of str
        Factors such as ``"(1 + 2.31 s)"``, ``"s"``,
        ``"(1 + 0.12 s + 0.0036 s^2)"``.
    delay : float
        Dead time. [s]
    """

    gain: float
    gain_unit: str
    numerator: tuple[str, ...]
    denominator: tuple[str, ...]
    delay: float

    @property
    def text(self) -> str:
        """The whole expression as one line."""
        num = f"{self.gain:.4g}" + (" " + " ".join(self.numerator) if self.numerator else "")
        den = " ".join(self.denominator)
        body = f"{num} / ({den})" if len(self.denominator) > 1 else (f"{num} / {den}" if den else num)
        if self.delay > 0:
            body += f" * exp(-{self.delay:.4g} s)"
        return f"{body}   [{pretty_unit(self.gain_unit)}]"

    def __str__(self) -> str:
        return self.text


@dataclasses.dataclass(frozen=True)
class ModelComparison:
    """How far one linear model is from another (e.g. the series shortcut from the coupled model).

    Attributes
    ----------
    dc_gain_reference, dc_gain_other : float
        DC gains in display units.
    dc_gain_difference : float
        (other - reference) / reference. [%]
    poles_reference, poles_other : tuple of complex
        Poles, slowest first. [1/s]
    slowest_pole_difference : float
        Difference of the slowest (dominant) poles, relative to the reference. [%]
    """

    dc_gain_reference: float
    dc_gain_other: float
    dc_gain_difference: float
    poles_reference: tuple[complex, ...]
    poles_other: tuple[complex, ...]
    slowest_pole_difference: float

    def table(self) -> list[tuple[str, str, str, str]]:
        """Rows (quantity, reference, other, difference) for display."""
        rows = [
            (
                "DC gain",
                f"{self.dc_gain_reference:.4g}",
                f"{self.dc_gain_other:.4g}",
                f"{self.dc_gain_difference:+.1f} %",
            ),
            (
                "slowest pole [1/s]",
                _fmt_pole(self.poles_reference[0]),
                _fmt_pole(self.poles_other[0]),
                f"{self.slowest_pole_difference:+.1f} %",
            ),
        ]
        return rows


def _fmt_pole(p: complex) -> str:
    if abs(p.imag) < _ZERO_TOL * max(1.0, abs(p)):
        return f"{p.real:.4g}"
    return f"{p.real:.4g} {'+' if p.imag >= 0 else '-'} {abs(p.imag):.4g}j"


def _sort_slowest_first(poles: np.ndarray) -> np.ndarray:
    return poles[np.lexsort((np.abs(poles.imag), np.abs(poles)))]


@dataclasses.dataclass(frozen=True, eq=False)
class LinearModel:
    """Single-input single-output linear model dx/dt = A x + B u, y = C x + D u, y delayed by ``delay``.

    Everything is in SI units inside (input in its own unit: V, Hz or %);
    :attr:`dc_gain` and :meth:`factored` report in the trade's units.

    Parameters
    ----------
    A, B, C, D : numpy.ndarray
        State-space matrices, shapes (n, n), (n, 1), (1, n), (1, 1).
    delay : float
        Output dead time theta. [s]
    state_names, state_units, state_stages : tuple of str
        Name, SI unit and owning stage of each state.
    input_name, input_unit : str
        Name and unit of the input (``"speed reference"``, ``"Hz"``).
    output_name, output_unit : str
        Name and SI unit of the output (``"flow"``, ``"m**3/s"``).
    output_display_unit : str
        The unit the trade reads the output in (``"m**3/h"``).
    """

    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: np.ndarray
    delay: float = 0.0
    state_names: tuple[str, ...] = ()
    state_units: tuple[str, ...] = ()
    state_stages: tuple[str, ...] = ()
    input_name: str = "input"
    input_unit: str = ""
    output_name: str = "output"
    output_unit: str = ""
    output_display_unit: str = ""

    def __post_init__(self) -> None:
        n = self.A.shape[0]
        for name, default in (("state_names", "x"), ("state_units", ""), ("state_stages", "")):
            if not getattr(self, name):
                object.__setattr__(self, name, tuple(f"{default}{i}" if default else "" for i in range(n)))
        if not self.output_display_unit:
            object.__setattr__(self, "output_display_unit", self.output_unit)

    # -- basic numbers ------------------------------------------------------------
    @property
    def order(self) -> int:
        """Number of states."""
        return int(self.A.shape[0])

    @functools.cached_property
    def poles(self) -> np.ndarray:
        """Poles, slowest first. [1/s]"""
        return _sort_slowest_first(np.linalg.eigvals(self.A)) if self.order else np.zeros(0, complex)

    @functools.cached_property
    def _zpk(self) -> tuple[np.ndarray, np.ndarray, float]:
        """Zeros, poles and high-frequency gain of the delay-free part."""
        n = self.order
        d = float(self.D[0, 0])
        if n == 0:
            return np.zeros(0), np.zeros(0), d
        zeros = _transmission_zeros(self.A, self.B, self.C, self.D)
        poles = self.poles
        # gain: match the response at a point away from poles and zeros
        s0 = 1j * (1.0 + float(np.max(np.abs(np.concatenate([poles, zeros, [1.0]])))))
        g = (self.C @ np.linalg.solve(s0 * np.eye(n) - self.A, self.B))[0, 0] + d
        k = g * np.prod(s0 - poles) / np.prod(s0 - zeros)
        return zeros, poles, float(np.real(k))

    @property
    def zeros(self) -> np.ndarray:
        """Transmission zeros. [1/s]"""
        return self._zpk[0]

    @functools.cached_property
    def dc_gain_si(self) -> float:
        """Steady-state gain in SI (output SI unit per input unit); inf with an integrator."""
        if self.order and np.any(np.abs(self.poles) < _ZERO_TOL * max(1.0, float(np.max(np.abs(self.poles))))):
            return math.inf
        if self.order == 0:
            return float(self.D[0, 0])
        x = np.linalg.solve(self.A, self.B)
        return float((self.D - self.C @ x)[0, 0])

    @property
    def display_scale(self) -> float:
        """Output display units per output SI unit (e.g. 3600 for m**3/s to m**3/h)."""
        if self.output_display_unit == self.output_unit:
            return 1.0
        return float(ureg.Quantity(1.0, self.output_unit).to(self.output_display_unit).magnitude)

    @property
    def dc_gain(self) -> Any:
        """Steady-state gain as a pint Quantity in trade units, e.g. (m**3/h)/Hz."""
        unit = f"({self.output_display_unit or 'dimensionless'})/({self.input_unit or 'dimensionless'})"
        return ureg.Quantity(self.dc_gain_si * self.display_scale, unit.replace("(%)", "(percent)"))

    @property
    def time_constants(self) -> tuple[float, ...]:
        """-1/Re(p) for each mode, slowest first (a complex pair counted once). [s]"""
        return tuple(m.time_constant for m in self.modes())

    # -- python-control objects -------------------------------------------------------
    @functools.cached_property
    def ss(self) -> Any:
        """The delay-free part as a python-control ``StateSpace`` (SI)."""
        import control

        return control.ss(self.A, self.B, self.C, self.D, inputs=[self.input_name], outputs=[self.output_name])

    @functools.cached_property
    def tf(self) -> Any:
        """The delay-free part as a python-control ``TransferFunction`` (SI); see :attr:`delay`.

        Built from the zeros, poles and gain, so a model without finite zeros
        has a constant numerator (no round-off coefficients in s).
        """
        import control

        z, p, k = self._zpk
        num = np.real_if_close(k * np.poly(z)) if len(z) else np.array([k])
        den = np.real_if_close(np.poly(p)) if len(p) else np.array([1.0])
        return control.tf(np.real(num), np.real(den), inputs=[self.input_name], outputs=[self.output_name])

    def pade(self, order: int = 3) -> Any:
        """Rational model with the dead time replaced by a Pade approximation of ``order``."""
        import control

        if self.delay <= 0:
            return self.tf
        num, den = control.pade(self.delay, order)
        return self.tf * control.tf(num, den)

    # -- responses --------------------------------------------------------------------
    def frequency_response(self, omega: Any) -> np.ndarray:
        """Complex response G(jw) e^{-jw theta} with the dead time exact.

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]

        Returns
        -------
        numpy.ndarray of complex
            In SI output units per input unit.
        """
        w = np.atleast_1d(np.asarray(omega, dtype=float))
        n = self.order
        if n == 0:
            g = np.full(w.shape, complex(self.D[0, 0]))
        else:
            s = 1j * w
            eye = np.eye(n)
            mats = s[:, None, None] * eye[None] - self.A[None]
            x = np.linalg.solve(mats, np.broadcast_to(self.B, (len(w), n, 1)).astype(complex))
            g = (self.C[None] @ x)[:, 0, 0] + self.D[0, 0]
        return g * np.exp(-1j * w * self.delay)

    # -- readable forms ---------------------------------------------------------------
    def modes(self) -> list[Mode]:
        """Modes, slowest first, with the stage that takes the largest part in each.

        Notes
        -----
        Participation factors ``p_ki = |v_ki w_ik|`` from the right (v) and
        left (w) eigenvectors, normalised per mode (Kundur, *Power System
        Stability and Control*, 1994, §12.2.2).
        """
        if self.order == 0:
            return []
        vals, right = np.linalg.eig(self.A)
        try:
            left = np.linalg.inv(right)
        except np.linalg.LinAlgError:
            left = np.linalg.pinv(right)
        part = np.abs(right * left.T)
        part = part / np.maximum(part.sum(axis=0, keepdims=True), 1e-300)
        order = np.lexsort((np.abs(vals.imag), np.abs(vals)))
        modes = []
        for i in order:
            p = complex(vals[i])
            if p.imag < -_ZERO_TOL * max(1.0, abs(p)):
                continue  # the upper member of the pair stands for both
            shares: dict[str, float] = {}
            for name, share in zip(self.state_names, part[:, i], strict=True):
                shares[name] = float(share)
            by_stage: dict[str, float] = {}
            for stage, share in zip(self.state_stages, part[:, i], strict=True):
                by_stage[stage] = by_stage.get(stage, 0.0) + float(share)
            stage = max(by_stage, key=lambda k: by_stage[k])
            wn = abs(p)
            tc = math.inf if abs(p.real) < _ZERO_TOL * max(1.0, wn) else -1.0 / p.real
            zeta = 1.0 if wn == 0 else -p.real / wn
            modes.append(Mode(p, tc, wn, zeta, stage, shares))
        return modes

    def factored(self) -> FactoredForm:
        """The transfer function as ``K (1 + Tz s) ... / ((1 + T1 s)(1 + T2 s) ...)``.

        Complex pairs appear as ``(1 + 2 zeta/wn s + s^2/wn^2)``, integrators as
        ``s``. The gain is in trade units (:attr:`dc_gain`).
        """
        z, p, k = self._zpk
        num, kz = _factors(z)
        den, kp = _factors(p)
        gain = k * kz / kp * self.display_scale
        unit = f"({self.output_display_unit})/({self.input_unit})" if self.input_unit else self.output_display_unit
        return FactoredForm(gain, unit, tuple(num), tuple(den), self.delay)

    def compare(self, other: LinearModel) -> ModelComparison:
        """Compare ``other`` (e.g. the series shortcut) against this model.

        Returns
        -------
        ModelComparison
            DC gain difference and slowest-pole difference in %.
        """
        g0 = self.dc_gain_si * self.display_scale
        g1 = other.dc_gain_si * other.display_scale
        p0, p1 = self.poles, other.poles
        dp = abs(p1[0] - p0[0]) / abs(p0[0]) * 100.0 if len(p0) and len(p1) and abs(p0[0]) > 0 else math.nan
        dg = (g1 - g0) / g0 * 100.0 if g0 not in (0.0, math.inf) else math.nan
        return ModelComparison(g0, g1, dg, tuple(complex(x) for x in p0), tuple(complex(x) for x in p1), dp)

    def __repr__(self) -> str:
        return (
            f"LinearModel({self.output_name} [{self.output_display_unit}] per {self.input_name} "
            f"[{self.input_unit}], {self.order} states, delay {self.delay:g} s)"
        )


def _transmission_zeros(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Finite zeros of a SISO system from the Rosenbrock system matrix (generalised eigenvalues)."""
    n = a.shape[0]
    m_a = np.block([[a, b], [c, d]])
    m_b = np.zeros((n + 1, n + 1))
    m_b[:n, :n] = np.eye(n)
    vals = scipy.linalg.eigvals(m_a, m_b)
    scale = 1.0 + float(np.max(np.abs(np.linalg.eigvals(a))))
    finite = np.isfinite(vals) & (np.abs(vals) < 1e8 * scale)
    return _sort_slowest_first(vals[finite])


def _factors(roots: Any) -> tuple[list[str], float]:
    """Time-constant factors of a set of roots and the product of their -root scale."""
    factors: list[str] = []
    scale = 1.0
    roots = np.asarray(roots, dtype=complex)
    used = np.zeros(len(roots), bool)
    for i in np.lexsort((np.abs(roots.imag), np.abs(roots))):
        if used[i]:
            continue
        r = roots[i]
        used[i] = True
        mag = abs(r)
        if mag < _ZERO_TOL:
            factors.append("s")
            continue
        if abs(r.imag) <= 1e-9 * mag:
            t = -1.0 / r.real
            factors.append(f"(1 {'+' if t >= 0 else '-'} {abs(t):.4g} s)")
            scale *= -r.real
            continue
        # complex pair: find and use the conjugate
        j = np.argmin(np.where(used, np.inf, np.abs(roots - np.conj(r))))
        used[j] = True
        wn = mag
        two_zeta_over_wn = -2.0 * r.real / wn**2
        factors.append(
            f"(1 {'+' if two_zeta_over_wn >= 0 else '-'} {abs(two_zeta_over_wn):.4g} s + {1 / wn**2:.4g} s^2)"
        )
        scale *= wn**2
    return factors, scale
