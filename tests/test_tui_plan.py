"""The plan view: the figures on screen are the planner's own, and the keys re-plan."""

from __future__ import annotations

import dataclasses

from textual.widgets import Input

from tests.tui_standins import StandInControl, pickup_coil, screen_text, type_text
from winder.planner import make_plan
from winder.schedule import build_schedule
from winder.tui.app import WinderApp
from winder.tui.dialogs import CautionScreen, EntryDialog
from winder.tui.monitor_view import MonitorScreen
from winder.tui.plan_view import Planner, PlanScreen, neighbour_sizes, parse_target, step_size
from winder.wire import make_wire

SIZE = (120, 40)


def spaced(n: int) -> str:
    return f"{n:,}".replace(",", " ")


async def test_plan_view_shows_the_planners_figures():
    coil = pickup_coil()
    plan = make_plan(coil, force=True)
    sched = build_schedule(plan)
    app = WinderApp(coil=coil, planner=Planner.default())
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        text = screen_text(app)
        assert "test pickup" in text
        assert spaced(plan.turns) in text
        assert f"{plan.fill * 100:.1f} %" in text
        assert "42 AWG heavy" in text
        assert f"{len(sched.passes)} passes" in text
        assert "window section" in text and "usable" in text
        assert "gauge comparison" in text
        # The five neighbouring gauges are listed, the current one marked.
        for size in ("40 AWG", "41 AWG", "43 AWG", "44 AWG"):
            assert size in text
        assert "▶ 42 AWG" in text
        # The star is the gauge chooser's own pick for this bobbin and target.
        from winder.gauges import rank_gauges

        best = [o.size for o in rank_gauges(coil.bobbin, coil.target.value,
                                            insulation="heavy", style=coil.style)
                if o.recommended]
        assert len(best) == 1 and f"★{best[0]}" in text


async def test_style_key_replans_at_once():
    coil = pickup_coil("layer")
    want = make_plan(dataclasses.replace(coil, style=dataclasses.replace(
        coil.style, kind="orthocyclic")), force=True)
    app = WinderApp(coil=coil, planner=Planner.default())
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("s")
        await pilot.pause()
        screen = app.screen
        assert isinstance(screen, PlanScreen)
        assert screen.coil.style.kind == "orthocyclic"
        assert screen.plan.turns == want.turns
        assert spaced(want.turns) in screen_text(app)


async def test_target_dialog_accepts_turns_and_refuses_nonsense():
    coil = pickup_coil()
    app = WinderApp(coil=coil, planner=Planner.default())
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("t")
        await pilot.pause()
        dialog = app.screen
        assert isinstance(dialog, EntryDialog)
        box = dialog.query_one("#entry-input", Input)
        box.value = "5 mm"
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen is dialog                       # refused, still asking
        assert "Not accepted" in screen_text(app)
        box.value = ""
        await type_text(pilot, "6000 turns")
        await pilot.press("enter")
        await pilot.pause()
        plan_screen = app.screen
        assert isinstance(plan_screen, PlanScreen)
        assert plan_screen.plan.turns == 6000
        assert "6 000" in screen_text(app)


async def test_gauge_keys_step_the_wire():
    coil = pickup_coil()
    app = WinderApp(coil=coil, planner=Planner.default())
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("plus")
        await pilot.pause()
        assert app.screen.plan.wire.size_name == "41 AWG"
        await pilot.press("minus", "minus")
        await pilot.pause()
        assert app.screen.plan.wire.size_name == "43 AWG"
        want = make_plan(dataclasses.replace(coil, wire=make_wire("43 AWG", "heavy")), force=True)
        assert app.screen.plan.turns == want.turns


async def test_wire_dialog_and_a_bad_wire():
    app = WinderApp(coil=pickup_coil(), planner=Planner.default())
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("w")
        await pilot.pause()
        box = app.screen.query_one("#entry-input", Input)
        box.value = "97 AWG"
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, EntryDialog)
        assert "AWG sizes run from" in screen_text(app)
        box.value = "0.063 mm grade 1"
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen.plan.wire.name == "0.063 mm grade 1"


async def test_enter_goes_to_the_caution_then_the_monitor():
    control = StandInControl()
    got = []

    def start_wind(coil, plan, schedule):
        got.append((coil, plan, schedule))
        return control

    app = WinderApp(coil=pickup_coil(), planner=Planner.default(), start_wind=start_wind)
    async with app.run_test(size=SIZE) as pilot:
        turns = app.screen.plan.turns
        await pilot.press("enter")
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert len(got) == 1 and got[0][1].turns == turns
        # The caution comes first; the motor has not been started.
        assert isinstance(app.screen, CautionScreen)
        assert control.calls == []
        await pilot.press("y")
        await pilot.pause()
        assert isinstance(app.screen, MonitorScreen)
        assert control.calls[-1] == ("start",)


def test_target_and_size_helpers():
    assert parse_target("6.2 kohm") == ("resistance", 6200.0)
    assert parse_target("8000 turns") == ("turns", 8000.0)
    assert parse_target("fill") == ("fill", None)
    assert neighbour_sizes("42 AWG") == ["40 AWG", "41 AWG", "42 AWG", "43 AWG", "44 AWG"]
    assert step_size("42 AWG", thicker=True) == "41 AWG"
    assert step_size("0.063 mm", thicker=True) == "0.071 mm"    # IEC 60317 R20 series
    assert step_size("0.063 mm", thicker=False) == "0.056 mm"


async def test_a_plan_that_does_not_fit_is_not_wound():
    got = []
    app = WinderApp(coil=pickup_coil(), planner=Planner.default(),
                    start_wind=lambda *a: got.append(a))
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("t")
        await pilot.pause()
        app.screen.query_one("#entry-input", Input).value = "60000 turns"
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen.plan.fill > 1.0
        assert "over-full" in screen_text(app)             # the planner's warning
        await pilot.press("enter")
        await pilot.pause()
        assert got == []
        assert "passes the usable height" in screen_text(app)
