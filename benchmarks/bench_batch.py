"""10 000 variants of the demo flow loop: margins and step metrics at once; python-control loop side by side.

Parameters of the invented Marrow Creek P-201 train are spread uniformly by
+-30 % (static head, pipe length, motor and pump inertia, drive lag, meter lag
and dead time); all variants are built and linearised at the design flow in
one vectorised pass (drivekit.variants.make_variants), timed as part of the
batch figure. The PI is the SIMC setting of
bench_analysis.py (Kc = 0.318 %/(m**3/h), Ti = 3.8 s).

Prints the median of REPEAT runs of the whole batch (build, margins, step
metrics) and the python-control loop timed on a sample and scaled to N.

Run: .venv/bin/python benchmarks/bench_batch.py [N]
"""

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import statistics
import sys
import time

import control
import numpy as np

from drivekit import demo
from drivekit.batch import batch_loop_margins
from drivekit.batch_steps import batch_step_metrics
from drivekit.linear import LinearModel
from drivekit.loop import Loop
from drivekit.margins import loop_margins, step_metrics
from drivekit.variants import make_variants

SAMPLE = 200
REPEAT = 5


def spread(stages: dict, factors: np.ndarray) -> dict:
    """Design key -> array of values for the seven parameters spread by the factors."""
    s, f = stages, factors
    return {
        "drive.time_constant": s["drive"].time_constant * f[:, 0],
        "motor.J": s["motor"].J * f[:, 1],
        "machine.J": s["pump"].J * f[:, 2],
        "pipe1.static_head": s["pipe"].static_head * f[:, 3],
        "pipe1.length": s["pipe"].length * f[:, 4],
        "sensor.time_constant": s["meter"].time_constant * f[:, 5],
        "sensor.dead_time": s["meter"].dead_time * f[:, 6],
    }


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000
    rng = np.random.default_rng(2024)
    factors = rng.uniform(0.7, 1.3, size=(n, 7))
    stages = demo.raw_water_pump_stages()
    train = demo.raw_water_pump()
    nominal = train.linearize(train.operating_point(flow=demo.RAW_WATER_FLOW_TARGET))
    gain_si = nominal.dc_gain_si
    kc, ti = 3.8 / (gain_si * 2 * 0.756), 3.8
    ctrl = LinearModel(np.zeros((1, 1)), np.ones((1, 1)), np.array([[kc / ti]]), np.array([[kc]]))
    values = spread(stages, factors)
    t_setup, t_marg, t_step, t_total = [], [], [], []
    for _ in range(REPEAT):
        t0 = time.perf_counter()
        linear = make_variants(train, values).linearize(flow=demo.RAW_WATER_FLOW_TARGET)
        batch = linear.to_model_batch()
        t1 = time.perf_counter()
        bm = batch_loop_margins(batch, ctrl)
        t2 = time.perf_counter()
        bs = batch_step_metrics(batch, ctrl, stable=bm.stable)
        t3 = time.perf_counter()
        t_setup.append(t1 - t0)
        t_marg.append(t2 - t1)
        t_step.append(t3 - t2)
        t_total.append(t3 - t0)
    assert linear.valid.all()
    models = [linear.model(i) for i in range(n)]

    # drivekit single-variant functions on a sample (cross-check and per-variant cost)
    idx = rng.choice(n, size=min(SAMPLE, n), replace=False)
    t0 = time.perf_counter()
    worst = 0.0
    for i in idx:
        loop = Loop(models[i], ctrl)
        m = loop_margins(loop)
        s = step_metrics(loop)
        worst = max(worst, abs(m.phase_margin - bm.phase_margin[i]) / abs(m.phase_margin))
        worst = max(worst, abs(s.settling_time - bs.settling_time[i]) / s.settling_time)
    t_single = (time.perf_counter() - t0) / len(idx) * n

    # python-control loop on the same sample (Pade order 3 for the dead time), scaled to n
    c = control.tf([kc * ti, kc], [ti, 0.0])
    t0 = time.perf_counter()
    for i in idx:
        L = c * models[i].pade(3)
        control.stability_margins(L)
        control.step_info(control.feedback(L))
    t_ctrl = (time.perf_counter() - t0) / len(idx) * n

    frame = bm.to_frame()
    print(f"variants: {n}; stable: {int(bm.stable.sum())}")
    print(frame[["gain_margin", "phase_margin", "delay_margin", "ms"]].describe().loc[["min", "50%", "max"]])
    print(bs.to_frame()[["rise_time", "settling_time", "overshoot", "iae"]].describe().loc[["min", "50%", "max"]])
    med = statistics.median
    total = med(t_total)
    print(f"\nmedian of {REPEAT} runs [s]")
    print(f"build + linearise {n} variants (make_variants)  {med(t_setup):8.3f} s")
    print(f"batch margins                                   {med(t_marg):8.3f} s")
    print(f"batch step metrics                              {med(t_step):8.3f} s")
    print(f"batch total                                     {total:8.3f} s   (target <= 1.5 s)")
    print(f"drivekit single-variant loop (sample x {n // len(idx)})      {t_single:8.2f} s")
    print(f"python-control loop (sample {len(idx)} scaled to {n})     {t_ctrl:8.2f} s")
    print(f"speed-up over python-control: {t_ctrl / total:.1f}x (target >= 30x)")
    print(f"load average while measuring: {os.getloadavg()[0]:.2f}")
    print(f"largest relative difference batch vs single (PM, settling): {worst:.2e}")


if __name__ == "__main__":
    main()
