"""Control loops built from linear models: open loop, closed loop, sensitivities.

A single-loop feedback system as a plant engineer draws it::

              d (load, at the plant input)
              |
    r --->(+)-->[ C(s) ]--u-->(+)-->[ G(s) e^{-theta s} ]---+---> y
           ^ -                                              |
           +------------------------------------------------+

with the open loop ``L = C G e^{-theta s}``, the sensitivity ``S = 1/(1 + L)``
and the complementary sensitivity ``T = L/(1 + L)``. The plant's dead time
``theta`` is kept exact: frequency responses use ``e^{-j w theta}``; time
responses are computed in :mod:`drivekit.responses` without any Pade
approximation.
"""

from __future__ import annotations

import dataclasses
import functools
import weakref
from typing import Any

import numpy as np

from .linear import LinearModel
from .units import ParameterError

__all__ = ["Loop", "as_linear", "feedback", "series", "zpk"]


def as_linear(sys: Any, delay: float = 0.0) -> LinearModel:
    """Turn a python-control LTI object, a LinearModel or a controller into a LinearModel.

    Parameters
    ----------
    sys : LinearModel, control.StateSpace, control.TransferFunction or object with ``to_linear()``
        A single-input single-output, continuous-time linear system.
    delay : float
        Dead time added to the model's own. [s]

    Returns
    -------
    LinearModel

    Raises
    ------
    ParameterError
        When ``sys`` is not a SISO continuous-time linear system, is improper,
        or ``delay`` is negative or not finite.

    Examples
    --------
    >>> import control
    >>> m = as_linear(control.tf([2.0], [1.0, 1.0]), delay=0.5)
    >>> round(m.dc_gain_si, 12), m.delay
    (2.0, 0.5)
    """
    delay = _check_delay(delay, "delay")
    if isinstance(sys, LinearModel):
        model = sys
    elif hasattr(sys, "to_linear"):
        model = sys.to_linear()
        if not isinstance(model, LinearModel):
            raise ParameterError(
                f"`sys`: {type(sys).__name__}.to_linear() gave {type(model).__name__}, expected a LinearModel"
            )
    else:
        model = _from_control(sys)
    if delay == 0.0:
        return model
    return dataclasses.replace(model, delay=model.delay + delay)


def _check_delay(delay: Any, name: str) -> float:
    try:
        value = float(delay)
    except (TypeError, ValueError):
        raise ParameterError(f"`{name}`: got {delay!r}, expected a dead time >= 0 s") from None
    if not np.isfinite(value) or value < 0:
        raise ParameterError(f"`{name}`: got {delay!r} s, expected a dead time >= 0 s")
    return value


_ZPK_CACHE: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def zpk(model: LinearModel) -> tuple[np.ndarray, np.ndarray, float]:
    """Zeros, poles and gain k of the delay-free part: k prod(s - z)/prod(s - p).

    Computed once per model object and kept while the model lives (a loop's
    open loop takes its factors from the controller and the plant).

    Parameters
    ----------
    model : LinearModel
        The model.

    Returns
    -------
    tuple
        (zeros [1/s], poles [1/s], gain k [SI]).
    """
    hit = _ZPK_CACHE.get(model)
    if hit is not None:
        return hit
    p = np.asarray(model.poles, dtype=complex)
    z, lead = _finite_zeros(model)
    if model.order == 0:
        k = float(model.D[0, 0])
    elif lead is not None:
        # no finite zeros: G(s) = C A^(n-1) B / prod(s - p), the gain is that Markov parameter
        k = lead
    else:
        scale = 1.0 + float(np.max(np.abs(np.concatenate([p, z, [0.0]]))))
        s0 = 1j * 1.37 * scale
        n = model.order
        g = (model.C @ np.linalg.solve(s0 * np.eye(n) - model.A, model.B.astype(complex)))[0, 0] + model.D[0, 0]
        k = float((g * np.prod(s0 - p) / np.prod(s0 - z)).real)
    out = (z, p, k)
    _ZPK_CACHE[model] = out
    return out


