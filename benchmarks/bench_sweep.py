"""A tolerance sweep of the demo flow loop: 100 000 variants locally, then on a 2-worker local Dask cluster.

Each variant is solved, linearised and analysed (margins and step metrics) in
vectorised batches. Prints wall times and variants per second for the local
engine and for the Dask engine (LocalCluster, 2 worker processes on
127.0.0.1, start-up timed separately), checks that both give identical
results, and times a python-control loop over a sample of the variants
(stability_margins and step_info on a Pade model) scaled to the same count.
"""

from __future__ import annotations

import argparse
import time

import control
import numpy as np

import drivekit as dk
from drivekit import demo, sweep

PARAMETERS = {
    "motor.J": sweep.Uniform("0.63 kg*m**2", "1.17 kg*m**2"),
    "machine.J": sweep.Uniform("0.77 kg*m**2", "1.43 kg*m**2"),
    "pipe1.length": sweep.Uniform("455 m", "845 m"),
    "pipe1.static_head": sweep.Normal("18 m", "1.5 m"),
    "sensor.time_constant": sweep.Triangular("0.7 s", "1 s", "1.3 s"),
    "sensor.dead_time": sweep.Triangular("0.14 s", "0.2 s", "0.26 s"),
    "fluid.sg": sweep.Uniform(0.998, 1.3),
}


def _design() -> dk.Design:
    return dk.Design(train=demo.raw_water_pump(), operating=("flow", "380 m**3/h"), controller=dk.PID(kp=550.0, ti=3.0))


def _python_control_seconds(design: dk.Design, result: sweep.SweepResult, sample: int) -> float:
    frame = result.inputs.iloc[:sample]
    controller = design.controller.tf
    t0 = time.perf_counter()
    for _, row in frame.iterrows():
        d = design
        for key in PARAMETERS:
            d = d.with_value(key, float(row[key]))
        lin = d.train.linearize(d.operating_point())
        loop = controller * lin.pade(6)
        control.stability_margins(loop)
        closed = control.feedback(loop, 1)
        control.step_info(closed)
    return (time.perf_counter() - t0) / sample


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--samples", type=int, default=100_000)
    parser.add_argument("--chunk", type=int, default=10_000)
    args = parser.parse_args()
    design = _design()
    sweep.run(design, PARAMETERS, samples=200, seed=0)  # warm-up

    t0 = time.perf_counter()
    local = sweep.run(design, PARAMETERS, samples=args.samples, seed=7, chunk_size=args.chunk)
    t_local = time.perf_counter() - t0

    from dask.distributed import Client, LocalCluster

    t0 = time.perf_counter()
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None)
    client = Client(cluster)
    client.submit(sweep.run, design, {"motor.J": (0.8, 1.0)}, samples=10).result()  # workers import drivekit
    t_start = time.perf_counter() - t0
    try:
        t0 = time.perf_counter()
        remote = sweep.run(
            design, PARAMETERS, samples=args.samples, seed=7, chunk_size=args.chunk, engine="dask", client=client
        )
        t_dask = time.perf_counter() - t0
    finally:
        client.close()
        cluster.close()
    same = remote.to_frame().equals(local.to_frame())

    per_pc = _python_control_seconds(design, local, 100)
    valid = int(np.isfinite(local.metrics["phase margin [deg]"]).sum())
    print(f"tolerance sweep of the demo flow loop, {args.samples} variants ({valid} with an operating point)")
    print(f"  drivekit, local numpy          {t_local:7.2f} s   {args.samples / t_local:9.0f} variants/s")
    print(
        f"  drivekit, Dask 2 workers       {t_dask:7.2f} s   {args.samples / t_dask:9.0f} variants/s"
        f"   (cluster start {t_start:.1f} s, not included)"
    )
    print(f"  results identical              {same}")
    print(
        f"  python-control loop (scaled)   {per_pc * args.samples:7.1f} s"
        f"   ({per_pc * 1e3:.1f} ms per variant, 100 timed)"
    )
    print(f"  ratio python-control / local   {per_pc * args.samples / t_local:7.1f} x")
    print(
        "worst phase margin:",
        round(float(local.metrics["phase margin [deg]"].min()), 2),
        "deg;",
        "99th percentile Ms:",
        round(float(local.metrics["Ms [-]"].quantile(0.99)), 3),
    )


if __name__ == "__main__":
    main()
