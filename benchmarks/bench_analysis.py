"""Interactive update of the demo pump flow loop: rebuild, linearise, analyse; python-control side by side.

The demo plant (Marrow Creek P-201, invented) is about 7.9 (m**3/h)/% with lags
3.3 s, 1 s, 0.05 s, 0.006 s and 0.2 s dead time. PI by SIMC (Skogestad,
J. Process Control 13 (2003) 291-309) on the half-rule first-order model:
tau = 3.3 + 1/2 = 3.8 s, theta = 0.2 + 0.5 + 0.05 + 0.006 = 0.756 s, tau_c = theta:
Kc = tau / (K (tau_c + theta)), Ti = min(tau, 4 (tau_c + theta)) = 3.8 s.

Prints medians of repeated runs: each analysis alone, and the whole
interactive update (rebuild the operating point and linear model, close the
loop with the PI, step response 500 points, frequency response 400 points,
margins, root locus) against the python-control equivalent of the same chain
(the same rebuild, Pade(3) model, C G, feedback, step_response,
frequency_response, stability_margins, root_locus_map at the same times,
frequencies and gains), with the ratio and the load average.

Run: .venv/bin/python benchmarks/bench_analysis.py
"""

import os

# small matrices: one BLAS thread avoids thread start-up spikes on a shared machine
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import dataclasses
import statistics
import time

import control
import numpy as np

from drivekit import demo
from drivekit.design import Design
from drivekit.drivetrain import DriveTrain
from drivekit.linear import LinearModel
from drivekit.loop import Loop
from drivekit.margins import loop_margins
from drivekit.pid import PID
from drivekit.responses import frequency_response, step_response
from drivekit.rootlocus import root_locus

REPEAT = 60


def pi_controller(kc: float, ti: float) -> LinearModel:
    """Ideal PI kc (1 + 1/(ti s)) as a state-space model: x' = e, u = kc/ti x + kc e."""
    return LinearModel(np.zeros((1, 1)), np.ones((1, 1)), np.array([[kc / ti]]), np.array([[kc]]))


def simc_pi(gain_si: float) -> tuple[float, float]:
    tau, theta = 3.3 + 1.0 / 2, 0.2 + 0.5 + 0.05 + 0.006
    return tau / (gain_si * (2 * theta)), min(tau, 4 * 2 * theta)


def rebuild(stages: dict, static_head: float) -> LinearModel:
    pipe = dataclasses.replace(stages["pipe"], static_head=static_head)
    train = DriveTrain(stages["drive"], stages["motor"], stages["pump"], pipe, stages["meter"], fluid=demo.Fluid())
    op = train.operating_point(flow=demo.RAW_WATER_FLOW_TARGET)
    return train.linearize(op)


def median_ms(fn, repeat=REPEAT):
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * statistics.median(times)


