"""Latency from a slider key press to the step plot's new data on screen, full loop-design board, real browser.

Runs JupyterLab and Debian's headless Chromium (tests/browser/harness.py), opens
notebooks/loop_board_demo.ipynb, presses ArrowRight on the controller-gain slider
20 times and prints the median time, seen from the Playwright driver, until the
step plot's SVG path data changed. Target: median <= 120 ms. Side by side, the
same recompute in the kernel's Python (drivekit.widgets.compute_result) and
python-control alone (closed-loop step response of the same Pade model) are timed.
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
        compute_result(d)
        times.append(time.perf_counter() - t0)
    lin = design.train.linearize(design.operating_point())
    closed = control.feedback(design.controller.tf * lin.pade(4), 1)
    ref = []
    for _ in range(PRESSES):
        t0 = time.perf_counter()
        control.step_response(closed, 30.0)
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
    print(f"  recompute per change in Python (compute_result): median {1e3 * compute:.1f} ms")
    print(f"  python-control closed-loop step response alone:   median {1e3 * ref:.1f} ms")


if __name__ == "__main__":
    main()
