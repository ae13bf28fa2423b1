"""The design model: one editable design, one computed result that every view reads.

:class:`DesignModel` wraps a plain :class:`drivekit.design.Design`. Panels ask
it to change a parameter; it checks the value at once (units and range, via
``Design.with_value``), coalesces bursts of changes, recomputes once with the
latest values and publishes one result. Views observe :attr:`DesignModel.result`
and only draw; none of them computes the model itself.
"""

from __future__ import annotations

import asyncio
import contextlib
from collections.abc import Callable
from typing import Any

import traitlets
from numpy.linalg import LinAlgError

from ..design import Design
from ..units import ParameterError
from .compute import compute_result

__all__ = ["Coalescer", "DesignModel", "design_value"]


def design_value(design: Design, key: str) -> Any:
    """SI value of ``key`` in ``design``; controller settings are read from the controller itself.

    Parameters
    ----------
    design : Design
        The design.
    key : str
        Parameter key (``"motor.J"``, ``"controller.kp"``).
    """
    role, _, name = key.partition(".")
    if role == "controller" and design.controller is not None and hasattr(design.controller, name):
        return getattr(design.controller, name)
    return design.value(key)


class Coalescer:
    """Run one action for a burst of requests; the latest request always wins.

    Parameters
    ----------
    action : callable
        Called with no argument once per burst.
    delay : float
        How long to gather requests before acting. [s] ``0`` acts at once,
        synchronously (for tests and scripts).

    Notes
    -----
    With ``delay > 0`` the action is scheduled on the running asyncio loop
    (the kernel's loop in Jupyter). Requests arriving while one is scheduled
    join it; the action then reads whatever is latest, so the final value
    always wins. Without a running loop the action runs at once.
    """

    def __init__(self, action: Callable[[], None], delay: float = 0.0) -> None:
        if not delay >= 0.0:
            raise ParameterError(f"`delay`: got {delay!r} s, expected a delay >= 0 s")
        self.action = action
        self.delay = float(delay)
        self._handle: Any = None
        self.requests = 0
        self.runs = 0

    def request(self) -> None:
        """Ask for the action; joins a pending burst if there is one."""
        self.requests += 1
        if self._handle is not None:
            return
        loop = None
        if self.delay > 0.0:
            with contextlib.suppress(RuntimeError):
                loop = asyncio.get_running_loop()
            if loop is None:
                with contextlib.suppress(RuntimeError):
                    loop = asyncio.get_event_loop_policy().get_event_loop()
                if loop is not None and not loop.is_running():
                    loop = None
        if loop is None:
            self._run()
            return
        self._handle = loop.call_later(self.delay, self._run)

    @property
    def pending(self) -> bool:
        """Whether an action is scheduled and not yet run."""
        return self._handle is not None

    def flush(self) -> None:
        """Run a pending action now."""
        if self._handle is not None:
            self._handle.cancel()
            self._run()

    def _run(self) -> None:
        self._handle = None
        self.runs += 1
        self.action()


class DesignModel(traitlets.HasTraits):
    """An editable design and its one computed result.

    Parameters
    ----------
    design : Design
        The design as read from its file; :attr:`file_design` keeps it for
        reset buttons.
    delay : float
        Coalescing delay for bursts of changes. [s] ``0`` recomputes
        synchronously on every change.
    compute : callable, optional
        ``compute(design) -> result``; :func:`drivekit.widgets.compute_result`
        by default.

    Attributes
    ----------
    design : Design
        The current design (replaced, never mutated, on each change).
    result : object
        The last good result (``None`` before the first success).
    error : str
        Plain-words message of the last failed computation; ``""`` when the
        result is current.
    stale : bool
        Whether :attr:`result` belongs to an earlier design than :attr:`design`.
    revision : int
        Count of published results.
    """

    design = traitlets.Instance(Design)
    result = traitlets.Any(None)
    error = traitlets.Unicode("")
    stale = traitlets.Bool(False)
    revision = traitlets.Int(0)

    def __init__(
        self, design: Design, *, delay: float = 0.0, compute: Callable[[Design], Any] = compute_result
    ) -> None:
        if not isinstance(design, Design):
            raise ParameterError(f"`design`: got {type(design).__name__}, expected a drivekit.design.Design")
        super().__init__(design=design)
        self.file_design = design
        self._compute = compute
        self._pending: dict[str, Any] = {}
        self._requested = 0
        self._coalescer = Coalescer(self._recompute, delay)
        self._recompute()

    # -- editing ---------------------------------------------------------------------------
    @property
    def delay(self) -> float:
        """Coalescing delay. [s]"""
        return self._coalescer.delay

    @property
    def coalescer(self) -> Coalescer:
        """The coalescer (its ``requests`` and ``runs`` counters show how much was merged)."""
        return self._coalescer

    def current_design(self) -> Design:
        """The design with every pending (not yet computed) change applied."""
        design = self.design
        for key, value in self._pending.items():
            design = design.with_value(key, value)
        return design

    def value(self, key: str) -> Any:
        """Current SI value of ``key``, pending changes included."""
        return design_value(self.current_design() if key in self._pending else self.design, key)

    def check(self, key: str, value: Any) -> float:
        """Check a value without applying it; returns it in SI.

        Raises
        ------
        ParameterError
            Wrong kind, unit or range; nothing is changed.
        """
        return design_value(self.current_design().with_value(key, value), key)

    def set_value(self, key: str, value: Any) -> None:
        """Change one parameter; the recompute is coalesced with other changes.

        Parameters
        ----------
        key : str
            Parameter key as listed by ``Design.parameters()`` (``"motor.J"``).
        value : float, Quantity or str
            New value (float = SI).

        Raises
        ------
        ParameterError
            Bad value; the design and the result are left unchanged.
        """
        si = self.check(key, value)
        self._pending[key] = si
        self._requested += 1
        self._coalescer.request()

    def reset(self, key: str) -> None:
        """Put ``key`` back to its value in the design file."""
        self.set_value(key, design_value(self.file_design, key))

    def replace_design(self, design: Design) -> None:
        """Replace the whole design (e.g. after loading a file) and recompute now."""
        if not isinstance(design, Design):
            raise ParameterError(f"`design`: got {type(design).__name__}, expected a drivekit.design.Design")
        self._pending.clear()
        self.file_design = design
        self.design = design
        self._recompute()

    def flush(self) -> None:
        """Compute now if a change is waiting."""
        self._coalescer.flush()

    # -- computing -------------------------------------------------------------------------
    def _recompute(self) -> None:
        requested = self._requested
        design = self.current_design()
        self._pending.clear()
        self.design = design
        try:
            result = self._compute(design)
        except (ValueError, ArithmeticError, RuntimeError, LinAlgError) as exc:
            self.error = f"{type(exc).__name__}: {exc}"
            self.stale = self.result is not None
            return
        if requested != self._requested:  # a newer change arrived meanwhile; it will publish
            return
        with self.hold_trait_notifications():
            self.error = ""
            self.stale = False
            self.result = result
            self.revision += 1
