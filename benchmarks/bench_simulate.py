"""Speed of the nonlinear loop simulation, with scipy.integrate.solve_ivp on the same plant side by side.

Run: .venv/bin/python benchmarks/bench_simulate.py

1. drivekit.simulate: the 10-minute demo scenario of the invented Marrow Creek P-201 flow loop
   (setpoint steps, a density change, a valve closing, a static head change) at a 10 ms scan.
2. solve_ivp (RK45, rtol 1e-9) on DriveTrain.derivatives, restarted every scan with the same
   discrete PI (drivekit.simulate.DiscretePID) and dead-time buffer, over the first 30 s of the
   same scenario (the whole run would take minutes); the same 30 s from drivekit are compared
   with it for accuracy.
"""

import math
import time

import numpy as np
from scipy.integrate import solve_ivp

from drivekit import demo
from drivekit.simulate import (
    ControllerSettings,
    DensityChange,
    DiscretePID,
    LoopOptions,
    Scenario,
    StaticHeadChange,
    ValveClosing,
    simulate,
)

SCAN = 0.01
PI = ControllerSettings(kp=150.0, ti=3.0, sample_time=SCAN)
SCENARIO = Scenario(
    duration=600.0,
    setpoint="380 m**3/h",
    setpoint_steps=((10.0, "340 m**3/h"), (150.0, "420 m**3/h"), (450.0, "360 m**3/h")),
    disturbances=(DensityChange(250.0, sg=1.10), ValveClosing(330.0, 10.0), StaticHeadChange(520.0, "20 m")),
    name="P-201 ten-minute demo",
)


def best_of(n, fn):
    best, out = math.inf, None
    for _ in range(n):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def solve_ivp_loop(train, duration):
    """The same closed loop, the plant integrated by solve_ivp scan by scan."""
    op = train.operating_point(flow=380.0 / 3600.0)
    x, u = op.x.copy(), op.u_si
    pid = DiscretePID(PI, LoopOptions(), SCAN, tuple(train.drive.reference_range()))
    y0 = float(train.output_of(x))
    pid.start(y0, y0, u)
    lag = round(train.dead_time / SCAN)
    readings, flows, setpoint = [], [], 380.0 / 3600.0
    for k in range(round(duration / SCAN) + 1):
        if k == round(10.0 / SCAN):
            setpoint = 340.0 / 3600.0
        readings.append(float(train.output_of(x)))
        u = pid.update(setpoint, readings[max(k - lag, 0)])
        flows.append(x[train.state_names.index("flow")] * 3600.0)
        sol = solve_ivp(lambda t, s, u=u: train.derivatives(s, u), (0.0, SCAN), x, rtol=1e-9, atol=1e-12)
        x = sol.y[:, -1]
    return np.array(flows[:-1])


def main():
    train = demo.raw_water_pump()
    wall, run = best_of(3, lambda: simulate(train, PI, SCENARIO))
    print(
        f"drivekit.simulate, {SCENARIO.duration:.0f} s at a {SCAN * 1e3:.0f} ms scan, {run.substeps} RK4 step(s)/scan:"
    )
    print(f"  wall time {wall:.3f} s  ->  {SCENARIO.duration / wall:,.0f} simulated s per wall s")

    part = 30.0
    wall_ivp, flows_ivp = best_of(1, lambda: solve_ivp_loop(train, part))
    short = Scenario(duration=part, setpoint="380 m**3/h", setpoint_steps=((10.0, "340 m**3/h"),))
    wall_dk, short_run = best_of(3, lambda: simulate(train, PI, short))
    flows_dk = short_run.frame["flow [m3/h]"].to_numpy()[: len(flows_ivp)]
    print(f"same loop, first {part:.0f} s (setpoint step 380 -> 340 m3/h at 10 s):")
    print(f"  solve_ivp RK45 rtol 1e-9 per scan: {wall_ivp:.2f} s  ->  {part / wall_ivp:,.1f} simulated s per wall s")
    print(f"  drivekit.simulate:                 {wall_dk:.3f} s  ->  {part / wall_dk:,.0f} simulated s per wall s")
    diff = np.max(np.abs(flows_dk - flows_ivp))
    print(f"  speed-up {wall_ivp / wall_dk:,.0f}x; largest flow difference {diff:.2e} m3/h")


if __name__ == "__main__":
    main()
