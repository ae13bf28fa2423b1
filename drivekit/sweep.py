"""Sweeps: a design evaluated over parameter ranges, tolerance distributions and its operating range.

Reached as ``dk.sweep``. Samples are drawn once from a seeded generator, the
variants are solved and linearised together (:mod:`drivekit.variants`) and
their loop metrics computed in one vectorised pass (:mod:`drivekit.batch`).
With ``engine="dask"`` the same samples are split into chunks and evaluated
on a Dask cluster; the results are identical to the local run.

Examples
--------
>>> import drivekit as dk
>>> from drivekit import demo
>>> design = dk.Design(train=demo.raw_water_pump(), operating=("flow", "380 m**3/h"),
...                    controller=dk.PID(kp=150.0, ti=3.5))
>>> result = run(design, {"motor.J": Uniform("0.7 kg*m**2", "1.1 kg*m**2")}, samples=200, seed=1)
>>> bool(result.metrics["phase margin [deg]"].min() > 45)
True
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from .design import Design
from .operating import OperatingPointError
from .units import ParameterError, ParamSpec, to_si

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "GainSchedule",
    "Normal",
    "SweepResult",
    "Tornado",
    "Triangular",
    "Uniform",
    "Values",
    "gain_schedule",
    "operating_range",
    "run",
    "tornado",
]


# -- distributions -------------------------------------------------------------------------


def _spec_for(design: Design, key: str) -> ParamSpec:
    for p in design.parameters():
        if p.key == key:
            return p.spec
    raise ParameterError(f"`parameters`: got key {key!r}, expected one of {[p.key for p in design.parameters()]}")


@dataclasses.dataclass(frozen=True)
class Uniform:
    """Values spread evenly between two limits.

    Parameters
    ----------
    low, high : float, Quantity or str
        Limits, in the parameter's unit (float = SI). [parameter unit]
    """

    low: Any
    high: Any

    def draw(self, rng: np.random.Generator, n: int, key: str, spec: ParamSpec) -> np.ndarray:
        """``n`` samples in SI."""
        lo, hi = to_si(self.low, f"{key}.low", spec), to_si(self.high, f"{key}.high", spec)
        if not hi > lo:
            raise ParameterError(f"`{key}`: got low {lo:g} and high {hi:g}, expected low < high")
        return rng.uniform(lo, hi, n)

    def limits(self, key: str, spec: ParamSpec) -> tuple[float, float]:
        """The two ends in SI (used by :func:`tornado`)."""
        return to_si(self.low, f"{key}.low", spec), to_si(self.high, f"{key}.high", spec)


@dataclasses.dataclass(frozen=True)
class Normal:
    """A tolerance: normally distributed about a mean, cut off at ``cutoff`` standard deviations.

    Parameters
    ----------
    mean : float, Quantity or str
        Mean value. [parameter unit]
    std : float, Quantity or str
        Standard deviation. [parameter unit]
    cutoff : float
        Samples beyond mean +- cutoff std are drawn again (keeps physical
        parameters positive). [-] Default 3.
    """

    mean: Any
    std: Any
    cutoff: float = 3.0

    def draw(self, rng: np.random.Generator, n: int, key: str, spec: ParamSpec) -> np.ndarray:
        """``n`` samples in SI (truncated normal by rejection)."""
        m = to_si(self.mean, f"{key}.mean", spec)
        s = to_si(
            self.std, f"{key}.std", dataclasses.replace(spec, minimum=0.0, include_minimum=False, maximum=math.inf)
        )
        out = rng.normal(m, s, n)
        for _ in range(100):
            bad = np.abs(out - m) > self.cutoff * s
            if not bad.any():
                break
            out[bad] = rng.normal(m, s, int(bad.sum()))
        return out

    def limits(self, key: str, spec: ParamSpec) -> tuple[float, float]:
        """Mean -+ 2 std in SI (the usual 95 % tolerance band)."""
        m = to_si(self.mean, f"{key}.mean", spec)
        s = to_si(
            self.std, f"{key}.std", dataclasses.replace(spec, minimum=0.0, include_minimum=False, maximum=math.inf)
        )
        return m - 2 * s, m + 2 * s


@dataclasses.dataclass(frozen=True)
class Triangular:
    """Values between two limits, most often at ``mode``.

    Parameters
    ----------
    low, mode, high : float, Quantity or str
        Limits and most likely value. [parameter unit]
    """

    low: Any
    mode: Any
    high: Any

    def draw(self, rng: np.random.Generator, n: int, key: str, spec: ParamSpec) -> np.ndarray:
        """``n`` samples in SI."""
        lo, mo, hi = (
            to_si(v, f"{key}.{k}", spec) for k, v in (("low", self.low), ("mode", self.mode), ("high", self.high))
        )
        if not lo <= mo <= hi or not hi > lo:
            raise ParameterError(f"`{key}`: got ({lo:g}, {mo:g}, {hi:g}), expected low <= mode <= high, low < high")
        return rng.triangular(lo, mo, hi, n)

    def limits(self, key: str, spec: ParamSpec) -> tuple[float, float]:
        """The two ends in SI."""
        return to_si(self.low, f"{key}.low", spec), to_si(self.high, f"{key}.high", spec)


@dataclasses.dataclass(frozen=True)
class Values:
    """Given values, used in turn (a grid along one parameter).

    Parameters
    ----------
    values : sequence of float, Quantity or str
        The values. [parameter unit]
    """

    values: Sequence[Any]

    def draw(self, rng: np.random.Generator, n: int, key: str, spec: ParamSpec) -> np.ndarray:
        """The values repeated to length ``n``."""
        vals = np.array([to_si(v, f"{key}[{i}]", spec) for i, v in enumerate(self.values)], dtype=float)
        return np.resize(vals, n)

    def limits(self, key: str, spec: ParamSpec) -> tuple[float, float]:
        """Smallest and largest value in SI."""
        vals = [to_si(v, f"{key}[{i}]", spec) for i, v in enumerate(self.values)]
        return min(vals), max(vals)


_DISTRIBUTIONS = (Uniform, Normal, Triangular, Values)


def _as_distribution(key: str, value: Any) -> Any:
    if isinstance(value, _DISTRIBUTIONS):
        return value
    if isinstance(value, tuple) and len(value) == 2:
        return Uniform(*value)
    raise ParameterError(
        f"`parameters[{key!r}]`: got {value!r}, expected Uniform, Normal, Triangular, Values or a (low, high) pair"
    )


# -- evaluating a batch --------------------------------------------------------------------

#: Columns of :attr:`SweepResult.metrics`.
METRIC_COLUMNS = (
    "input",
    "gain margin [-]",
    "phase margin [deg]",
    "delay margin [s]",
    "Ms [-]",
    "Mt [-]",
    "rise time [s]",
    "settling time [s]",
    "overshoot [%]",
    "stable",
)


def _evaluate_chunk(design: Design, values: dict[str, np.ndarray], flows: np.ndarray | None) -> dict[str, np.ndarray]:
    """Metrics of one chunk of variants (runs in a worker process under Dask)."""
    from .batch import batch_loop_margins
    from .batch_steps import batch_step_metrics
    from .variants import make_variants

    n = len(next(iter(values.values()))) if values else len(flows)  # type: ignore[arg-type]
    variant_values = dict(values)
    if not variant_values:  # only the operating range varies: a trivial parameter keeps the shapes
        variant_values["motor.J"] = np.full(n, float(design.train.motor.J))
    variants = make_variants(design.train, variant_values)
    kind, target = design.operating
    if flows is not None:
        batch = variants.linearize(flow=flows)
    elif kind == "flow":
        batch = variants.linearize(flow=target)
    elif kind == "speed":
        batch = variants.linearize(speed=target)
    else:
        raise ParameterError("`design.operating`: sweeps need a flow or speed target, not an input")
    models = batch.to_model_batch()
    margins = batch_loop_margins(models, design.controller.to_linear())
    steps = batch_step_metrics(models, design.controller.to_linear())
    out = {
        "input": batch.u,
        "gain margin [-]": margins.gain_margin,
        "phase margin [deg]": margins.phase_margin,
        "delay margin [s]": margins.delay_margin,
        "Ms [-]": margins.ms,
        "Mt [-]": margins.mt,
        "rise time [s]": steps.rise_time,
        "settling time [s]": steps.settling_time,
        "overshoot [%]": steps.overshoot,
        "stable": margins.stable.astype(float),
        "reason": batch.reason,
    }
    return out


# -- results ---------------------------------------------------------------------------------


@dataclasses.dataclass(frozen=True, eq=False)
class SweepResult:
    """Inputs and loop metrics of every variant of a sweep.

    Attributes
    ----------
    inputs : pandas.DataFrame
        One column per swept parameter key (SI), plus ``"flow [m3/s]"`` when
        the operating range is swept.
    metrics : pandas.DataFrame
        :data:`METRIC_COLUMNS` per variant (NaN where a variant has no
        operating point; its ``reason`` column says why).
    """

    inputs: pd.DataFrame
    metrics: pd.DataFrame

    def to_frame(self) -> pd.DataFrame:
        """Inputs and metrics side by side."""
        import pandas as pd

        return pd.concat([self.inputs, self.metrics], axis=1)

    def worst(self, metric: str = "phase margin [deg]") -> pd.Series:
        """The variant with the worst value of ``metric`` (lowest margin, highest Ms, overshoot, time)."""
        col = self.metrics[metric]
        low_is_bad = metric.startswith(("gain margin", "phase margin", "delay margin", "stable"))
        idx = col.idxmin() if low_is_bad else col.idxmax()
        return self.to_frame().loc[idx]

    def percentiles(self, q: Sequence[float] = (1, 5, 50, 95, 99)) -> pd.DataFrame:
        """Percentiles of every numeric metric over the valid variants."""
        numeric = self.metrics.drop(columns=["reason"]).dropna()
        return numeric.quantile([x / 100 for x in q])


def _draw(design: Design, parameters: Mapping[str, Any], samples: int, seed: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    return {
        key: _as_distribution(key, dist).draw(rng, samples, key, _spec_for(design, key))
        for key, dist in parameters.items()
    }


def _chunks(n: int, size: int) -> list[slice]:
    return [slice(i, min(i + size, n)) for i in range(0, n, size)]


def run(
    design: Design,
    parameters: Mapping[str, Any] | None = None,
    *,
    samples: int = 1000,
    flows: Any = None,
    seed: int = 0,
    engine: str = "numpy",
    client: Any = None,
    chunk_size: int = 20000,
) -> SweepResult:
    """Evaluate a design's loop over parameter distributions and/or its operating range.

    Parameters
    ----------
    design : Design
        With a controller and a flow or speed operating target.
    parameters : mapping, optional
        Parameter key (see :meth:`Design.parameters`) -> distribution
        (:class:`Uniform`, :class:`Normal`, :class:`Triangular`,
        :class:`Values`, or a (low, high) pair for uniform).
    samples : int
        Number of variants (ignored when only ``flows`` is given). [-]
    flows : array, optional
        Operating flows [m**3/s] (or strings); with ``parameters`` each
        variant gets one flow drawn in turn from these; alone, one variant per flow.
    seed : int
        Seed of the random generator: the same seed gives the same variants
        with either engine. [-]
    engine : str
        ``"numpy"`` (this process) or ``"dask"`` (chunks on a cluster).
    client : dask.distributed.Client, optional
        Cluster to use with ``engine="dask"``; a local cluster of two worker
        processes on 127.0.0.1 is started (and closed) when omitted.
    chunk_size : int
        Variants per chunk. [-]

    Returns
    -------
    SweepResult
    """
    import pandas as pd

    if design.controller is None:
        raise ParameterError("`design`: a sweep needs a controller in the design")
    if engine not in ("numpy", "dask"):
        raise ParameterError(f"`engine`: got {engine!r}, expected 'numpy' or 'dask'")
    parameters = dict(parameters or {})
    flow_values = None
    if flows is not None:
        spec = ParamSpec("m**3/s", "flow", minimum=0.0, include_minimum=False)
        flow_values = np.atleast_1d(np.array([to_si(f, "flows", spec) for f in np.atleast_1d(flows)], dtype=float))
        if not parameters:
            samples = flow_values.size
        flow_values = np.resize(flow_values, samples)
    if not parameters and flow_values is None:
        raise ParameterError("`parameters`: give parameter distributions, flows, or both")
    if samples < 1:
        raise ParameterError(f"`samples`: got {samples!r}, expected at least 1")
    values = _draw(design, parameters, samples, seed)
    parts = _chunks(samples, max(1, int(chunk_size)))

    def args(s: slice) -> tuple[Design, dict[str, np.ndarray], np.ndarray | None]:
        return design, {k: v[s] for k, v in values.items()}, None if flow_values is None else flow_values[s]

    if engine == "numpy":
        results = [_evaluate_chunk(*args(s)) for s in parts]
    else:
        results = _run_on_dask([args(s) for s in parts], client)
    merged = {k: np.concatenate([r[k] for r in results]) for k in results[0]}
    inputs = pd.DataFrame(values)
    if flow_values is not None:
        inputs["flow [m3/s]"] = flow_values
    return SweepResult(inputs, pd.DataFrame(merged))


def _run_on_dask(chunks: list[tuple[Any, ...]], client: Any) -> list[dict[str, np.ndarray]]:
    """Evaluate chunks on a Dask cluster, in order."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError as err:  # pragma: no cover - dask is an optional extra
        raise ParameterError("`engine`: 'dask' needs the dask extra: pip install 'drivekit[dask]'") from err
    own = client is None
    cluster = None
    if own:
        cluster = LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None
        )
        client = Client(cluster)
    try:
        futures = [client.submit(_evaluate_chunk, *c, pure=False) for c in chunks]
        return list(client.gather(futures))
    finally:
        if own:
            client.close()
            cluster.close()  # type: ignore[union-attr]