def main() -> None:
    stages = demo.raw_water_pump_stages()
    plant = rebuild(stages, 18.0)
    kc, ti = simc_pi(plant.dc_gain_si)
    print(f"plant: {plant.factored()}")
    print(f"SIMC PI: Kc = {kc:.4g} %/(m**3/s) = {kc / 3600:.4g} %/(m**3/h), Ti = {ti:.3g} s")
    ctrl = pi_controller(kc, ti)
    heads = iter(np.linspace(16.0, 20.0, 10 * REPEAT + 20).tolist() * 10)

    def analysis(p):
        loop = Loop(p, ctrl)
        s = step_response(loop)
        f = frequency_response(loop)
        m = loop_margins(loop)
        r = root_locus(loop)
        return s, f, m, r

    def full():
        analysis(rebuild(stages, next(heads)))

    t_rebuild = median_ms(lambda: rebuild(stages, next(heads)))
    t_loop = median_ms(lambda: Loop(plant, ctrl).open_loop)
    t_step = median_ms(lambda: step_response(Loop(plant, ctrl)))
    t_freq = median_ms(lambda: frequency_response(Loop(plant, ctrl)))
    t_marg = median_ms(lambda: loop_margins(Loop(plant, ctrl)))
    t_rl = median_ms(lambda: root_locus(Loop(plant, ctrl)))
    t_an = median_ms(lambda: analysis(plant))
    t_full = median_ms(full)

    # the same update split by stage (fresh plant each time; the step response builds the open loop
    # and its margin-grid evaluation, which margins then reuse)
    stage_times: dict[str, list[float]] = {
        k: [] for k in ("rebuild", "loop + step", "frequency", "margins", "root locus")
    }
    for _ in range(REPEAT):
        t0 = time.perf_counter()
        p = rebuild(stages, next(heads))
        t1 = time.perf_counter()
        loop = Loop(p, ctrl)
        step_response(loop)
        t2 = time.perf_counter()
        frequency_response(loop)
        t3 = time.perf_counter()
        loop_margins(loop)
        t4 = time.perf_counter()
        root_locus(loop)
        t5 = time.perf_counter()
        for key, dt in zip(stage_times, (t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4), strict=True):
            stage_times[key].append(dt)
    split = {k: 1e3 * statistics.median(v) for k, v in stage_times.items()}
    design = Design(
        train=demo.raw_water_pump(),
        operating=("flow", "380 m**3/h"),
        controller=PID(kc, ti),
        measurement_span=("0 m**3/h", "600 m**3/h"),
        output_span=(0.0, 100.0),
    )
    moves = iter(np.linspace(16.0, 20.0, 10 * REPEAT + 20).tolist() * 10)

    def slider_move():
        result = design.with_value("pipe1.static_head", next(moves)).evaluate()
        root_locus(result.loop)

    t_move = median_ms(slider_move)
    s, f, m, r = analysis(plant)
    print(f"margins: GM {m.gain_margin:.3g}, PM {m.phase_margin:.3g} deg, Ms {m.ms:.3g}, {m.verdict}")

    # python-control on the same model (Pade order 3 where it needs a rational delay)
    g = plant.pade(3)
    c = control.tf([kc * ti, kc], [ti, 0.0])
    L = c * g
    cl = control.feedback(L)
    t = s.t
    w = f.omega
    gains = r.gains
    c_step = median_ms(lambda: control.step_response(cl, t), 20)
    c_freq = median_ms(lambda: control.frequency_response(L, w), 20)
    c_marg = median_ms(lambda: control.stability_margins(L), 20)
    c_rl = median_ms(lambda: control.root_locus_map(L, gains), 20)
    c_loop = median_ms(lambda: control.feedback(c * plant.pade(3)), 20)
    c_total = c_step + c_freq + c_marg + c_rl

    def control_update():
        p = rebuild(stages, next(heads))
        loop_tf = c * p.pade(3)
        closed = control.feedback(loop_tf)
        control.step_response(closed, t)
        control.frequency_response(loop_tf, w)
        control.stability_margins(loop_tf)
        control.root_locus_map(loop_tf, gains)

    c_update = median_ms(control_update, 20)

    print("\nmedian times [ms]              drivekit   python-control")
    print(f"rebuild + operating point + linearise {t_rebuild:8.2f}")
    print(f"loop assembly (Pade + feedback) {t_loop:8.3f}   {c_loop:8.3f}")
    print(f"step response, 500 points      {t_step:8.3f}   {c_step:8.3f}")
    print(f"frequency response, 400 points {t_freq:8.3f}   {c_freq:8.3f}")
    print(f"margins                        {t_marg:8.3f}   {c_marg:8.3f}")
    print(f"root locus                     {t_rl:8.3f}   {c_rl:8.3f}")
    print(f"analysis total                 {t_an:8.3f}   {c_total:8.3f}   speed-up {c_total / t_an:5.1f}x")
    ratio = c_update / t_full
    print(
        f"interactive update (rebuild, loop with the PI, step, frequency, margins, root locus) "
        f"{t_full:8.3f}   {c_update:8.3f}   speed-up {ratio:5.1f}x"
    )
    print("interactive update by stage [ms]: " + ", ".join(f"{k} {v:.3f}" for k, v in split.items()))
    print(f"one slider move: Design.evaluate() + root locus {t_move:8.3f} ms   (target <= 5 ms)")
    print(f"speed-up target >= 10x: {'met' if ratio >= 10 else 'missed'} ({ratio:.1f}x)")
    print(f"load average while measuring: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
