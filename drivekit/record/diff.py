"""What changed between two designs, in plain words: inputs from the files, results from evaluating both.

Example lines::

    Ti changed 12 s -> 8 s
    motor.J (rotor inertia) changed 0.9 kg*m**2 -> 1.1 kg*m**2
    loop: phase margin 52 -> 44 deg
"""

from __future__ import annotations

import dataclasses
import math
import tomllib
from typing import Any

from ..design import Design
from ..units import parameter_specs
from .designfile import dumps_design
from .results import Evaluation, Result, evaluate

__all__ = ["DesignDiff", "diff_designs"]

#: Relative change below which two results count as equal in a diff. [-] Rounding level of a
#: re-evaluated design (operating-point solver tolerance about 1e-10, common practice, no source).
RESULT_TOLERANCE = 1e-9

_CONTROLLER_NAMES = {"kp": "Kp", "ti": "Ti", "td": "Td"}


@dataclasses.dataclass(frozen=True)
class DesignDiff:
    """The differences between design A and design B.

    Attributes
    ----------
    inputs : tuple of str
        Changed inputs, one plain-words line each.
    results : tuple of str
        Changed results, one line each.
    problems : tuple of str
        Results that could not be computed for A or B.
    """

    inputs: tuple[str, ...]
    results: tuple[str, ...]
    problems: tuple[str, ...] = ()

    @property
    def same(self) -> bool:
        """True when neither an input nor a result changed."""
        return not self.inputs and not self.results

    @property
    def text(self) -> str:
        """The whole diff as text."""
        if self.same:
            return "The designs are the same: no input or result changed."
        parts = []
        if self.inputs:
            parts.append("Inputs:\n" + "\n".join(f"  {line}" for line in self.inputs))
        if self.results:
            parts.append("Results:\n" + "\n".join(f"  {line}" for line in self.results))
        if self.problems:
            parts.append("Not evaluated:\n" + "\n".join(f"  {line}" for line in self.problems))
        return "\n".join(parts)

    def table(self) -> list[tuple[str, str]]:
        """Rows (kind, change) with kind ``"input"`` or ``"result"``."""
        return [("input", line) for line in self.inputs] + [("result", line) for line in self.results]

    def __str__(self) -> str:
        return self.text


def _flatten(data: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in data.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(_flatten(v, key + "."))
        else:
            out[key] = v
    return out


def _descriptions(design: Design) -> dict[str, str]:
    out = {f"stages.{p.role}.{p.name}": p.spec.description for p in design.parameters()}
    out.update({f"fluid.{name}": spec.description for name, spec in parameter_specs(design.train.fluid)})
    out.update({f"targets.{name}": spec.description for name, spec in parameter_specs(design.targets)})
    return out


def _label(key: str, descriptions: dict[str, str]) -> str:
    if key.startswith("controller.") and key.split(".", 1)[1] in _CONTROLLER_NAMES:
        return _CONTROLLER_NAMES[key.split(".", 1)[1]]
    short = key.removeprefix("stages.")
    if key in descriptions:
        return f"{short} ({descriptions[key]})"
    if key.startswith("sources."):
        return f"source of {key.removeprefix('sources.')}"
    return short


def _show(value: Any) -> str:
    if isinstance(value, list):
        return "[" + ", ".join(_show(v) for v in value) + "]"
    if isinstance(value, str):
        return value if value else "(empty)"
    return f"{value:g}" if isinstance(value, float) else str(value)


def input_changes(a: Design, b: Design) -> list[str]:
    """Plain-words lines for every input that differs between ``a`` and ``b``."""
    fa = _flatten(tomllib.loads(dumps_design(a)))
    fb = _flatten(tomllib.loads(dumps_design(b)))
    desc = {**_descriptions(b), **_descriptions(a)}
    lines = []
    for key in [*fa, *(k for k in fb if k not in fa)]:
        if key in fa and key in fb:
            if fa[key] != fb[key]:
                lines.append(f"{_label(key, desc)} changed {_show(fa[key])} -> {_show(fb[key])}")
        elif key in fa:
            lines.append(f"{_label(key, desc)} removed (was {_show(fa[key])})")
        else:
            lines.append(f"{_label(key, desc)} added: {_show(fb[key])}")
    return lines


def _numbers_differ(x: float, y: float, rtol: float) -> bool:
    if math.isnan(x) and math.isnan(y):
        return False
    if math.isinf(x) or math.isinf(y):
        return x != y
    return abs(x - y) > rtol * max(abs(x), abs(y), 1e-300)


def _pair_text(x: float, y: float, unit: str) -> str:
    for digits in (4, 6, 8, 12):
        sx, sy = f"{x:.{digits}g}", f"{y:.{digits}g}"
        if sx != sy:
            break
    return f"{sx} -> {sy} {unit}".rstrip()


def result_changes(ea: Evaluation, eb: Evaluation, *, rtol: float = RESULT_TOLERANCE) -> list[str]:
    """Plain-words lines for every result that differs between two evaluations."""
    ra: dict[str, Result] = {r.key: r for r in ea.results}
    rb: dict[str, Result] = {r.key: r for r in eb.results}
    lines = []
    for key in [*ra, *(k for k in rb if k not in ra)]:
        x, y = ra.get(key), rb.get(key)
        if x is None:
            lines.append(f"{key}: only in B ({y.text()})")  # type: ignore[union-attr]
        elif y is None:
            lines.append(f"{key}: only in A ({x.text()})")
        elif isinstance(x.value, float) and isinstance(y.value, float):
            if x.unit != y.unit:
                lines.append(f"{key}: {x.text()} -> {y.text()}")
            elif _numbers_differ(x.value, y.value, rtol):
                lines.append(f"{key} {_pair_text(x.value, y.value, x.unit)}")
        elif x.value != y.value:
            lines.append(f"{key}: {x.text()} -> {y.text()}")
    return lines


def diff_designs(a: Design, b: Design, *, rtol: float = RESULT_TOLERANCE) -> DesignDiff:
    """Compare two designs, inputs and results.

    Parameters
    ----------
    a, b : Design
        The old and the new design.
    rtol : float
        Relative change below which two results count as equal. [-]

    Returns
    -------
    DesignDiff

    Examples
    --------
    >>> from drivekit import demo
    >>> from drivekit.design import Design
    >>> a = Design(train=demo.raw_water_pump(), operating=("flow", "380 m**3/h"))
    >>> b = a.with_value("pipe1.static_head", "20 m")
    >>> diff_designs(a, b).inputs
    ('pipe1.static_head (static head) changed 18 m -> 20 m',)
    """
    ea, eb = evaluate(a), evaluate(b)
    problems = tuple(f"A: {p}" for p in ea.problems) + tuple(f"B: {p}" for p in eb.problems)
    return DesignDiff(tuple(input_changes(a, b)), tuple(result_changes(ea, eb, rtol=rtol)), problems)