def _finite_zeros(model: LinearModel) -> tuple[np.ndarray, float | None]:
    """Transmission zeros; none at all when the first n - 1 Markov parameters C A^k B are exactly zero.

    G(s) = D + sum_k C A^(k-1) B / s^k, so with D = 0 and C A^k B = 0 for
    k < n - 1 the numerator of G has degree 0 (a chain of lags, as drive
    trains give): no finite zeros, without the generalised eigenvalue
    problem of the system matrix. Returns the zeros and, in that case, the
    n-th Markov parameter C A^(n-1) B (the numerator over the monic
    denominator det(sI - A)), else None.
    """
    n = model.order
    if n == 0:
        return np.zeros(0, complex), None
    if model.D[0, 0] == 0.0:
        v = model.B[:, 0]
        c = model.C[0]
        for _ in range(n - 1):
            if float(c @ v) != 0.0:
                break
            v = model.A @ v
        else:
            return np.zeros(0, complex), float(c @ v)
    return np.asarray(model.zeros, dtype=complex), None


def _from_control(sys: Any) -> LinearModel:
    """Convert a python-control StateSpace or TransferFunction (boundary only, not the hot path)."""
    try:
        import control
    except ImportError:  # pragma: no cover - control is a dependency
        raise ParameterError(f"`sys`: got {type(sys).__name__}, expected a LinearModel") from None
    if not isinstance(sys, control.LTI) or isinstance(sys, control.FrequencyResponseData):
        raise ParameterError(f"`sys`: got {type(sys).__name__}, expected a LinearModel or a python-control LTI system")
    if sys.ninputs != 1 or sys.noutputs != 1:
        raise ParameterError(
            f"`sys`: got a system with {sys.ninputs} inputs and {sys.noutputs} outputs, "
            "expected a single-input single-output system"
        )
    if not sys.isctime():
        raise ParameterError(f"`sys`: got a discrete-time system (dt={sys.dt}), expected a continuous-time system")
    if isinstance(sys, control.TransferFunction):
        num = np.trim_zeros(np.atleast_1d(np.squeeze(sys.num[0][0])), "f")
        den = np.trim_zeros(np.atleast_1d(np.squeeze(sys.den[0][0])), "f")
        if len(num) > len(den):
            raise ParameterError(
                f"`sys`: got an improper transfer function (numerator order {len(num) - 1} > "
                f"denominator order {len(den) - 1}), expected a proper one"
            )
        sys = control.tf2ss(sys)
    A = np.asarray(sys.A, dtype=float).reshape(sys.nstates, sys.nstates)
    B = np.asarray(sys.B, dtype=float).reshape(sys.nstates, 1)
    C = np.asarray(sys.C, dtype=float).reshape(1, sys.nstates)
    D = np.asarray(sys.D, dtype=float).reshape(1, 1)
    return LinearModel(A, B, C, D)


def series(first: Any, second: Any) -> LinearModel:
    """The series connection: the output of ``first`` drives ``second``.

    Parameters
    ----------
    first, second : LinearModel or convertible (see :func:`as_linear`)
        Signal flows through ``first`` then ``second``.

    Returns
    -------
    LinearModel
        States of ``first`` then of ``second``; dead times add (for SISO
        systems a dead time commutes with the rest).
    """
    g1, g2 = as_linear(first), as_linear(second)
    n1, n2 = g1.order, g2.order
    A = np.zeros((n1 + n2, n1 + n2))
    A[:n1, :n1] = g1.A
    A[n1:, :n1] = g2.B @ g1.C
    A[n1:, n1:] = g2.A
    B = np.vstack([g1.B, g2.B @ g1.D])
    C = np.hstack([g2.D @ g1.C, g2.C])
    D = g2.D @ g1.D
    return LinearModel(
        A,
        B,
        C,
        D,
        delay=g1.delay + g2.delay,
        state_names=g1.state_names + g2.state_names,
        state_units=g1.state_units + g2.state_units,
        state_stages=g1.state_stages + g2.state_stages,
        input_name=g1.input_name,
        input_unit=g1.input_unit,
        output_name=g2.output_name,
        output_unit=g2.output_unit,
        output_display_unit=g2.output_display_unit,
    )


