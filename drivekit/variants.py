"""Many variants of one drive train at once: parameters as arrays, operating points and linear models vectorised.

A sweep or a tolerance study evaluates thousands of variants of the same
machine. The stage classes and :meth:`DriveTrain.derivatives` already accept
numpy arrays for their parameters; this module builds such an array-valued
train from a design key -> values mapping, finds every variant's operating
point for a flow or speed target without a Python loop over the variants, and
linearises them all by central differences in one vectorised evaluation.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any

import numpy as np

from .drivetrain import _STATE_SCALE, OUTPUTS, DriveTrain
from .fluid import Fluid
from .motors import DCMotor, InductionMotor
from .units import ParameterError, parameter_specs, to_si

__all__ = ["LinearBatch", "VariantSet", "make_variants"]


@dataclasses.dataclass(frozen=True, eq=False)
class LinearBatch:
    """N linear models of the same structure, stacked.

    Attributes
    ----------
    A, B, C, D : numpy.ndarray
        Shapes (N, n, n), (N, n, 1), (N, 1, n), (N, 1, 1), SI (input in its own unit).
    delay : numpy.ndarray
        Output dead time of each variant, shape (N,). [s]
    u : numpy.ndarray
        Input that holds each operating point, shape (N,), in ``input_unit``.
    valid : numpy.ndarray of bool
        False where the variant has no operating point (its rows are NaN).
    reason : numpy.ndarray of str
        Why a variant is invalid ("" where valid).
    state_names : tuple of str
    input_unit, output_unit, output_display_unit : str
    """

    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: np.ndarray
    delay: np.ndarray
    u: np.ndarray
    valid: np.ndarray
    reason: np.ndarray
    state_names: tuple[str, ...]
    input_unit: str
    output_unit: str
    output_display_unit: str

    def __len__(self) -> int:
        return int(self.A.shape[0])

    def model(self, i: int) -> Any:
        """Variant ``i`` as a :class:`~drivekit.linear.LinearModel`."""
        from .linear import LinearModel

        return LinearModel(
            self.A[i],
            self.B[i],
            self.C[i],
            self.D[i],
            delay=float(self.delay[i]),
            state_names=self.state_names,
            input_unit=self.input_unit,
            output_unit=self.output_unit,
            output_display_unit=self.output_display_unit,
        )

    def to_model_batch(self) -> Any:
        """As the analysis layer's :class:`~drivekit.batch.ModelBatch`."""
        from .batch import ModelBatch

        return ModelBatch(A=self.A, B=self.B, C=self.C, D=self.D, delay=self.delay)


