"""Rebuild, solve and linearise the demo pump train, as on every slider move.

Prints the median time per rebuild (a parameter changed on one stage, the drive train rebuilt, the
operating point for the design flow found and the coupled model linearised), next to the same
operating point and Jacobian computed with general-purpose scipy tools on the same model
(scipy.optimize.root on the full state equations, Jacobian by scipy.optimize.approx_fprime).
Target: at most 2 ms median on a 2-core machine.
"""

from __future__ import annotations

import dataclasses
import statistics
import time

import numpy as np
import scipy.optimize

from drivekit import demo


def _median_ms(fn, repeats: int) -> float:
    fn(0)
    times = []
    for i in range(repeats):
        t0 = time.perf_counter()
        fn(i)
        times.append(time.perf_counter() - t0)
    return statistics.median(times) * 1e3


def main() -> None:
    train = demo.raw_water_pump()
    flow = demo.RAW_WATER_FLOW_TARGET
    reference = train.operating_point(flow=flow)

    def drivekit_rebuild(i: int) -> None:
        motor = dataclasses.replace(train.motor, J=0.9 * (1 + 1e-3 * (i % 50)))
        rebuilt = train.with_stage("motor", motor)
        rebuilt.linearize(rebuilt.operating_point(flow=flow))

    def scipy_rebuild(i: int) -> None:
        motor = dataclasses.replace(train.motor, J=0.9 * (1 + 1e-3 * (i % 50)))
        rebuilt = train.with_stage("motor", motor)
        u = reference.u_si
        sol = scipy.optimize.root(lambda x: rebuilt.derivatives(x, u), reference.x * 0.95, method="hybr")
        x = sol.x
        np.array(
            [scipy.optimize.approx_fprime(x, lambda z, k=k: rebuilt.derivatives(z, u)[k], 1e-7) for k in range(x.size)]
        )

    ours = _median_ms(drivekit_rebuild, 500)
    theirs = _median_ms(scipy_rebuild, 100)
    print("demo pump train: rebuild + operating point + linearise")
    print(f"  drivekit                      median {ours:7.3f} ms   (target <= 2 ms)")
    print(f"  scipy root + approx_fprime    median {theirs:7.3f} ms   (input given, not the flow)")
    print(f"  ratio                         {theirs / ours:7.1f} x")


if __name__ == "__main__":
    main()
