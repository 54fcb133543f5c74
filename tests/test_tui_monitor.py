"""The winding monitor against a recording stand-in control (no link).

The end-to-end tests against the simulated winder are in test_tui_sim.py; these
check what the screen shows and which actions it asks for.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from textual.widgets import Digits, Input, RichLog

from tests.tui_standins import (
    StandInControl,
    pickup_coil,
    planned,
    screen_text,
    settle,
    type_text,
)
from winder.errors import InputError
from winder.planner import Target
from winder.tui.app import WinderApp
from winder.tui.dialogs import CautionScreen, EntryDialog, ReadingDialog, check_reading
from winder.tui.monitor_view import MonitorScreen
from winder.tui.widgets import ChartView

SIZE = (120, 40)


def make_app(control, coil=None, **kw):
    plan, sched = planned(coil)
    return WinderApp(control=control, plan=plan, schedule=sched, **kw), plan, sched


async def test_caution_must_be_acknowledged_before_the_motor_runs():
    control = StandInControl()
    app, _, _ = make_app(control, autostart=True)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, CautionScreen)
        text = screen_text(app)
        for word in ("spindle", "tension", "eye protection", "hair"):
            assert word in text.lower() or word in text
        await pilot.press("n")
        await pilot.pause()
        assert control.calls == []
        assert isinstance(app.screen, MonitorScreen)
        await pilot.press("space")               # asks again
        await pilot.pause()
        assert isinstance(app.screen, CautionScreen)
        await pilot.press("y")
        await pilot.pause()
        # The acknowledgement goes into the journal, then the motor starts.
        assert control.calls == [("mark", "note", "safety caution acknowledged before the "
                                  "motor ran"), ("start",)]


async def test_count_rises_on_screen():
    control = StandInControl()
    app, plan, sched = make_app(control, cautioned=True)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        digits = app.screen.query_one("#count", Digits)
        assert digits.value == "0"
        control.advance(1234.6)
        settle(app.screen)
        await pilot.pause()
        assert digits.value == "1 234"
        text = screen_text(app)
        assert f"of {plan.turns:,} planned".replace(",", " ") in text
        idx, _ = sched.pass_at(1234.6)
        assert f"pass {idx + 1} / {len(sched.passes)}" in text
        assert "600 rpm" in text


async def test_refresh_renders_only_on_the_timer():
    control = StandInControl()
    app, _, _ = make_app(control, cautioned=True)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        screen = app.screen
        before = screen.frames
        for n in range(1, 2001):           # a burst of counts from the link thread
            control.advance(float(n))
        assert screen.frames == before      # nothing drawn outside the refresh timer
        screen.tick()
        assert screen.frames == before + 1  # one render for the whole burst
        assert screen.query_one("#count", Digits).value == "2 000"
        screen.tick()
        assert screen.frames == before + 1  # nothing new, nothing drawn
        timers = [t for t in screen._timers if t.name == "monitor-refresh"]
        assert len(timers) == 1 and 1 / 20 <= timers[0]._interval <= 1 / 10


async def test_reading_dialog_refuses_bad_input_then_logs():
    control = StandInControl()
    app, plan, _ = make_app(control, cautioned=True)
    async with app.run_test(size=SIZE) as pilot:
        control.advance(plan.turns / 2)
        settle(app.screen)
        monitor = app.screen
        await pilot.press("r")
        await pilot.pause()
        dialog = app.screen
        assert isinstance(dialog, ReadingDialog)
        for bad, why in (("5.92", "no unit"), ("5.92 mm", "not a resistance"),
                         ("-3 kohm", "more than zero"), ("5,92 kohm", "decimal comma")):
            dialog.query_one("#reading-ohm", Input).value = bad
            dialog.submit()
            await pilot.pause()
            assert app.screen is dialog, bad
            assert why in screen_text(app), (bad, screen_text(app))
        dialog.query_one("#reading-ohm", Input).value = "2.9 kohm"
        dialog.query_one("#reading-temp", Input).value = "500 degC"
        dialog.submit()
        await pilot.pause()
        assert app.screen is dialog and "outside" in screen_text(app)
        assert control.calls == []
        dialog.query_one("#reading-temp", Input).value = ""
        await pilot.click("#reading-temp")
        await type_text(pilot, "23 degC")
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen is monitor
        assert control.calls == [("reading", 2900.0, 23.0)]
        settle(monitor)
        await pilot.pause()
        chart = monitor.query_one(ChartView)
        assert [(r.turns, r.ohm) for r in chart.readings] == [(plan.turns / 2, 2900.0)]
        assert "●" in screen_text(app)
        assert "calibrated" in screen_text(app)


async def test_far_off_reading_asks_to_confirm():
    control = StandInControl()
    app, plan, _ = make_app(control, cautioned=True)
    async with app.run_test(size=SIZE) as pilot:
        control.advance(plan.turns / 2)
        settle(app.screen)
        await pilot.press("r")
        await pilot.pause()
        dialog = app.screen
        dialog.query_one("#reading-ohm", Input).value = "2.9 ohm"   # kohm meant
        dialog.submit()
        await pilot.pause()
        assert app.screen is dialog and "check the unit" in screen_text(app)
        dialog.submit()                                              # confirmed
        await pilot.pause()
        assert control.calls == [("reading", 2.9, 20.0)]


def test_check_reading_ranges():
    entry, caution = check_reading("5.92 kohm", "23 degC", 5900.0)
    assert (entry.ohm, entry.temp_c, caution) == (5920.0, 23.0, None)
    entry, _ = check_reading("8.1 ohm", "", None)
    assert entry.temp_c == 20.0
    for ohm, temp in (("", "20 degC"), ("1 Gohm", "20 degC"), ("8 ohm", "90 degC"),
                      ("8 ohm", "warm")):
        with pytest.raises(InputError):
            check_reading(ohm, temp)


async def test_pause_stop_break_note_and_quit():
    control = StandInControl()
    app, _, _ = make_app(control, cautioned=True, autostart=True)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert control.calls == [("start",)]
        settle(app.screen)
        await pilot.press("space")
        settle(app.screen)
        await pilot.pause()
        assert control.calls[-1] == ("pause",)
        assert "PAUSED" in screen_text(app)
        await pilot.press("space")
        settle(app.screen)
        await pilot.pause()
        assert control.calls[-1] == ("resume",)
        await pilot.press("b")
        await pilot.pause()
        assert control.calls[-1] == ("mark", "break", "")   # at once (the runner stops)
        assert isinstance(app.screen, EntryDialog)
        app.screen.query_one(Input).value = "near the start flange"
        await pilot.press("enter")
        await pilot.pause()
        assert control.calls[-1] == ("mark", "note", "wire break: near the start flange")
        await pilot.press("n")
        await pilot.pause()
        app.screen.query_one(Input).value = "tension up"
        await pilot.press("enter")
        await pilot.press("j")
        await pilot.pause()
        await pilot.press("enter")
        await pilot.pause()
        assert control.calls[-2:] == [("mark", "note", "tension up"), ("mark", "splice", "")]
        await pilot.press("x")
        await pilot.pause()
        assert control.calls[-1] == ("stop",)
        await pilot.press("q")
        await pilot.pause()
        assert control.calls[-1] == ("close", "quit")
    assert app.return_code == 0


async def test_fill_warns_near_and_at_the_rim():
    coil = pickup_coil()
    coil = type(coil)(coil.name, coil.bobbin, coil.wire, Target("fill"), coil.style)
    control = StandInControl()
    app, plan, _ = make_app(control, coil=coil, cautioned=True)
    model = plan.model
    usable = plan.bobbin.usable_height_m
    # The first turn count whose build reaches 90 % / 100 % of the usable height.
    import numpy as np

    n = np.arange(1, plan.turns + 1)
    h = np.asarray(model.build_height_m(n))
    warn_at = int(n[np.argmax(h >= 0.9 * usable)])
    async with app.run_test(size=SIZE) as pilot:
        control.advance(warn_at - 1)
        settle(app.screen)
        await pilot.pause()
        assert "NEAR THE RIM" not in screen_text(app)
        control.advance(warn_at)
        settle(app.screen)
        await pilot.pause()
        assert "NEAR THE RIM" in screen_text(app)
        control.advance(plan.turns * 1.2)
        settle(app.screen)
        await pilot.pause()
        assert "AT THE RIM" in screen_text(app)


async def test_link_state_and_events_are_shown():
    control = StandInControl()
    app, _, _ = make_app(control, cautioned=True)
    async with app.run_test(size=SIZE) as pilot:
        control.feed.status(link="reconnecting")
        control.feed.log("link lost: no data for 1.0 s", "link")
        settle(app.screen)
        await pilot.pause()
        text = screen_text(app)
        assert "reconnecting" in text
        assert "link lost: no data" in text
        control.feed.status(link="rebooted")
        settle(app.screen)
        await pilot.pause()
        assert "device rebooted" in screen_text(app)
        assert len(app.screen.query_one(RichLog).lines) >= 1


async def test_a_failing_action_is_logged_not_raised():
    control = StandInControl()
    app, _, _ = make_app(control, cautioned=True)
    async with app.run_test(size=SIZE) as pilot:
        control.fail_next = "link down: cannot pause"
        control.feed.status(state="running")
        settle(app.screen)
        await pilot.press("space")
        settle(app.screen)
        await pilot.pause()
        assert "cannot pause" in screen_text(app)
        assert isinstance(app.screen, MonitorScreen)


@settings(deadline=None, max_examples=200)
@given(st.text(max_size=40), st.text(max_size=20),
       st.one_of(st.none(), st.floats(0.01, 1e7)))
def test_typed_readings_are_accepted_or_refused_never_crash(ohm, temp, expected):
    try:
        entry, caution = check_reading(ohm, temp, expected)
    except InputError as err:
        assert str(err)                         # a one-line reason
        assert "\n" not in str(err)
    else:
        assert 0 < entry.ohm <= 100e6
        assert -10 <= entry.temp_c <= 80
        assert caution is None or "expected" in caution
