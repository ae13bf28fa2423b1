"""Design files: a :class:`~drivekit.design.Design` saved to and read from a small TOML file with units.

The file is meant to be read by people and kept next to the notebook in
version control. Every physical value is written as a string with the unit
the trade uses (``"75 kW"``, ``"1485 rpm"``, ``"380 m**3/h"``); ratios are
plain numbers. Each value is written with the fewest digits that read back to
exactly the same SI number, so a save followed by a load is lossless and a
value typed as ``"1485 rpm"`` stays ``"1485 rpm"`` in the file.

Layout (format 1)::

    format_version = 1
    [info]                 header: project, loop tag, title, revision, names, dates
    [train]                name, and the measured output when no sensor says it
    [operating]            exactly one of flow, speed or u
    [spans]                measurement = [low, high], output = [low, high]
    [targets]              phase margin, gain margin, Ms, settling time, overshoot
    [controller]           type = "PID" and its settings (when the design has one)
    [stages.<role>]        type = "<component>" and its parameters, in chain order;
                           roles drive, motor, transmission, machine, pipe1.., sensor
    [stages.machine.curve] the pump's curve points (a pump only)
    [fluid]                the liquid
    [sources]              "<role>.<parameter>" = "where the value comes from"

Reading never executes anything from the file: component types are looked
up in a fixed table, values are parsed as numbers with a unit, and anything
unknown, out of range or of the wrong unit is refused with the line and key
named. Saving writes a temporary file in the same folder, flushes it to disk
and renames it over the old file, so a crash leaves the previous file intact.
"""

from __future__ import annotations

import dataclasses
import datetime
import math
import os
import re
import tempfile
import tomllib
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np

from ..design import OPERATING_SPECS, Design, DesignInfo, Targets
from ..drives import VariableSpeedDrive
from ..drivetrain import OUTPUTS, DriveTrain
from ..fluid import Fluid
from ..machines import Conveyor, Fan
from ..motors import DCMotor, InductionMotor
from ..piping import Pipe
from ..pumps import CentrifugalPump, PumpCurve
from ..sensors import FlowMeter, PressureSensor, SpeedSensor
from ..transmissions import Transmission
from ..units import ParameterError, ParamSpec, parameter_specs, to_si

__all__ = [
    "COMPONENT_TYPES",
    "FORMAT_VERSION",
    "DesignFileError",
    "dumps_design",
    "load_design",
    "loads_design",
    "save_design",
]

#: Version of the file layout this drivekit writes and reads.
FORMAT_VERSION = 1

#: Largest design file read. [bytes] A design is a few kB; anything near this is not one.
MAX_FILE_BYTES = 1_000_000

#: Longest text value accepted (names, sources, header fields). [characters]
MAX_TEXT = 2000

#: Longest value-with-unit string accepted, e.g. ``"380 m**3/h"``. [characters]
MAX_QUANTITY_TEXT = 80

#: The only component types a file may name, by role. Nothing else is ever constructed.
ROLE_TYPES: dict[str, tuple[type, ...]] = {
    "drive": (VariableSpeedDrive,),
    "motor": (DCMotor, InductionMotor),
    "transmission": (Transmission,),
    "machine": (CentrifugalPump, Fan, Conveyor),
    "pipe": (Pipe,),
    "sensor": (FlowMeter, SpeedSensor, PressureSensor),
}

#: Component class by the type name written in the file.
COMPONENT_TYPES: dict[str, type] = {cls.__name__: cls for kinds in ROLE_TYPES.values() for cls in kinds}

_ROLE_ORDER = ("drive", "motor", "transmission", "machine", "pipe", "sensor")
_TOP_KEYS = (
    "format_version",
    "info",
    "train",
    "operating",
    "spans",
    "targets",
    "controller",
    "stages",
    "fluid",
    "sources",
)
_SOURCE_SECTIONS = ("controller", "operating", "targets", "spans", "info", "train")

_HEADER = (
    "# drivekit design file. Values carry their units; plain numbers are ratios.\n"
    "# Edit with care: the file is checked when read, and refused with the line named if anything is off.\n"
)


