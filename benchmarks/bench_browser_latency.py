"""Latency from a slider key press to the step plot's new data on screen, full loop-design board, real browser.

Runs JupyterLab and Debian's headless Chromium (tests/browser/harness.py), opens
notebooks/loop_board_demo.ipynb, presses ArrowRight on the controller-gain slider
20 times and prints the median time, seen from the Playwright driver, until the
step plot's SVG path data changed. Target: median <= 120 ms. Side by side, the
same recompute in the kernel's Python (drivekit.widgets.compute_result: one
Design.evaluate, plus the root locus the board draws) and python-control alone
(closed-loop step response of the same loop with a 4th-order Pade model of the
dead time, and its stability margins) are timed.
"""

import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import control

from drivekit import demo
from drivekit.design import Design
from drivekit.pid import PID
from drivekit.widgets import compute_result
from tests.browser import harness

PRESSES = 20


def python_side() -> tuple[float, float]:
    design = Design(
        train=demo.raw_water_pump(),
        operating=("flow", "380 m**3/h"),
        controller=PID(1080.0, "3 s"),
        output_span=(0.0, 100.0),
    )
    times = []
    for k in range(PRESSES):
        d = design.with_value("controller.kp", 1080.0 + k)
        t0 = time.perf_counter()
        result = compute_result(d)
        _ = result.locus  # the root-locus view asks for it on every change
        times.append(time.perf_counter() - t0)
    lin = design.train.linearize(design.operating_point())
    ref = []
    for k in range(PRESSES):
        c = design.with_value("controller.kp", 1080.0 + k).controller
        t0 = time.perf_counter()
        open_loop = c.tf * lin.pade(4)
        control.step_response(control.feedback(open_loop, 1), 30.0)
        control.stability_margins(open_loop)
        ref.append(time.perf_counter() - t0)
    return statistics.median(times), statistics.median(ref)


def main() -> None:
    if not harness.chromium_available():
        sys.exit("Debian's Chromium is missing at /usr/bin/chromium: apt-get install chromium")
    with harness.jupyter_lab() as (base, token, name), harness.chromium() as page:
        harness.open_board(page, base, token, name)
        harness.press_and_wait(page)  # warm-up
        lat = [harness.press_and_wait(page) for _ in range(PRESSES)]
    compute, ref = python_side()
    print(f"key press -> step plot redrawn, full loop-design board, {PRESSES} presses (Playwright side):")
    print(
        f"  median {1e3 * statistics.median(lat):.0f} ms, min {1e3 * min(lat):.0f} ms, max {1e3 * max(lat):.0f} ms"
        f"  (target <= 120 ms median)"
    )
    print(f"  recompute per change in Python (compute_result + root locus): median {1e3 * compute:.1f} ms")
    print(f"  python-control step response + margins (Pade 4):         median {1e3 * ref:.1f} ms")


if __name__ == "__main__":
    main()