@dataclasses.dataclass(frozen=True, eq=False)
class VariantSet:
    """A drive train whose chosen parameters are arrays of N values each.

    Build with :func:`make_variants`.

    Attributes
    ----------
    train : DriveTrain
        The array-valued train.
    values : dict
        Parameter key -> array of N SI values.
    size : int
        N.
    """

    train: DriveTrain
    values: dict[str, np.ndarray]
    size: int

    def operating_states(self, *, flow: Any = None, speed: Any = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """States, inputs and validity of every variant at a flow or machine-speed target.

        Parameters
        ----------
        flow : float or array, optional
            Target flow, one value or one per variant. [m**3/s]
        speed : float or array, optional
            Target machine speed. [rad/s]

        Returns
        -------
        x : numpy.ndarray, shape (n, N)
        u : numpy.ndarray, shape (N,)
        reason : numpy.ndarray of str, shape (N,)
            "" where the point exists, else which limit stops it.
        """
        t = self.train
        n = self.size
        if (flow is None) == (speed is None):
            raise ParameterError("operating_states: give exactly one of flow or speed")
        if flow is not None:
            if not t.is_pump:
                raise ParameterError("`flow`: a flow target needs a CentrifugalPump in the train")
            q = np.broadcast_to(np.asarray(flow, dtype=float), (n,)).copy()
            need = t.system_head(q)
            w_l = t.machine.speed_ratio_for(q, need) * t.machine.speed  # type: ignore[union-attr]
        else:
            w_l = np.broadcast_to(np.asarray(speed, dtype=float), (n,)).copy()
            q = _flow_at_speed(t, w_l) if t.is_pump else np.zeros(n)
        reason = np.full(n, "", dtype=object)
        reason[~np.isfinite(w_l) | (w_l <= 0)] = "no speed gives this flow"
        w_m = w_l * t._ratio
        torque = t.motor.b * w_m + t.torque_at_motor(t.machine_torque(w_l, q), w_l)
        m = t.motor
        supply = m.voltage_for(torque, w_m) if isinstance(m, DCMotor) else m.frequency_for(torque, w_m)
        if isinstance(m, InductionMotor):
            reason[(reason == "") & (torque > m.torque_limit * m.rated_torque * (1 + 1e-9))] = "above torque_limit"
        if t.is_pump:
            beyond = q > t.machine.curve_end_flow(w_l) * (1 + 1e-6)  # type: ignore[union-attr]
            reason[(reason == "") & beyond] = "beyond the pump curve"
            reason[(reason == "") & (q <= 0)] = "no forward flow"
        if t.drive is not None:
            reason[(reason == "") & (supply > t.drive.max_frequency * (1 + 1e-9))] = "above max_frequency"
            reason[(reason == "") & (supply < t.drive.min_frequency * (1 - 1e-9))] = "below min_frequency"
            u = t.drive.reference_for(supply) * np.ones(n)
        else:
            u = supply * np.ones(n)
        x = _state_matrix(t, supply, w_l, q, n)
        bad = reason != ""
        x[:, bad] = np.nan
        u = np.where(bad, np.nan, u)
        return x, u, reason.astype(str)

    def linearize(self, *, flow: Any = None, speed: Any = None) -> LinearBatch:
        """Every variant's linear model at its operating point, in one vectorised evaluation.

        Parameters
        ----------
        flow : float or array, optional
            Target flow. [m**3/s]
        speed : float or array, optional
            Target machine speed. [rad/s]

        Returns
        -------
        LinearBatch
            Same central differences as :meth:`DriveTrain.linearize`, so each
            variant equals the single-variant result.
        """
        t = self.train
        x0, u0, reason = self.operating_states(flow=flow, speed=speed)
        lay = t._layout
        n = x0.shape[0]
        scale = np.array([_STATE_SCALE.get(unit, 1.0) for unit in lay.units])[:, None]
        hx = 1e-6 * (np.abs(x0) + scale)
        hu = 1e-6 * (np.abs(u0) + 1.0)
        up, down = u0 + hu, u0 - hu
        if t.drive is not None:
            lo, hi = t.drive.reference_range()
            up = np.where(up > hi, u0, up)
            down = np.where(down < lo, u0, down)
        cols = 2 * n + 2
        xs = np.repeat(x0[:, None, :], cols, axis=1)
        us = np.repeat(u0[None, :], cols, axis=0)
        idx = np.arange(n)
        xs[idx, 2 * idx] += hx
        xs[idx, 2 * idx + 1] -= hx
        us[2 * n], us[2 * n + 1] = up, down
        with np.errstate(invalid="ignore"):
            fs = t.derivatives(xs, us)
            ys = t.output_of(xs, us)
        a = (fs[:, 0 : 2 * n : 2] - fs[:, 1 : 2 * n : 2]) / (2.0 * hx[None, :, :])
        c = (ys[0 : 2 * n : 2] - ys[1 : 2 * n : 2]) / (2.0 * hx)
        du = up - down
        b = (fs[:, 2 * n] - fs[:, 2 * n + 1]) / du
        d = (ys[2 * n] - ys[2 * n + 1]) / du
        size = self.size
        delay = np.broadcast_to(np.asarray(t.sensor.dead_time if t.sensor is not None else 0.0, float), (size,))
        return LinearBatch(
            A=np.moveaxis(a, -1, 0),
            B=np.moveaxis(b, -1, 0)[:, :, None],
            C=np.moveaxis(c, -1, 0)[:, None, :],
            D=d[:, None, None],
            delay=delay.copy(),
            u=u0,
            valid=reason == "",
            reason=reason,
            state_names=lay.names,
            input_unit=t.input_unit,
            output_unit=OUTPUTS[t.output][0],
            output_display_unit=OUTPUTS[t.output][1],
        )


def _flow_at_speed(train: DriveTrain, w_l: np.ndarray) -> np.ndarray:
    """Vectorised head balance in flow by bisection then Newton (monotone in flow)."""
    lo = np.zeros_like(w_l)
    hi = train.machine.curve_end_flow(w_l) * 2.0 + 1e-9  # type: ignore[union-attr]
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        up = train.pump_head(w_l, mid) - train.system_head(mid) > 0
        lo = np.where(up, mid, lo)
        hi = np.where(up, hi, mid)
    q = 0.5 * (lo + hi)
    no_flow = train.pump_head(w_l, 0.0) - train.system_head(np.zeros_like(w_l)) <= 0
    return np.where(no_flow, 0.0, q)


def _state_matrix(train: DriveTrain, supply: Any, w_l: Any, q: Any, size: int) -> np.ndarray:
    lay = train._layout
    x = np.zeros((len(lay.names), size))
    w_m = w_l * train._ratio
    if lay.drive is not None:
        x[lay.drive] = supply
    if lay.current is not None:
        x[lay.current] = train.motor.current(supply, w_m)  # type: ignore[union-attr,call-arg]
    x[lay.motor_speed] = w_m
    if lay.machine_speed is not None:
        x[lay.machine_speed] = w_l
    if lay.twist is not None:
        x[lay.twist] = train.machine_torque(w_l, q) / train.transmission.stiffness  # type: ignore[union-attr]
    if lay.flow is not None:
        x[lay.flow] = q
    if lay.sensor is not None:
        x[lay.sensor] = train.measured(x)
    return x


def make_variants(train: DriveTrain, values: Mapping[str, Any]) -> VariantSet:
    """A drive train whose parameters named by key take arrays of values.

    Parameters
    ----------
    train : DriveTrain
        The nominal train.
    values : mapping
        Design parameter key (``"motor.J"``, ``"pipe1.static_head"``,
        ``"fluid.sg"``, see :meth:`drivekit.Design.parameters`) -> 1-D array
        of values (SI floats, or a pint Quantity array). All arrays have the
        same length N.

    Returns
    -------
    VariantSet

    Examples
    --------
    >>> import numpy as np
    >>> from drivekit import demo
    >>> v = make_variants(demo.raw_water_pump(), {"pipe1.static_head": np.array([16.0, 18.0, 20.0])})
    >>> batch = v.linearize(flow=demo.RAW_WATER_FLOW_TARGET)
    >>> batch.A.shape
    (3, 4, 4)
    """
    stages = train.stage_map()
    sizes = set()
    changed: dict[str, dict[str, Any]] = {}
    converted: dict[str, np.ndarray] = {}
    for key, raw in values.items():
        role, _, name = key.partition(".")
        if role not in stages:
            raise ParameterError(f"`values`: got key {key!r}, expected a role among {tuple(stages)}")
        specs = dict(parameter_specs(stages[role]))
        if name not in specs:
            raise ParameterError(f"`values`: got key {key!r}; {type(stages[role]).__name__} has no parameter {name!r}")
        arr = np.atleast_1d(np.asarray(to_si(raw, key, specs[name]), dtype=float))
        if arr.ndim != 1:
            raise ParameterError(f"`values[{key!r}]`: got an array of shape {arr.shape}, expected 1-D")
        sizes.add(arr.size)
        changed.setdefault(role, {})[name] = arr
        converted[key] = arr
    if len(sizes) != 1:
        raise ParameterError(f"`values`: got arrays of lengths {sorted(sizes)}, expected one common length")
    for role, fields in changed.items():
        stages[role] = dataclasses.replace(stages[role], **fields)
    fluid = stages.pop("fluid", train.fluid)
    if not isinstance(fluid, Fluid):  # pragma: no cover - stage_map gives a Fluid
        raise ParameterError("`fluid`: expected a Fluid")
    batch = DriveTrain(*stages.values(), fluid=fluid, output=train._output_arg, name=train.name)
    return VariantSet(batch, converted, sizes.pop())