class DesignFileError(ParameterError):
    """A design file cannot be read: malformed, of a newer format, or with a wrong key, unit or value.

    Attributes
    ----------
    path : str
        The file (``"<text>"`` when read from a string).
    line : int or None
        Line of the offending key, when it can be found.
    key : str
        Dotted key, e.g. ``"stages.motor.J"``.
    """

    def __init__(self, message: str, *, path: str = "<text>", line: int | None = None, key: str = "") -> None:
        where = path + (f", line {line}" if line else "")
        if key:
            where += f", `{key}`"
        super().__init__(f"{where}: {message}")
        self.path = path
        self.line = line
        self.key = key


# ======================================================================================
# Writing
# ======================================================================================
def trade_unit(spec: ParamSpec, name: str) -> str:
    """The unit a value of ``spec`` is written in (``""`` for a plain number).

    Parameters
    ----------
    spec : ParamSpec
        The parameter's declaration.
    name : str
        The parameter's name (pipe diameters and roughness go in mm).

    Returns
    -------
    str
    """
    unit = spec.unit
    if unit in ("", "dimensionless"):
        return ""
    if unit == "rad/s":
        return "rpm"
    if unit == "m" and name in ("diameter", "roughness"):
        return "mm"
    return {"W": "kW", "m**3/s": "m**3/h", "Pa*s": "mPa*s", "Pa": "bar", "percent": "%"}.get(unit, unit)


def _number_text(x: float) -> str:
    if x == int(x) and abs(x) < 1e15:
        return str(int(x))
    return repr(x)


def quantity_text(value: float, spec: ParamSpec, name: str) -> str | float:
    """The shortest text of ``value`` [SI] in its trade unit that reads back to exactly ``value``.

    Parameters
    ----------
    value : float
        The value in the SI unit of ``spec``.
    spec : ParamSpec
        Its declaration.
    name : str
        Parameter name (for the unit choice and messages).

    Returns
    -------
    str or float
        ``"1485 rpm"``; a plain float for a ratio.

    Raises
    ------
    ParameterError
        The value is not a finite number.
    """
    x = float(value)
    if not math.isfinite(x):
        raise ParameterError(f"`{name}`: got {x!r}, expected a finite number to write")
    unit = trade_unit(spec, name)
    if not unit:
        return x
    from ..units import ureg

    shown = float(ureg.Quantity(x, spec.unit).to(unit).magnitude)
    for digits in range(1, 18):
        text = f"{_number_text(float(f'{shown:.{digits}g}'))} {unit}"
        if to_si(text, name, spec) == x:
            return text
    text = f"{_number_text(x)} {spec.unit}"  # the SI unit reads back exactly
    if to_si(text, name, spec) != x:
        raise ParameterError(f"`{name}`: {x!r} {spec.unit} cannot be written exactly")
    return text