# -- tornado and gain schedule ---------------------------------------------------------------------


@dataclasses.dataclass(frozen=True, eq=False)
class Tornado:
    """How much each parameter moves one metric when taken to either end of its range.

    Attributes
    ----------
    metric : str
        The metric.
    nominal : float
        Its value for the nominal design.
    rows : pandas.DataFrame
        Per parameter: ``low``, ``high`` (SI), the metric at each end and the
        swing ``|at high - at low|``, largest swing first.
    """

    metric: str
    nominal: float
    rows: pd.DataFrame


def tornado(design: Design, parameters: Mapping[str, Any], metric: str = "phase margin [deg]") -> Tornado:
    """One-at-a-time sensitivity of ``metric`` to each parameter's range (a tornado chart's data).

    Parameters
    ----------
    design : Design
        The nominal design (with a controller).
    parameters : mapping
        Key -> distribution or (low, high); the ends used are the
        distribution's :meth:`limits` (mean +- 2 std for :class:`Normal`).
    metric : str
        One of :data:`METRIC_COLUMNS`.

    Returns
    -------
    Tornado
    """
    import pandas as pd

    if metric not in METRIC_COLUMNS:
        raise ParameterError(f"`metric`: got {metric!r}, expected one of {METRIC_COLUMNS}")
    keys = list(parameters)
    nominal = {k: float(design.value(k)) for k in keys}
    cases: dict[str, list[float]] = {k: [] for k in keys}
    ends = {}
    for key in keys:
        lo, hi = _as_distribution(key, parameters[key]).limits(key, _spec_for(design, key))
        ends[key] = (lo, hi)
    # case 0 is the nominal design, then (low, high) for each parameter in turn
    for key in keys:
        cases[key].append(nominal[key])
    for key in keys:
        for end in ends[key]:
            for other in keys:
                cases[other].append(end if other == key else nominal[other])
    values = {k: np.array(v) for k, v in cases.items()}
    kind, target = design.operating
    flows = np.full(len(values[keys[0]]), target) if kind == "flow" else None
    out = _evaluate_chunk(design, values, flows)[metric]
    rows = []
    for i, key in enumerate(keys):
        at_low, at_high = out[1 + 2 * i], out[2 + 2 * i]
        rows.append((key, ends[key][0], ends[key][1], at_low, at_high, abs(at_high - at_low)))
    frame = pd.DataFrame(rows, columns=["parameter", "low", "high", "at low", "at high", "swing"])
    frame = frame.sort_values("swing", ascending=False, ignore_index=True)
    return Tornado(metric, float(out[0]), frame)


