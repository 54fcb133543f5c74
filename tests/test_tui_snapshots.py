"""Snapshots of the plan view and the monitor at 120 x 40 (pytest-textual-snapshot).

Deterministic: the coil is planned by the real planner (a fixed scatter seed), the
monitor is fed a fixed count, speed, guide position and readings through the
stand-in control, and the event log's clock is frozen. Update with
``pytest tests/test_tui_snapshots.py --snapshot-update`` after a deliberate change,
and look at the new SVGs before committing them.
"""

from __future__ import annotations

import time

from textual.widgets import Input

from tests.tui_standins import StandInControl, pickup_coil, planned, settle
from winder.tui.app import WinderApp
from winder.tui.plan_view import Planner

SIZE = (120, 40)
FROZEN = 1_800_000_000.0   # 2027-01-15 08:00:00 UTC


def test_plan_view_snapshot(snap_compare):
    app = WinderApp(coil=pickup_coil("scatter"), planner=Planner.default())
    assert snap_compare(app, terminal_size=SIZE)


def monitor_app() -> tuple[WinderApp, StandInControl]:
    plan, sched = planned(pickup_coil("layer"))
    control = StandInControl(clock=lambda: FROZEN)
    app = WinderApp(control=control, plan=plan, schedule=sched, cautioned=True,
                    clock=time.gmtime)
    turns = round(plan.turns * 0.62)
    _, guide = sched.pass_at(turns)
    control.feed.status(state="running", link="connected")
    control.advance(turns - 1500, rpm=0.0)
    control.log_reading(float(plan.model.resistance_ohm(turns - 1500)) * 1.02, 22.5)
    control.advance(turns, rpm=1200.0, guide_mm=guide + 0.05)
    control.feed.log("link lost (no data for 1.0 s)", "link")
    control.feed.log("link back; count kept", "link")
    control.calls.clear()
    return app, control


def test_monitor_snapshot(snap_compare):
    app, _ = monitor_app()

    async def run_before(pilot):
        settle(app.screen)
        await pilot.pause()

    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_reading_dialog_snapshot(snap_compare):
    app, _ = monitor_app()

    async def open_dialog(pilot):
        settle(app.screen)
        await pilot.press("r")
        await pilot.pause()
        for box in app.screen.query(Input):
            box.cursor_blink = False                 # a blinking cursor is not deterministic
        app.screen.query_one("#reading-ohm").value = "5.92 parsec"
        app.screen.submit()
        await pilot.pause()

    assert snap_compare(app, terminal_size=SIZE, run_before=open_dialog)


def test_caution_snapshot(snap_compare):
    plan, sched = planned(pickup_coil("layer"))
    control = StandInControl(clock=lambda: FROZEN)
    app = WinderApp(control=control, plan=plan, schedule=sched, autostart=True,
                    clock=time.gmtime)
    assert snap_compare(app, terminal_size=SIZE)