def feedback(forward: Any, back: Any = None, sign: int = -1) -> LinearModel:
    """Close a delay-free loop: ``forward / (1 - sign * forward * back)``.

    Parameters
    ----------
    forward : LinearModel or convertible
        Forward path.
    back : LinearModel or convertible, optional
        Feedback path; unity when omitted.
    sign : int
        -1 for negative feedback (default), +1 for positive.

    Returns
    -------
    LinearModel

    Raises
    ------
    ParameterError
        When a path has a dead time (a delayed loop has no finite state-space
        model; use :class:`Loop`) or the loop is algebraically singular.
    """
    if sign not in (-1, 1):
        raise ParameterError(f"`sign`: got {sign!r}, expected -1 (negative feedback) or +1")
    g = as_linear(forward)
    h = (
        as_linear(back)
        if back is not None
        else LinearModel(np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.ones((1, 1)))
    )
    for name, m in (("forward", g), ("back", h)):
        if m.delay:
            raise ParameterError(
                f"`{name}`: got a dead time of {m.delay:g} s, expected none (use Loop for loops with dead time)"
            )
    n1, n2 = g.order, h.order
    dg, dh = float(g.D[0, 0]), float(h.D[0, 0])
    den = 1.0 - sign * dg * dh
    if abs(den) < 1e-12:
        raise ParameterError("`forward`: the loop 1 - sign*D_forward*D_back is singular (algebraic loop)")
    # u_g = r + sign * y_h ; y_h = Ch xh + Dh y ; y = Cg xg + Dg u_g
    k = sign / den
    A = np.zeros((n1 + n2, n1 + n2))
    A[:n1, :n1] = g.A + k * dh * g.B @ g.C
    A[:n1, n1:] = k * g.B @ h.C
    A[n1:, :n1] = h.B @ g.C / den
    A[n1:, n1:] = h.A + k * dg * h.B @ h.C
    B = np.vstack([g.B / den, h.B * dg / den])
    C = np.hstack([g.C / den, k * dg * h.C])
    D = np.array([[dg / den]])
    return LinearModel(
        A,
        B,
        C,
        D,
        input_name=g.input_name,
        input_unit=g.input_unit,
        output_name=g.output_name,
        output_unit=g.output_unit,
        output_display_unit=g.output_display_unit,
    )


@dataclasses.dataclass(frozen=True)
class LoopMatrices:
    """State-space of controller and plant in series, with the loop still open.

    States are the controller's then the plant's. Inputs are the control error
    ``e``, the load ``d`` at the plant input and the setpoint feed-forward
    ``r`` (the part of the setpoint path that differs from the error path:
    zero without setpoint weights); outputs are the undelayed plant output
    ``y0`` (the measurement is ``y(t) = y0(t - delay)``) and the controller
    output ``u``.

    Attributes
    ----------
    A : numpy.ndarray
        (n, n) state matrix. [1/s]
    B : numpy.ndarray
        (n, 3) input matrix, columns e, d and r.
    C : numpy.ndarray
        (2, n) output matrix, rows y0 and u.
    D : numpy.ndarray
        (2, 3) feedthrough, rows y0 and u, columns e, d and r.
    delay : float
        Dead time in the loop. [s]
    """

    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: np.ndarray
    delay: float


