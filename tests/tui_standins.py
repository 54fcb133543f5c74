"""Test-only helpers for the TUI tests: a coil planned by the real planner and a
stand-in WindControl that records what the monitor asked for.

The stand-in is never shipped; the end-to-end tests drive the real session
runner against the simulated winder instead.
"""

from __future__ import annotations

from typing import Any

from winder.bobbin import Bobbin, RectCore, RoundCore
from winder.errors import InputError
from winder.planner import Coil, Target, make_plan
from winder.schedule import build_schedule
from winder.tui.feed import Feed
from winder.winding import Style
from winder.wire import make_wire


def pickup_coil(style: str = "layer") -> Coil:
    """An invented flatwork pickup coil: 42 AWG heavy to 5.9 kohm on a 5.5 x 58 mm core."""
    bobbin = Bobbin("test flatwork", RectCore(0.0055, 0.058, 0.001), 0.0105, 0.0085,
                    0.0005, 0.0007)
    return Coil("test pickup", bobbin, make_wire("42 AWG", "heavy"),
                Target("resistance", 5900.0), Style(style, packing=0.8, seed=11))


def driver_coil() -> Coil:
    """An invented round-core driver coil: 8 ohm of 0.2 mm grade 2."""
    bobbin = Bobbin("test spool", RoundCore(0.006), 0.012, 0.004, 0.0005, 0.0005)
    return Coil("test driver", bobbin, make_wire("0.2 mm", "grade 2"),
                Target("resistance", 8.0), Style("layer"))


def planned(coil: Coil | None = None) -> tuple[Any, Any]:
    plan = make_plan(coil or pickup_coil(), force=True)
    return plan, build_schedule(plan)


class StandInControl:
    """Records calls; the test moves the count with :meth:`advance`."""

    def __init__(self, motor: bool = True, clock: Any = None):
        self.feed = Feed(clock=clock) if clock else Feed()
        self.motor = motor
        self.calls: list[tuple] = []
        self.turns = 0.0
        self.state = "idle"
        self.fail_next: str | None = None
        self.feed.status(link="connected", state="idle")

    def _call(self, *call: Any) -> None:
        if self.fail_next:
            msg, self.fail_next = self.fail_next, None
            raise InputError(msg)
        self.calls.append(call)

    def start(self) -> None:
        self._call("start")
        self.state = "running"
        self.feed.status(state="running", rpm=600.0)

    def resume(self) -> None:
        self._call("resume")
        self.state = "running"
        self.feed.status(state="running", rpm=600.0)

    def pause(self) -> None:
        self._call("pause")
        self.state = "paused"
        self.feed.status(state="paused", rpm=0.0)

    def stop(self) -> None:
        self._call("stop")
        self.state = "stopped"
        self.feed.status(state="stopped", rpm=0.0)

    def log_reading(self, ohm: float, temp_c: float) -> None:
        self._call("reading", ohm, temp_c)
        self.feed.reading(self.turns, ohm, temp_c)
        self.feed.log(f"reading {ohm:.6g} ohm at {self.turns:.0f} turns", "reading")

    def mark(self, kind: str, text: str = "") -> None:
        self._call("mark", kind, text)
        self.feed.log(f"{kind} {text}", "mark")

    def close(self, reason: str = "quit") -> None:
        self._call("close", reason)
        self.state = "stopped"

    def advance(self, turns: float, rpm: float = 600.0, guide_mm: float | None = None) -> None:
        self.turns = turns
        self.feed.status(turns=turns, rpm=rpm, guide_mm=guide_mm)


def screen_text(app: Any) -> str:
    """The text of the active screen as rendered (one line per terminal row)."""
    return "\n".join(strip.text for strip in app.screen._compositor.render_strips())


async def type_text(pilot: Any, text: str) -> None:
    """Type ``text`` key by key."""
    keys = {" ": "space", ".": "full_stop", "-": "minus", "+": "plus", "%": "percent_sign"}
    await pilot.press(*[keys.get(ch, ch) for ch in text])


def settle(screen: Any) -> None:
    """Run the monitor's refresh timer long enough for its read-outs to catch up."""
    from winder.tui.monitor_view import READOUT_EVERY

    for _ in range(READOUT_EVERY + 1):
        screen.tick()