@dataclasses.dataclass(frozen=True, eq=False)
class GainSchedule:
    """Plant and controller settings along the operating range.

    Attributes
    ----------
    table : pandas.DataFrame
        Per flow: input, the plant's half-rule FOPDT (gain, time constant,
        dead time), the rule's kp and ti, and the phase margin and Ms of the
        design's own fixed controller there.
    rule : str
        The tuning rule used.
    """

    table: pd.DataFrame
    rule: str


def gain_schedule(design: Design, flows: Any, rule: Any = None) -> GainSchedule:
    """Plant model and tuned settings at each flow of the operating range, a gain-schedule table.

    Parameters
    ----------
    design : Design
        With a pump train and (optionally) a controller.
    flows : sequence
        Flows, from minimum to maximum. [m**3/s] (or strings)
    rule : callable, optional
        A tuning rule from :data:`drivekit.tuning.RULES` taking a model and
        returning a PID. Default :func:`drivekit.tuning.simc`.

    Returns
    -------
    GainSchedule
    """
    import pandas as pd

    from .loop import Loop
    from .margins import loop_margins
    from .models import half_rule
    from .tuning import simc

    rule = rule or simc
    spec = ParamSpec("m**3/s", "flow", minimum=0.0, include_minimum=False)
    rows = []
    for f in np.atleast_1d(flows):
        q = to_si(f, "flows", spec)
        row: dict[str, Any] = {"flow [m3/h]": q * 3600.0}
        try:
            op = design.train.operating_point(flow=q)
        except OperatingPointError as err:
            row["note"] = str(err)
            rows.append(row)
            continue
        lin = design.train.linearize(op)
        model = half_rule(lin, order=1)
        pid = rule(model)
        row.update(
            {
                "input": op.u_si,
                "plant gain [SI]": model.gain,
                "time constant [s]": getattr(model, "time_constant", math.nan),
                "dead time [s]": model.dead_time,
                "kp": pid.kp,
                "ti [s]": pid.ti,
                "note": "",
            }
        )
        if design.controller is not None:
            m = loop_margins(Loop(lin, design.controller).open_loop)
            row["phase margin [deg]"] = m.phase_margin
            row["Ms [-]"] = m.ms
        rows.append(row)
    return GainSchedule(pd.DataFrame(rows), getattr(rule, "__name__", str(rule)))