def _two_input_controller(c: LinearModel, cr: LinearModel | None) -> tuple[Any, ...]:
    """(A, B_e, B_r, C, D_e, D_r) of u = C(s) e + (C_r(s) - C(s)) r on one set of controller states.

    The setpoint path C_r and the error path C share their poles; realised
    with the same A and B (controllable form, as PID gives them) the two
    paths become one observable form by transposition, where they differ
    only in their input columns.
    """
    zero = np.zeros((c.order, 1))
    if cr is None:
        return c.A, c.B, zero, c.C, float(c.D[0, 0]), 0.0
    if cr.order != c.order:
        raise ParameterError(
            f"`setpoint_path`: got {cr.order} states, expected the controller's {c.order} (the same poles)"
        )
    dr = float(cr.D[0, 0] - c.D[0, 0])
    if np.array_equal(cr.A, c.A) and np.array_equal(cr.C, c.C):
        return c.A, c.B, cr.B - c.B, c.C, float(c.D[0, 0]), dr
    if np.array_equal(cr.A, c.A) and np.array_equal(cr.B, c.B):
        return c.A.T, c.C.T, (cr.C - c.C).T, c.B.T, float(c.D[0, 0]), dr
    raise ParameterError(
        "`setpoint_path`: expected a realisation sharing the controller's A and B (or A and C), "
        "as PID.to_linear() and PID.setpoint_to_linear() give"
    )


