"""Static figures of a record (step response, Bode, operating point) as inline SVG text.

Drawn with matplotlib's object API (no pyplot, no global state), so they
render the same in a script, a test or a notebook. The SVG has no date and a
fixed id salt per figure, so the same design gives the same text.
"""

from __future__ import annotations

import io
import math
import re
from typing import Any

import numpy as np

from ..pumps import CentrifugalPump
from .results import Evaluation

__all__ = ["bode_figure", "operating_figure", "step_figure", "svg_text"]

_RPM = 60.0 / (2.0 * math.pi)


def svg_text(fig: Any, salt: str) -> str:
    """The figure as an ``<svg>`` element (no XML prolog), deterministic for a given ``salt``."""
    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context({"svg.hashsalt": salt, "svg.fonttype": "none"}):
        fig.savefig(buf, format="svg", metadata={"Date": None}, bbox_inches="tight")
    text = buf.getvalue()
    text = re.sub(r"\s*<metadata>.*?</metadata>", "", text, flags=re.DOTALL)  # creator and licence block
    return text[text.index("<svg") :]


def _figure(height: float = 3.2) -> Any:
    from matplotlib.figure import Figure

    return Figure(figsize=(6.4, height), dpi=100, layout="constrained")


def step_figure(ev: Evaluation) -> str:
    """Step response (dead time exact): closed loop to a setpoint step with a controller, else the plant."""
    from ..responses import step_response

    model = ev.model
    fig = _figure()
    ax = fig.add_subplot()
    scale = model.display_scale
    if ev.design.controller is None:
        resp = step_response(model)
        ax.plot(resp.t, resp.y * scale, color="C0")
        ax.set_title(f"Plant: {model.output_name} after a unit step of {model.input_name}")
        ax.set_ylabel(f"{model.output_name} change [{model.output_display_unit}]")
    else:
        resp = ev.result.setpoint_step
        stable = ev.margins is not None and ev.margins.stable
        ax.plot(resp.t, resp.y, color="C0", label="measured value")
        ax.axhline(1.0, color="0.5", lw=0.8, ls="--", label="setpoint")
        ax.legend(loc="lower right")
        verdict = "" if stable else " (UNSTABLE)"
        ax.set_title(f"Closed loop: unit setpoint step{verdict}")
        ax.set_ylabel("measured value / setpoint step [-]")
    ax.set_xlabel("time [s]")
    ax.grid(True, alpha=0.3)
    return svg_text(fig, "step")


def bode_figure(ev: Evaluation) -> str:
    """Bode plot of the plant (dead time exact) and, with a controller, of the open loop."""
    model = ev.model
    poles = np.abs(model.poles[np.abs(model.poles) > 0])
    lo = 0.1 * float(np.min(poles)) if poles.size else 0.01
    hi = 10.0 * float(np.max(poles)) if poles.size else 100.0
    if model.delay > 0:
        hi = max(min(hi, 10.0 / model.delay), 100.0 * lo)  # beyond 10/delay the phase only spins
    w = np.logspace(math.log10(lo), math.log10(hi), 500)
    fig = _figure(4.6)
    mag, ph = fig.subplots(2, 1, sharex=True)
    g = model.frequency_response(w)
    curves = [(f"plant G [{model.output_display_unit} per {model.input_unit or 'unit'}]", g * model.display_scale)]
    if ev.design.controller is not None:
        curves.append(("open loop L = C G", g * ev.design.controller.frequency_response(w)))
    for i, (label, resp) in enumerate(curves):
        mag.semilogx(w, 20 * np.log10(np.abs(resp)), color=f"C{i}", label=label)
        ph.semilogx(w, np.degrees(np.unwrap(np.angle(resp))), color=f"C{i}")
    if len(curves) > 1:
        mag.axhline(0.0, color="0.5", lw=0.8, ls="--")
        ph.axhline(-180.0, color="0.5", lw=0.8, ls="--")
    mag.set_ylabel("magnitude [dB]")
    ph.set_ylabel("phase [deg]")
    ph.set_xlabel("frequency [rad/s]")
    mag.legend(loc="lower left")
    mag.set_title("Bode plot (dead time exact)")
    for ax in (mag, ph):
        ax.grid(True, which="both", alpha=0.3)
    return svg_text(fig, "bode")


def operating_figure(ev: Evaluation) -> str:
    """Pump and system curves at several speeds with the operating point; torque-speed for other machines."""
    train, op = ev.design.train, ev.operating_point
    fig = _figure()
    ax = fig.add_subplot()
    if train.is_pump:
        pump: CentrifugalPump = train.machine  # type: ignore[assignment]
        w_op = op.machine_speed
        speeds = sorted({w_op * f for f in (0.7, 0.85, 1.0)} | {float(pump.speed)})
        q = np.linspace(0.0, float(pump.curve_end_flow(max(speeds))), 300)
        heads = train.pump_curves(speeds, q)
        for w, h in zip(speeds, heads, strict=True):
            ax.plot(q * 3600, h, color="C0", lw=1.0 if w != w_op else 2.0)
            i = int(np.nanargmax(np.where(np.isnan(h), -np.inf, q)))
            ax.annotate(f"{w * _RPM:.0f} rpm", (q[i] * 3600, h[i]), fontsize=8, color="C0")
        ax.plot(q * 3600, train.system_curve(q), color="C1", label="system curve")
        ax.plot([op.flow * 3600], [op.head], "o", color="C3", label="operating point")
        ax.set_xlabel("flow [m**3/h]")
        ax.set_ylabel("head [m]")
        ax.set_ylim(bottom=0.0)
        ax.set_title("Pump curves at several speeds and the system curve")
    else:
        ratio = op.motor_speed / op.machine_speed if op.machine_speed else 1.0
        w = np.linspace(0.0, 1.2 * op.motor_speed, 300)
        motor = train.motor_torque(op.supply, w)
        load = train.torque_at_motor(train.machine_torque(w / ratio, 0.0), w / ratio)
        ax.plot(w * _RPM, motor, color="C0", label=f"motor at {op.supply:.4g} (supply)")
        ax.plot(w * _RPM, load, color="C1", label="machine, seen at the motor")
        ax.plot([op.motor_speed * _RPM], [op.motor_torque], "o", color="C3", label="operating point")
        ax.set_xlabel("motor speed [rpm]")
        ax.set_ylabel("torque [N*m]")
        ax.set_ylim(bottom=0.0, top=2.0 * max(op.motor_torque, 1e-9))
        ax.set_title("Torque against speed at the operating point")
    ax.legend(loc="best")
    ax.grid(True, alpha=0.3)
    return svg_text(fig, "operating")