def operating_range(design: Design, points: int = 9) -> np.ndarray:
    """Flows from the least the drive can hold with forward flow to the most at full input. [m**3/s]

    Parameters
    ----------
    design : Design
        With a pump train.
    points : int
        Number of flows, evenly spaced. [-]

    Returns
    -------
    numpy.ndarray
        Flows [m**3/s]; the low end is also held at or above the pump's
        minimum continuous flow when the maker gives one.
    """
    train = design.train
    if not train.is_pump:
        raise ParameterError("`design`: the operating range in flow needs a CentrifugalPump")
    lo, hi = _input_range(train)
    q_max = train.operating_point(u=hi).flow
    try:
        q_min = train.operating_point(u=lo).flow
    except OperatingPointError:
        a, b = lo, hi  # bisect for the least input that still gives forward flow
        for _ in range(40):
            mid = 0.5 * (a + b)
            try:
                train.operating_point(u=mid)
                b = mid
            except OperatingPointError:
                a = mid
        q_min = train.operating_point(u=b).flow
    w_min = train.operating_point(flow=q_min).machine_speed
    q_floor = float(train.machine.min_flow(w_min))  # type: ignore[union-attr]
    if math.isfinite(q_floor):
        q_min = max(q_min, q_floor)
    return np.linspace(q_min, q_max, points)


def _input_range(train: Any) -> tuple[float, float]:
    if train.drive is not None:
        lo, hi = train.drive.reference_range()
        return float(lo), float(hi)
    raise ParameterError("`design`: the operating range needs a drive (its reference range sets the limits)")