@dataclasses.dataclass(frozen=True, eq=False)
class Loop:
    """A single feedback loop: controller C(s) acting on the error, plant G(s) e^{-theta s}.

    Parameters
    ----------
    plant : LinearModel or convertible (see :func:`as_linear`)
        The plant from controller output to measurement, dead time in ``delay``.
    controller : LinearModel or object with ``to_linear()``
        The controller from control error to controller output (e.g. a PID).
    setpoint_path : LinearModel, optional
        The controller from setpoint to controller output where it differs
        from the error path (setpoint weights); taken from a PID's
        ``setpoint_to_linear()`` when omitted. It must share the
        controller's A and B (or A and C).

    Notes
    -----
    Negative unity feedback, load disturbance ``d`` added at the plant input.
    The controller output is ``u = C_r(s) r - C(s) y`` with the setpoint path
    ``C_r`` (Astrom & Hagglund, *Advanced PID Control*, ISA 2006, §3.4,
    setpoint weighting (from memory)); with ``C_r = C`` this is ``C (r - y)``.
    Closed-loop relations (Astrom & Murray, *Feedback Systems*, 2nd ed., 2021,
    §12.1, the "gang of four"): y/r = T = L/(1+L), u/r = C S, y/d = G S,
    S = 1/(1+L).
    """

    plant: LinearModel
    controller: Any
    setpoint_path: LinearModel | None = None

    def __post_init__(self) -> None:
        given = self.controller
        object.__setattr__(self, "plant", as_linear(self.plant))
        object.__setattr__(self, "controller", as_linear(given))
        path = self.setpoint_path
        if path is None and hasattr(given, "setpoint_to_linear"):
            path = given.setpoint_to_linear()
        if path is not None:
            path = as_linear(path)
            if path.delay:
                raise ParameterError(f"`setpoint_path`: got a dead time of {path.delay:g} s, expected none")
            same = path.order == self.controller.order and all(
                np.array_equal(getattr(path, m), getattr(self.controller, m)) for m in "ABCD"
            )
            path = None if same else path
        object.__setattr__(self, "setpoint_path", path)

    @property
    def delay(self) -> float:
        """Total dead time in the loop. [s]"""
        return self.plant.delay + self.controller.delay

    @functools.cached_property
    def open_loop(self) -> LinearModel:
        """L = C G e^{-theta s} as one LinearModel (dead time in ``.delay``)."""
        model = series(self.controller, self.plant)
        zc, pc, kc = zpk(self.controller)
        zg, pg, kg = zpk(self.plant)
        _ZPK_CACHE[model] = (np.concatenate([zc, zg]), np.concatenate([pc, pg]), kc * kg)
        return model

    @functools.cached_property
    def matrices(self) -> LoopMatrices:
        """Controller and plant in series with error, load and setpoint inputs (see :class:`LoopMatrices`)."""
        c, g = self.controller, self.plant
        if c.delay:
            raise ParameterError(
                f"`controller`: got a dead time of {c.delay:g} s, expected none for time responses "
                "(put the dead time in the plant)"
            )
        ca, cb, cbr, cc, cd, cdr = _two_input_controller(c, self.setpoint_path)
        nc, ng = c.order, g.order
        gd = float(g.D[0, 0])
        A = np.zeros((nc + ng, nc + ng))
        A[:nc, :nc] = ca
        A[nc:, :nc] = g.B @ cc
        A[nc:, nc:] = g.A
        B = np.zeros((nc + ng, 3))
        B[:nc, 0:1] = cb
        B[nc:, 0] = g.B[:, 0] * cd
        B[nc:, 1] = g.B[:, 0]
        B[:nc, 2:3] = cbr
        B[nc:, 2] = g.B[:, 0] * cdr
        C = np.zeros((2, nc + ng))
        C[0:1, :nc] = gd * cc
        C[0:1, nc:] = g.C
        C[1:2, :nc] = cc
        D = np.array([[gd * cd, gd, gd * cdr], [cd, 0.0, cdr]])
        return LoopMatrices(A, B, C, D, g.delay)

    def closed_loop_matrix(self) -> np.ndarray:
        """State matrix of the closed loop without dead time (the delay-free loop). [1/s]

        Raises
        ------
        ParameterError
            When the loop has a dead time (it has infinitely many poles).
        """
        if self.delay:
            raise ParameterError(
                f"`loop`: has a dead time of {self.delay:g} s, so no finite closed-loop state matrix exists"
            )
        m = self.matrices
        dy = m.D[0, 0]
        if abs(1.0 + dy) < 1e-12:
            raise ParameterError("`loop`: 1 + D_controller*D_plant = 0, the loop is algebraically singular")
        # e = r - y0,  y0 = C0 x + dy e  =>  e = (r - C0 x)/(1 + dy)
        return m.A - np.outer(m.B[:, 0], m.C[0]) / (1.0 + dy)

    def closed_loop_poles(self) -> np.ndarray:
        """Poles of the delay-free closed loop, slowest first. [1/s]"""
        p = np.linalg.eigvals(self.closed_loop_matrix())
        return p[np.lexsort((np.abs(p.imag), np.abs(p)))]

    # -- frequency responses (dead time exact) -----------------------------------------
    def open_loop_response(self, omega: Any) -> np.ndarray:
        """L(jw) with the dead time exact.

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]

        Returns
        -------
        numpy.ndarray of complex
        """
        return self.controller.frequency_response(omega) * self.plant.frequency_response(omega)

    def sensitivity(self, omega: Any) -> np.ndarray:
        """S(jw) = 1/(1 + L(jw)). [-]

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]
        """
        return 1.0 / (1.0 + self.open_loop_response(omega))

    def complementary_sensitivity(self, omega: Any) -> np.ndarray:
        """T(jw) = L/(1 + L): the setpoint-to-measurement response. [-]

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]
        """
        lw = self.open_loop_response(omega)
        return lw / (1.0 + lw)

    def load_response(self, omega: Any) -> np.ndarray:
        """G S (jw): measurement per unit load at the plant input.

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]
        """
        return self.plant.frequency_response(omega) * self.sensitivity(omega)

    def setpoint_response(self, omega: Any) -> np.ndarray:
        """y/r (jw) = C_r G / (1 + L): with setpoint weights, else T. [-]

        Parameters
        ----------
        omega : array
            Angular frequencies. [rad/s]
        """
        cr = self.setpoint_path if self.setpoint_path is not None else self.controller
        return cr.frequency_response(omega) * self.plant.frequency_response(omega) * self.sensitivity(omega)

    def __repr__(self) -> str:
        return f"Loop(plant={self.plant!r}, controller={self.controller!r})"
