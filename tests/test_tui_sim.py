"""The terminal UI end to end against the simulated winder on a real pseudo-terminal.

`winder demo`'s own set-up (winder.tui.demo.demo_app): a shipped example coil, the
simulator started by winder.link.simproc (`winder sim --pty`), the real link
driver, session runner and journal, in Textual's headless test harness at 120 x 40.
The true spindle state is read from the simulator process (`truth`).
"""

from __future__ import annotations

import json
import time

import pytest
from textual.css.query import NoMatches
from textual.widgets import Digits, Input

from tests.tui_standins import screen_text
from winder.tui.demo import demo_app
from winder.tui.dialogs import CautionScreen, ReadingDialog
from winder.tui.monitor_view import MonitorScreen
from winder.tui.widgets import ChartView

SIZE = (120, 40)
SPEEDUP = 10.0


@pytest.fixture
def demo(tmp_path):
    app, setup, sim = demo_app(coil="sense-6k2", speedup=SPEEDUP, workdir=tmp_path)
    yield app, setup, sim
    app.close_control("test end")
    sim.close()


def journal(setup) -> list[dict]:
    path = setup.session.path / "journal.jsonl"
    return [json.loads(line) for line in path.read_text().splitlines() if line.strip()]


async def until(pilot, cond, timeout=60.0, what="condition"):
    """Let the app run until ``cond()`` holds (bounded by ``timeout`` seconds)."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        try:
            if cond():
                return
        except NoMatches:  # a screen just pushed may not have mounted its widgets yet
            pass
        await pilot.pause(0.05)
    raise AssertionError(f"timed out waiting for {what}")


def count_on_screen(app) -> int:
    return int(app.screen.query_one("#count", Digits).value.replace(" ", ""))


async def start_winding(app, pilot):
    await pilot.pause()
    await pilot.press("enter")                          # plan view: wind
    await until(pilot, lambda: isinstance(app.screen, CautionScreen), what="the caution")
    await pilot.press("y")
    await until(pilot, lambda: isinstance(app.screen, MonitorScreen), what="the monitor")
    await until(pilot, lambda: count_on_screen(app) > 50, what="the count to rise")


async def test_count_rises_on_screen_and_quit_stops_the_motor(demo):
    app, setup, sim = demo
    async with app.run_test(size=SIZE) as pilot:
        await start_winding(app, pilot)
        first = count_on_screen(app)
        assert sim.truth()["motor_running"]
        await until(pilot, lambda: count_on_screen(app) > first + 50, what="more turns")
        assert "WINDING" in screen_text(app)
        assert "link ● connected" in screen_text(app)
        await pilot.press("q")
        await pilot.pause()
    truth = sim.truth()
    assert not truth["motor_running"]
    kinds = [(e["kind"], e.get("reason")) for e in journal(setup)]
    assert ("paused", "quit") in kinds
    # The caution was journaled before the count was zeroed and the motor started.
    notes = [e for e in journal(setup) if e["kind"] == "note"]
    assert any("caution acknowledged" in e["text"] for e in notes)
    # The journal's last count is the device's (within the turns made while stopping).
    last = [e for e in journal(setup) if "turns" in e][-1]["turns"]
    assert abs(last - truth["turns"]) <= 2


async def test_a_logged_reading_reaches_the_chart_and_the_journal(demo):
    app, setup, sim = demo
    async with app.run_test(size=SIZE) as pilot:
        await start_winding(app, pilot)
        monitor = app.screen
        await pilot.press("r")
        await until(pilot, lambda: isinstance(app.screen, ReadingDialog), what="the dialog")
        dialog = app.screen
        dialog.query_one("#reading-ohm", Input).value = "12 parsecs"
        dialog.submit()
        await pilot.pause()
        assert app.screen is dialog and "Not logged" in screen_text(app)
        at = dialog.turns
        expected = dialog.expected_ohm
        typed = f"{expected * 1.01:.1f} ohm"               # 1 % above the model
        dialog.query_one("#reading-ohm", Input).value = typed
        dialog.query_one("#reading-temp", Input).value = "23 degC"
        dialog.submit()
        await until(pilot, lambda: app.screen is monitor, what="the dialog to close")
        chart = monitor.query_one(ChartView)
        await until(pilot, lambda: any(abs(r.ohm - expected * 1.01) < 0.06
                                       for r in chart.readings), what="the reading on the chart")
        readings = [e for e in journal(setup) if e["kind"] == "reading" and
                    e.get("source") == "user"]
        assert len(readings) == 1
        assert readings[0]["ohm"] == pytest.approx(expected * 1.01, abs=0.06)
        assert readings[0]["temp_c"] == 23.0
        assert readings[0]["turns"] >= at               # journaled at the count then
        assert "●" in screen_text(app)
        await pilot.press("q")
        await pilot.pause()


async def test_pause_stops_the_simulated_spindle_and_space_continues(demo):
    app, setup, sim = demo
    async with app.run_test(size=SIZE) as pilot:
        await start_winding(app, pilot)
        await pilot.press("space")
        await until(pilot, lambda: not sim.truth()["motor_running"], what="the spindle to stop")
        held = sim.truth()["coil_turns"]
        await until(pilot, lambda: "PAUSED" in screen_text(app), what="PAUSED on screen")
        await pilot.pause(0.3)
        assert sim.truth()["coil_turns"] == held          # it stays stopped
        await pilot.press("space")
        await until(pilot, lambda: sim.truth()["coil_turns"] > held + 20, what="winding again")
        await pilot.press("q")
        await pilot.pause()
    assert not sim.truth()["motor_running"]
    kinds = [e["kind"] for e in journal(setup)]
    assert kinds.count("paused") >= 2 and "continued" in kinds


async def test_resume_in_the_monitor_continues_from_the_journal(demo):
    from winder.tui.app import WinderApp
    from winder.tui.wind import resume_control

    app, setup, sim = demo
    async with app.run_test(size=SIZE) as pilot:
        await start_winding(app, pilot)
        await pilot.press("q")
        await pilot.pause()
    stopped_at = [e for e in journal(setup) if "turns" in e][-1]["turns"]
    assert stopped_at > 50
    control, plan, sched = resume_control(setup.session.path, port=sim.device)
    app2 = WinderApp(control=control, plan=plan, schedule=sched, autostart=True)
    try:
        async with app2.run_test(size=SIZE) as pilot:
            await until(pilot, lambda: isinstance(app2.screen, CautionScreen), what="caution")
            # Before the caution is acknowledged the journal count is shown, the motor idle.
            assert not sim.truth()["motor_running"]
            await pilot.press("y")
            await until(pilot, lambda: isinstance(app2.screen, MonitorScreen), what="monitor")
            await until(pilot, lambda: count_on_screen(app2) > stopped_at + 50,
                        what="the count to go on from the journal")
            await pilot.press("q")
            await pilot.pause()
    finally:
        app2.close_control("test end")
    assert not sim.truth()["motor_running"]
    kinds = [e["kind"] for e in journal(setup)]
    assert "resumed" in kinds
    counts = [e["turns"] for e in journal(setup) if "turns" in e and e["kind"] == "checkpoint"]
    assert counts == sorted(counts)               # the count never went back


async def test_an_error_inside_the_ui_stops_the_motor(demo):
    app, setup, sim = demo

    def broken() -> None:
        raise RuntimeError("a bug in a handler")

    with pytest.raises(RuntimeError, match="a bug in a handler"):
        async with app.run_test(size=SIZE) as pilot:
            await start_winding(app, pilot)
            assert sim.truth()["motor_running"]
            app.call_later(broken)
            await pilot.pause()
            await pilot.pause()
    assert not sim.truth()["motor_running"]
    assert ("paused", "crash") in [(e["kind"], e.get("reason")) for e in journal(setup)]


async def test_link_loss_and_reboot_show_in_the_top_bar(demo):
    app, setup, sim = demo
    async with app.run_test(size=SIZE) as pilot:
        await start_winding(app, pilot)
        sim.control("drop 1.5")
        await until(pilot, lambda: "reconnecting" in screen_text(app), what="reconnecting")
        await until(pilot, lambda: "link ● connected" in screen_text(app),
                    what="connected again")
        assert "PAUSED" in screen_text(app)       # the runner waits for the user after a loss
        assert not sim.truth()["motor_running"]
        sim.control("reboot")
        await until(pilot, lambda: "device rebooted" in screen_text(app),
                    what="the reboot on screen")
        await pilot.press("q")
        await pilot.pause()
    kinds = [e["kind"] for e in journal(setup)]
    assert "link_lost" in kinds and "link_back" in kinds and "device_rebooted" in kinds


async def test_hand_winding_needs_no_caution_and_guides_the_wire(tmp_path):
    app, setup, sim = demo_app(coil="driver-8ohm", speedup=SPEEDUP, hand=True,
                               workdir=tmp_path)
    try:
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause()
            await pilot.press("enter")
            await until(pilot, lambda: isinstance(app.screen, MonitorScreen), what="monitor")
            assert not app.control.motor                 # a counter: nothing to caution
            assert not isinstance(app.screen, CautionScreen)
            await until(pilot, lambda: count_on_screen(app) > 5, what="cranked turns")
            text = screen_text(app)
            assert "wire at" in text and "guide" not in text.split("wire at")[1][:20]
            assert "▲" in text                          # where the wire should be now
            await pilot.press("q")
            await pilot.pause()
    finally:
        app.close_control("test end")
        sim.close()
    kinds = [e["kind"] for e in journal(setup)]
    assert "started" in kinds


async def test_a_whole_coil_winds_to_done_and_takes_a_final_reading(tmp_path):
    app, setup, sim = demo_app(coil="driver-8ohm", speedup=SPEEDUP, workdir=tmp_path)
    try:
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause()
            planned = app.screen.plan.turns
            await pilot.press("enter")
            await until(pilot, lambda: isinstance(app.screen, CautionScreen), what="caution")
            await pilot.press("y")
            await until(pilot, lambda: "DONE" in screen_text(app), what="the coil finished")
            assert count_on_screen(app) == planned
            assert not sim.truth()["motor_running"]
            await until(pilot, lambda: "log the reading" in screen_text(app), what="the hint")
            await pilot.press("r")
            await until(pilot, lambda: isinstance(app.screen, ReadingDialog), what="dialog")
            app.screen.query_one("#reading-ohm", Input).value = "8.05 ohm"
            app.screen.submit()
            await until(pilot, lambda: any(e["kind"] == "reading" and e.get("source") == "user"
                                           for e in journal(setup)), what="the final reading")
            await pilot.press("q")
            await pilot.pause()
    finally:
        app.close_control("test end")
        sim.close()
    kinds = [e["kind"] for e in journal(setup)]
    assert "finished" in kinds
    final = [e for e in journal(setup) if e["kind"] == "reading" and e.get("source") == "user"]
    assert final[-1]["ohm"] == 8.05 and final[-1]["turns"] == planned
