"""Batch metrics equal the single-variant functions; python-control checks a sample."""

import control
import numpy as np
import pytest

from drivekit.batch import ModelBatch, batch_loop_margins
from drivekit.batch_steps import batch_step_metrics
from drivekit.loop import Loop, as_linear
from drivekit.margins import loop_margins, step_metrics
from drivekit.units import ParameterError

MARGIN_FIELDS = [
    "gain_margin",
    "phase_margin",
    "gain_crossover",
    "phase_crossover",
    "delay_margin",
    "ms",
    "mt",
    "bandwidth",
]
STEP_FIELDS = [
    "rise_time",
    "settling_time",
    "overshoot",
    "undershoot",
    "peak",
    "peak_time",
    "final_value",
    "iae",
    "itae",
]


def _family(seed=3, count=24):
    """Second-order plants of several kinds (lags, lightly damped, integrating, unstable), some with dead time."""
    rng = np.random.default_rng(seed)
    out = []
    for i in range(count):
        kind = i % 4
        k = rng.uniform(0.5, 2.0)
        if kind == 0:
            den = np.polymul([rng.uniform(1, 5), 1.0], [rng.uniform(0.1, 1.0), 1.0])
        elif kind == 1:
            wn, zeta = rng.uniform(0.5, 3.0), rng.uniform(0.05, 0.2)
            den = [1 / wn**2, 2 * zeta / wn, 1.0]
        elif kind == 2:
            den = [rng.uniform(0.5, 2.0), 1.0, 0.0]
            k *= 0.2
        else:
            den = np.polymul([1.0, -rng.uniform(0.05, 0.2)], [rng.uniform(0.1, 0.3), 1.0])
            k = rng.uniform(2.0, 4.0)
        delay = 0.0 if i % 3 == 0 else rng.uniform(0.05, 0.4)
        out.append((control.tf([k], den), delay))
    return out


def _models(pairs):
    return [as_linear(g, delay=d) for g, d in pairs]


CONTROLLER = as_linear(control.tf([1.0 * 3.0, 1.0], [3.0, 0.0]))


def test_batch_margins_equal_single():
    plants = _models(_family())
    batch = ModelBatch.stack(plants)
    bm = batch_loop_margins(batch, CONTROLLER)
    for i, plant in enumerate(plants):
        m = loop_margins(Loop(plant, CONTROLLER))
        assert bool(bm.stable[i]) == m.stable
        assert bm.unstable_poles[i] == m.unstable_poles
        for name in MARGIN_FIELDS:
            np.testing.assert_allclose(getattr(bm, name)[i], getattr(m, name), rtol=1e-8, err_msg=f"{i} {name}")
    # the family holds stable and unstable loops and open-loop unstable plants
    assert bm.stable.any()
    assert not bm.stable.all()
    frame = bm.to_frame()
    assert len(frame) == len(plants)
    assert list(frame.columns)[:3] == ["gain_margin", "gain_margin_db", "phase_margin"]


def test_batch_margins_against_python_control_for_delay_free_variants():
    pairs = [(g, d) for g, d in _family(seed=5) if d == 0]
    bm = batch_loop_margins(ModelBatch.stack(_models(pairs)), CONTROLLER)
    c = control.tf([1.0 * 3.0, 1.0], [3.0, 0.0])
    for i, (g, _) in enumerate(pairs):
        # Source: python-control stability_margins and closed-loop poles of feedback(C G)
        gm, pm, _, _, _, _ = control.stability_margins(c * g)
        assert bm.gain_margin[i] == pytest.approx(gm, rel=1e-7)
        assert bm.phase_margin[i] == pytest.approx(pm, rel=1e-7)
        cl = control.poles(control.feedback(c * g))
        assert bool(bm.stable[i]) == bool(np.all(cl.real < 0))


def test_batch_step_metrics_equal_single():
    plants = _models(_family())
    batch = ModelBatch.stack(plants)
    bs = batch_step_metrics(batch, CONTROLLER)
    # passing the known stability gives the same result
    again = batch_step_metrics(batch, CONTROLLER, stable=batch_loop_margins(batch, CONTROLLER).stable)
    np.testing.assert_array_equal(again.final_value, bs.final_value)
    for i, plant in enumerate(plants):
        s = step_metrics(Loop(plant, CONTROLLER))
        for name in STEP_FIELDS:
            np.testing.assert_allclose(
                getattr(bs, name)[i], getattr(s, name), rtol=1e-7, atol=1e-12, err_msg=f"{i} {name}"
            )


def test_controller_per_variant_and_errors():
    plants = _models(_family(count=6))
    ctrls = ModelBatch.stack([as_linear(control.tf([kp * 3.0, kp], [3.0, 0.0])) for kp in np.linspace(0.5, 1.5, 6)])
    bm = batch_loop_margins(ModelBatch.stack(plants), ctrls)
    for i, plant in enumerate(plants):
        m = loop_margins(Loop(plant, ctrls.model(i)))
        assert bm.phase_margin[i] == pytest.approx(m.phase_margin, rel=1e-8)
    with pytest.raises(ParameterError, match="`controller`"):
        batch_loop_margins(ModelBatch.stack(plants), ctrls.subset(slice(0, 3)))
    with pytest.raises(ParameterError, match="`models`"):
        ModelBatch.stack([plants[0], as_linear(control.tf([1.0], [1.0, 1.0]))])
    with pytest.raises(ParameterError, match="`delay`"):
        ModelBatch(
            np.zeros((2, 1, 1)), np.ones((2, 1, 1)), np.ones((2, 1, 1)), np.zeros((2, 1, 1)), np.array([0, -1.0])
        )


def test_batch_steps_with_whole_step_dead_times_equal_single():
    """Dead times of several grid steps each (no shorter one in the batch): the blocked recursion."""
    rng = np.random.default_rng(11)
    plants = []
    for _ in range(12):
        den = np.polymul([rng.uniform(1.0, 4.0), 1.0], [rng.uniform(0.2, 0.8), 1.0])
        plants.append(as_linear(control.tf([rng.uniform(0.5, 1.5)], den), delay=rng.uniform(0.3, 1.2)))
    batch = ModelBatch.stack(plants)
    bs = batch_step_metrics(batch, CONTROLLER)
    for i, plant in enumerate(plants):
        # Source: drivekit's single-loop response, itself checked against python-control (test_responses)
        s = step_metrics(Loop(plant, CONTROLLER))
        for name in STEP_FIELDS:
            np.testing.assert_allclose(
                getattr(bs, name)[i], getattr(s, name), rtol=1e-9, atol=1e-12, err_msg=f"{i} {name}"
            )