def _toml_string(s: str) -> str:
    out = ['"']
    for ch in s:
        code = ord(ch)
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif code < 0x20 or code == 0x7F:
            out.append(f"\\u{code:04X}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _toml_key(key: str) -> str:
    return key if re.fullmatch(r"[A-Za-z0-9_-]+", key) else _toml_string(key)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ParameterError(f"got {value!r}, expected a finite number to write")
        return repr(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise ParameterError(f"cannot write a value of type {type(value).__name__}")


def _table(header: str, rows: list[tuple[str, Any]]) -> str:
    lines = [f"\n[{header}]"]
    lines += [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in rows]
    return "\n".join(lines) + "\n"


def _component_rows(obj: Any, *, with_type: bool) -> list[tuple[str, Any]]:
    """Rows of a component's fields: type, name, values with units, texts and whole numbers."""
    rows: list[tuple[str, Any]] = [("type", type(obj).__name__)] if with_type else []
    specs = dict(parameter_specs(obj))
    for f in dataclasses.fields(obj):
        value = getattr(obj, f.name)
        if f.name in specs:
            if value is None:
                continue
            rows.append((f.name, quantity_text(value, specs[f.name], f.name)))
        elif f.name == "curve":
            continue  # its own sub-table
        elif isinstance(value, (str, int)) and not isinstance(value, bool):
            rows.append((f.name, value))
        else:
            raise ParameterError(f"`{f.name}`: cannot write a {type(value).__name__} of {type(obj).__name__}")
    return rows


def _curve_rows(curve: PumpCurve) -> list[tuple[str, Any]]:
    flow_spec, head_spec = ParamSpec("m**3/s", "flow"), ParamSpec("m", "head")
    rows: list[tuple[str, Any]] = [("name", curve.name)]
    rows.append(("flow", [quantity_text(q, flow_spec, "flow") for q in curve.flow]))
    rows.append(("head", [quantity_text(h, head_spec, "head") for h in curve.head]))
    rows.append(("efficiency", [float(e) for e in curve.efficiency]))
    if curve.min_flow is not None:
        rows.append(("min_flow", quantity_text(curve.min_flow, flow_spec, "min_flow")))
    return rows


def _measurement_spec(train: DriveTrain) -> ParamSpec:
    return ParamSpec(OUTPUTS[train.output][0], "measured value")


def _output_spec(train: DriveTrain) -> ParamSpec:
    unit = train.input_unit
    return ParamSpec("percent" if unit == "%" else unit, "controller output")


def _controller_rows(controller: Any) -> list[tuple[str, Any]]:
    from . import controllerfile

    return controllerfile.controller_rows(controller)


def _chunks(design: Design) -> Iterator[str]:
    """The file, section by section (so a save streams it)."""
    yield _HEADER + f"format_version = {FORMAT_VERSION}\n"
    info = design.info
    yield _table("info", [(f.name, getattr(info, f.name)) for f in dataclasses.fields(info)])
    train = design.train
    train_rows: list[tuple[str, Any]] = [("name", train.name)]
    if train._output_arg is not None:
        train_rows.append(("output", train._output_arg))
    yield _table("train", train_rows)
    kind, value = design.operating
    yield _table("operating", [(kind, quantity_text(value, design._operating_spec(kind), kind))])
    spans: list[tuple[str, Any]] = []
    if design.measurement_span is not None:
        spec = _measurement_spec(train)
        spans.append(("measurement", [quantity_text(v, spec, "measurement_span") for v in design.measurement_span]))
    if design.output_span is not None:
        spec = _output_spec(train)
        spans.append(("output", [quantity_text(v, spec, "output_span") for v in design.output_span]))
    if spans:
        yield _table("spans", spans)
    yield _table("targets", _component_rows(design.targets, with_type=False))
    if design.controller is not None:
        yield _table("controller", _controller_rows(design.controller))
    for role, stage in train.stage_map().items():
        if role == "fluid":
            continue
        yield _table(f"stages.{role}", _component_rows(stage, with_type=True))
        if isinstance(stage, CentrifugalPump):
            yield _table(f"stages.{role}.curve", _curve_rows(stage.curve))
    if train.is_pump:
        yield _table("fluid", _component_rows(train.fluid, with_type=False))
    if design.sources:
        yield _table("sources", [(str(k), str(v)) for k, v in sorted(design.sources.items())])


def dumps_design(design: Design) -> str:
    """The design file text of ``design`` (deterministic: the same design gives the same text).

    Parameters
    ----------
    design : Design

    Returns
    -------
    str
    """
    if not isinstance(design, Design):
        raise ParameterError(f"`design`: got {type(design).__name__}, expected a drivekit Design")
    return "".join(_chunks(design))


def save_design(design: Design, path: str | os.PathLike[str]) -> Path:
    """Save ``design`` to ``path`` atomically.

    The text is written to a temporary file in the same folder, flushed to
    disk (``fsync``) and renamed over ``path`` (``os.replace``, atomic on
    POSIX and Windows). If anything fails on the way, the temporary file is
    removed and the previous file at ``path`` is left as it was.

    Parameters
    ----------
    design : Design
        What to save.
    path : str or path-like
        The design file, usually ``<name>.toml`` next to the notebook.

    Returns
    -------
    pathlib.Path
        The file written.
    """
    if not isinstance(design, Design):
        raise ParameterError(f"`design`: got {type(design).__name__}, expected a drivekit Design")
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as f:
            for chunk in _chunks(design):
                f.write(chunk)
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    _sync_folder(folder)
    return target


def design_writer(path: str | os.PathLike[str]) -> Any:
    """A Record-button hook for the widgets' parameter panel: saves the design it is given to ``path``.

    Parameters
    ----------
    path : str or path-like
        The design file next to the notebook.

    Returns
    -------
    callable
        ``write(design) -> str``; the text says where and when it was saved.

    Examples
    --------
    >>> import tempfile, pathlib, drivekit as dk
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> write = design_writer(folder / "loop.toml")
    >>> design = dk.Design(train=dk.demo.raw_water_pump(), operating=("flow", "380 m**3/h"))
    >>> write(design).startswith("saved to loop.toml")
    True
    """
    target = Path(path)

    def write(design: Design) -> str:
        save_design(design, target)
        stamp = datetime.datetime.now().strftime("%Y-%m-%d %H:%M:%S")
        return f"saved to {target.name} at {stamp}; Restart and Run All now reproduces this design"

    return write


def _sync_folder(folder: Path) -> None:
    """Flush the rename to disk where the platform allows it (POSIX)."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


# ======================================================================================
# Reading
# ======================================================================================
_NUMBER = re.compile(r"\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d{1,3})?")
_UNIT_CHARS = re.compile(r"[A-Za-z_%°µΩ()*/ ]*")


class _Reader:
    """Checks a parsed file against the layout and builds the design, naming the line of any fault."""

    def __init__(self, text: str, path: str) -> None:
        self.text = text
        self.path = path
        self._lines = text.splitlines()

    # -- errors -------------------------------------------------------------------
    def fail(self, key: str, message: str) -> DesignFileError:
        return DesignFileError(message, path=self.path, line=self.line_of(key), key=key)

    def line_of(self, key: str) -> int | None:
        """Line (1-based) where the dotted ``key`` is set, searching its table's header first."""
        parts = key.split(".")
        for n in range(len(parts), 0, -1):
            table, leaf = parts[: n - 1], parts[n - 1]
            line = self._find(table, leaf)
            if line:
                return line
        return None

    def _find(self, table: list[str], leaf: str) -> int | None:
        start = 0
        if table:
            start = -1
            for i, raw in enumerate(self._lines):
                m = re.fullmatch(r"\s*\[([^\[\]]+)\]\s*(#.*)?", raw)
                if m and [p.strip().strip('"') for p in m.group(1).split(".")] == table:
                    start = i + 1
                    break
            if start < 0:
                return None
        for i in range(start, len(self._lines)):
            raw = self._lines[i].strip()
            if raw.startswith("[") and table and re.fullmatch(r"\[([^\[\]]+)\]\s*(#.*)?", raw):
                header = [p.strip().strip('"') for p in raw.strip("[] ").split("#")[0].strip("] ").split(".")]
                if header == [*table, leaf]:
                    return i + 1
                break
            if re.match(rf'"?{re.escape(leaf)}"?\s*=', raw):
                return i + 1
        if not table:
            for i, raw in enumerate(self._lines):
                if re.fullmatch(rf"\s*\[\s*{re.escape(leaf)}\s*\]\s*(#.*)?", raw):
                    return i + 1
        return None

    # -- plain values -----------------------------------------------------------------
    @staticmethod
    def describe(raw: Any) -> str:
        if isinstance(raw, dict):
            return "a table"
        if isinstance(raw, list):
            return "a list"
        if isinstance(raw, str):
            return repr(raw if len(raw) <= 60 else raw[:57] + "...")
        if isinstance(raw, (bool, int, float)):
            text = repr(raw)
            return text if len(text) <= 40 else f"a {len(text)}-digit number"
        return f"a {type(raw).__name__}"

    def table(self, raw: Any, key: str, allowed: tuple[str, ...] | set[str]) -> dict[str, Any]:
        if not isinstance(raw, dict):
            raise self.fail(key, f"got {self.describe(raw)}, expected a table [{key}]")
        for k in raw:
            if k not in allowed:
                where = f"{key}.{k}" if key else k
                raise self.fail(where, f"unknown key {k!r}; expected one of {', '.join(sorted(allowed))}")
        return raw

    def text_value(self, raw: Any, key: str) -> str:
        if not isinstance(raw, str):
            raise self.fail(key, f"got {self.describe(raw)}, expected text in quotes")
        if len(raw) > MAX_TEXT:
            raise self.fail(key, f"got a text of {len(raw)} characters, expected at most {MAX_TEXT}")
        return raw

    def whole_number(self, raw: Any, key: str) -> int:
        if isinstance(raw, bool) or not isinstance(raw, int) or abs(raw) > 10**6:
            raise self.fail(key, f"got {self.describe(raw)}, expected a whole number")
        return raw

    def quantity(self, raw: Any, key: str, spec: ParamSpec) -> float:
        """A value with its unit (or a plain number for a ratio), checked and converted to SI."""
        name = key.rsplit(".", 1)[-1]
        dimensionless = spec.unit in ("", "dimensionless")
        if isinstance(raw, (bool, dict, list)):
            raise self.fail(key, f"got {self.describe(raw)}, expected {self._expected(spec, name)}")
        if isinstance(raw, (int, float)):
            if not dimensionless:
                raise self.fail(
                    key, f"got the plain number {self.describe(raw)}, expected {self._expected(spec, name)}"
                )
            try:
                value: Any = float(raw)
            except OverflowError:
                raise self.fail(
                    key, f"got {self.describe(raw)}, which is too large; expected a finite number"
                ) from None
        elif isinstance(raw, str):
            if len(raw) > MAX_QUANTITY_TEXT:
                raise self.fail(key, f"got a text of {len(raw)} characters, expected {self._expected(spec, name)}")
            m = _NUMBER.match(raw)
            rest = re.sub(r"\*\*\s*-?\d{1,2}\b", "", raw[m.end() :]) if m else ""
            if m is None or not _UNIT_CHARS.fullmatch(rest):
                raise self.fail(key, f"got {self.describe(raw)}, expected {self._expected(spec, name)}")
            value = raw
        else:
            raise self.fail(key, f"got {self.describe(raw)}, expected {self._expected(spec, name)}")
        try:
            return float(to_si(value, name, spec))
        except ParameterError as exc:
            raise self.fail(key, str(exc).split(": ", 1)[-1]) from None

    @staticmethod
    def _expected(spec: ParamSpec, name: str) -> str:
        unit = trade_unit(spec, name)
        if not unit:
            return f"a plain number ({spec.description})"
        return f"{spec.description} as a value with its unit, e.g. '1 {unit}'"

    # -- components -------------------------------------------------------------------
    def component(self, cls: type, raw: dict[str, Any], key: str, extra: dict[str, Any] | None = None) -> Any:
        """Build a component of class ``cls`` from its table (``type`` already checked)."""
        fields = {f.name: f for f in dataclasses.fields(cls)}
        specs = {f.name: f.metadata["spec"] for f in fields.values() if "spec" in f.metadata}
        kwargs: dict[str, Any] = dict(extra or {})
        for k, v in raw.items():
            if k == "type" or k in kwargs:
                continue
            where = f"{key}.{k}"
            if k in specs:
                kwargs[k] = self.quantity(v, where, specs[k])
            elif fields[k].type == "str":
                kwargs[k] = self.text_value(v, where)
            elif fields[k].type == "int":
                kwargs[k] = self.whole_number(v, where)
            else:
                raise self.fail(where, f"got {self.describe(v)}, which this file layout does not take here")
        try:
            return cls(**kwargs)
        except ParameterError as exc:
            message = str(exc)
            m = re.match(r"`(\w+)`", message)
            if m and m.group(1) in raw:
                raise self.fail(f"{key}.{m.group(1)}", message[m.end() :].lstrip(": ")) from None
            raise self.fail(key, message) from None
        except TypeError as exc:  # a required parameter is missing
            raise self.fail(key, f"{type(exc).__name__}: {exc}") from None

    def curve(self, raw: Any, key: str) -> PumpCurve:
        raw = self.table(raw, key, {"name", "flow", "head", "efficiency", "min_flow"})
        for need in ("flow", "head", "efficiency"):
            if need not in raw:
                raise self.fail(key, f"missing `{need}`: a pump curve needs flow, head and efficiency points")
        specs = {
            "flow": ParamSpec("m**3/s", "flow", minimum=0.0),
            "head": ParamSpec("m", "head", minimum=0.0, include_minimum=False),
            "efficiency": ParamSpec("", "efficiency (fraction)", minimum=0.0, maximum=1.0),
        }
        points: dict[str, Any] = {}
        for name, spec in specs.items():
            values = raw[name]
            if not isinstance(values, list) or not 3 <= len(values) <= 200:
                raise self.fail(f"{key}.{name}", f"got {self.describe(values)}, expected a list of 3 to 200 points")
            points[name] = np.array([self.quantity(v, f"{key}.{name}", spec) for v in values])
        if "min_flow" in raw:
            points["min_flow"] = self.quantity(raw["min_flow"], f"{key}.min_flow", specs["flow"])
        if "name" in raw:
            points["name"] = self.text_value(raw["name"], f"{key}.name")
        try:
            return PumpCurve(**points)
        except ParameterError as exc:
            m = re.match(r"`(\w+)`", str(exc))
            where = f"{key}.{m.group(1)}" if m and m.group(1) in raw else key
            raise self.fail(where, str(exc)) from None

    def stages(self, raw: Any) -> list[Any]:
        raw = self.table(raw, "stages", set(raw) if isinstance(raw, dict) else set())
        roles: dict[str, tuple[int, int]] = {}
        for role in raw:
            m = re.fullmatch(r"(drive|motor|transmission|machine|sensor)|pipe([1-9]\d?)", role)
            if m is None:
                raise self.fail(
                    f"stages.{role}",
                    f"unknown stage role {role!r}; expected drive, motor, transmission, machine, pipe1, pipe2, ... "
                    "or sensor",
                )
            kind = m.group(1) or "pipe"
            roles[role] = (_ROLE_ORDER.index(kind), int(m.group(2) or 0))
        ordered = sorted(raw, key=lambda r: roles[r])
        pipes = [r for r in ordered if r.startswith("pipe")]
        if pipes != [f"pipe{i + 1}" for i in range(len(pipes))]:
            raise self.fail("stages", f"pipe runs must be numbered pipe1, pipe2, ... in order; got {pipes}")
        out = []
        for role in ordered:
            out.append(self.stage(raw[role], f"stages.{role}", role.rstrip("0123456789")))
        return out

    def stage(self, raw: Any, key: str, kind: str) -> Any:
        if not isinstance(raw, dict):
            raise self.fail(key, f"got {self.describe(raw)}, expected a table [{key}]")
        type_name = raw.get("type")
        allowed = {cls.__name__: cls for cls in ROLE_TYPES[kind]}
        if not isinstance(type_name, str) or type_name not in allowed:
            raise self.fail(
                f"{key}.type",
                f"got {self.describe(type_name) if type_name is not None else 'no type'}, expected one of "
                f"{', '.join(allowed)}",
            )
        cls = allowed[type_name]
        names = {f.name for f in dataclasses.fields(cls)} | {"type"}
        self.table(raw, key, names)
        if cls is CentrifugalPump and "curve" not in raw:
            raise self.fail(key, "a CentrifugalPump needs its curve in a [" + key + ".curve] table")
        extra = {"curve": self.curve(raw["curve"], f"{key}.curve")} if cls is CentrifugalPump else None
        return self.component(cls, raw, key, extra)

    # -- the whole design -------------------------------------------------------------
    def design(self, data: dict[str, Any]) -> Design:
        self.table(data, "", _TOP_KEYS)
        self.check_version(data)
        for need in ("stages", "operating"):
            if need not in data:
                raise self.fail(need, f"missing [{need}] table")
        stages = self.stages(data["stages"])
        fluid = None
        if "fluid" in data:
            fluid_raw = self.table(data["fluid"], "fluid", {f.name for f in dataclasses.fields(Fluid)})
            fluid = self.component(Fluid, fluid_raw, "fluid")
        train_raw = self.table(data.get("train", {}), "train", {"name", "output"})
        name = self.text_value(train_raw.get("name", "drive train"), "train.name")
        output = self.text_value(train_raw["output"], "train.output") if "output" in train_raw else None
        try:
            train = DriveTrain(*stages, fluid=fluid, output=output, name=name)
        except ParameterError as exc:
            raise self.fail("stages", str(exc)) from None
        kwargs: dict[str, Any] = {"train": train, "operating": self.operating(data["operating"], train)}
        if "spans" in data:
            spans = self.table(data["spans"], "spans", {"measurement", "output"})
            if "measurement" in spans:
                kwargs["measurement_span"] = self.span(
                    spans["measurement"], "spans.measurement", _measurement_spec(train)
                )
            if "output" in spans:
                kwargs["output_span"] = self.span(spans["output"], "spans.output", _output_spec(train))
        if "targets" in data:
            raw = self.table(data["targets"], "targets", {f.name for f in dataclasses.fields(Targets)})
            kwargs["targets"] = self.component(Targets, raw, "targets")
        if "info" in data:
            raw = self.table(data["info"], "info", {f.name for f in dataclasses.fields(DesignInfo)})
            kwargs["info"] = DesignInfo(**{k: self.text_value(v, f"info.{k}") for k, v in raw.items()})
        if "controller" in data:
            kwargs["controller"] = self.controller(data["controller"])
        if "sources" in data:
            kwargs["sources"] = self.sources(data["sources"], train)
        try:
            return Design(**kwargs)
        except ParameterError as exc:
            raise self.fail("", str(exc)) from None

    def check_version(self, data: dict[str, Any]) -> None:
        if "format_version" not in data:
            raise self.fail("format_version", "missing `format_version`; is this a drivekit design file?")
        version = data["format_version"]
        if isinstance(version, bool) or not isinstance(version, int) or version < 1:
            raise self.fail("format_version", f"got {self.describe(version)}, expected a whole number >= 1")
        if version > FORMAT_VERSION:
            raise self.fail(
                "format_version",
                f"the file is format {version}, written by a newer drivekit; this drivekit reads format "
                f"{FORMAT_VERSION} and older. Update drivekit to read it.",
            )

    def operating(self, raw: Any, train: DriveTrain) -> tuple[str, float]:
        raw = self.table(raw, "operating", tuple(OPERATING_SPECS))
        if len(raw) != 1:
            raise self.fail("operating", f"got {len(raw)} targets, expected exactly one of flow, speed or u")
        ((kind, value),) = raw.items()
        if kind == "u":
            unit = train.input_unit
            spec = ParamSpec("percent" if unit == "%" else unit, train.input_name)
        else:
            spec = OPERATING_SPECS[kind]
        return kind, self.quantity(value, f"operating.{kind}", spec)

    def span(self, raw: Any, key: str, spec: ParamSpec) -> tuple[float, float]:
        if not isinstance(raw, list) or len(raw) != 2:
            raise self.fail(key, f"got {self.describe(raw)}, expected a pair [low, high]")
        lo, hi = (self.quantity(v, key, spec) for v in raw)
        return lo, hi

    def controller(self, raw: Any) -> Any:
        from . import controllerfile

        raw = self.table(raw, "controller", set(raw) if isinstance(raw, dict) else set())
        return controllerfile.read_controller(self, raw)

    def sources(self, raw: Any, train: DriveTrain) -> dict[str, str]:
        if not isinstance(raw, dict):
            raise self.fail("sources", f"got {self.describe(raw)}, expected a table [sources]")
        sections = (*train.stage_map(), *_SOURCE_SECTIONS)
        out: dict[str, str] = {}
        for k, v in raw.items():
            if isinstance(v, dict):
                raise self.fail(f"sources.{k}", 'got a table; write sources as "role.parameter" = "text"')
            if k.split(".", 1)[0] not in sections:
                raise self.fail(
                    f"sources.{k}", f"unknown key {k!r}; expected '<role>.<parameter>' with a role among {sections}"
                )
            out[k] = self.text_value(v, f'sources."{k}"')
        return out


def loads_design(text: str, *, path: str = "<text>") -> Design:
    """Read a design from design-file text.

    Parameters
    ----------
    text : str
        The file's text.
    path : str
        Name to use in messages.

    Returns
    -------
    Design

    Raises
    ------
    DesignFileError
        Malformed TOML, a newer format version, an unknown key or type, a
        value of the wrong unit or range; the message names the line and key.
    """
    if len(text) > MAX_FILE_BYTES:
        raise DesignFileError(
            f"the file has {len(text)} characters, expected a design file under {MAX_FILE_BYTES}", path=path
        )
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise DesignFileError(f"not valid TOML: {exc}", path=path) from None
    except RecursionError:
        raise DesignFileError("not a design file: values are nested too deeply", path=path) from None
    return _Reader(text, path).design(data)


def load_design(path: str | os.PathLike[str]) -> Design:
    """Read a design file.

    Parameters
    ----------
    path : str or path-like
        The ``.toml`` file.

    Returns
    -------
    Design

    Raises
    ------
    DesignFileError
        The file cannot be read as a design (see :func:`loads_design`).
    FileNotFoundError
        There is no such file.
    """
    p = Path(path)
    with p.open("rb") as f:
        raw = f.read(MAX_FILE_BYTES + 1)
    if len(raw) > MAX_FILE_BYTES:
        raise DesignFileError(f"the file is larger than {MAX_FILE_BYTES} bytes; not a design file", path=str(p))
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise DesignFileError(f"not UTF-8 text (byte {exc.start})", path=str(p)) from None
    return loads_design(text, path=str(p))
