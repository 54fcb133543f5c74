"""The winder Textual app: plan view, safety caution and winding monitor.

Two ways in:

* plan first (``winder demo``, ``winder wind`` without ``--headless``): the plan
  view, then on Enter ``start_wind(coil, plan, schedule)`` runs in a worker
  thread (it makes the session and opens the link) and returns a
  :class:`~winder.tui.feed.WindControl`; the monitor opens and, after the
  caution is acknowledged, starts the motor;
* monitor only (``winder resume``): a control made by the caller.

Whatever way the app ends (quit, an exception in a handler, the terminal
closing) the control is closed, which stops the motor first.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

from textual.app import App
from textual.binding import Binding

from winder.errors import WinderError
from winder.tui.feed import WindControl
from winder.tui.monitor_view import MonitorScreen
from winder.tui.plan_view import Planner, PlanScreen

StartWind = Callable[[Any, Any, Any], WindControl]


class WinderApp(App[int]):
    """Plan, caution and monitor screens around one coil."""

    CSS_PATH = "winder.tcss"
    TITLE = "winder"
    ENABLE_COMMAND_PALETTE = False
    BINDINGS = [Binding("ctrl+c", "quit", "Quit", show=False, priority=True)]

    def __init__(self, *, coil: Any = None, planner: Planner | None = None,
                 start_wind: StartWind | None = None, control: WindControl | None = None,
                 plan: Any = None, schedule: Any = None, title: str = "",
                 cautioned: bool = False, autostart: bool = False,
                 clock: Callable[[float], time.struct_time] = time.localtime):
        super().__init__()
        if control is None and coil is None:
            raise ValueError("WinderApp needs a coil to plan or a control to monitor")
        self.coil, self.planner, self.start_wind = coil, planner, start_wind
        self.control: WindControl | None = control
        self.plan, self.schedule = plan, schedule
        self.title_text, self.cautioned, self.autostart = title, cautioned, autostart
        self.clock = clock
        self.monitor: MonitorScreen | None = None
        self.exit_reason = "quit"

    def on_mount(self) -> None:
        self.theme = "textual-dark"
        if self.control is not None:
            self._open_monitor(self.control, self.plan, self.schedule)
        else:
            self.push_screen(PlanScreen(self.coil, self.planner or Planner.default(),
                                        on_wind=self.begin_wind if self.start_wind else None))

    # ----- plan -> monitor
    def begin_wind(self, coil: Any, plan: Any, schedule: Any) -> None:
        """From the plan view: make the session and link off the UI thread, then monitor."""
        if self.control is not None:
            return
        self.notify("opening the session and the link…", timeout=3)
        assert self.start_wind is not None
        start = self.start_wind

        def work() -> None:
            try:
                control = start(coil, plan, schedule)
            except WinderError as err:
                self.call_from_thread(self.notify, str(err), severity="error", timeout=8)
                return
            self.call_from_thread(self._open_monitor, control, getattr(control, "plan", plan),
                                  getattr(control, "schedule", schedule), True)

        self.run_worker(work, thread=True, name="start-wind", exit_on_error=False)

    def _open_monitor(self, control: WindControl, plan: Any, schedule: Any,
                      autostart: bool | None = None) -> None:
        self.control, self.plan, self.schedule = control, plan, schedule
        self.monitor = MonitorScreen(control, plan, schedule, title=self.title_text,
                                     cautioned=self.cautioned,
                                     autostart=self.autostart if autostart is None else autostart,
                                     clock=self.clock)
        self.push_screen(self.monitor)

    # ----- leaving
    def close_control(self, reason: str) -> None:
        """Stop the motor, journal and release the link (idempotent)."""
        if self.monitor is not None:
            self.monitor.close_control(reason)
        elif self.control is not None:
            try:
                self.control.close(reason)
            except WinderError:
                pass

    async def action_quit(self) -> None:
        self.close_control("quit")
        self.exit(0)

    def _handle_exception(self, error: Exception) -> None:
        """An error inside the UI: stop the motor and journal before Textual exits."""
        try:
            self.close_control("crash")
        finally:
            super()._handle_exception(error)


def run_app(app: WinderApp) -> int:
    """Run ``app`` in this terminal; close its control on any way out; return an exit code."""
    reason = "crash"
    try:
        rc = app.run()
        reason = "quit" if app.return_code in (0, None) else "crash"
        return int(rc or app.return_code or 0)
    finally:
        app.close_control(reason)
