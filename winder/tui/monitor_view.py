"""The live winding monitor.

Left column: the turn count in large digits with progress against the planned
turns, speed and time left; the traverse (pass, direction, where the wire
should be now from the schedule, the guide position the device reports); the
build in the window section with a fill bar that warns at 90 % and 100 % of the
usable height. Right column: resistance estimated so far with its band, the
resistance chart (predicted curve, readings as points) and the event log.

The screen never reads the link: a fixed-rate timer (:data:`REFRESH_HZ`) takes
the newest :class:`~winder.tui.feed.Batch` from the control's feed and renders it.
"""

from __future__ import annotations

import time
from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Digits, Footer, ProgressBar, RichLog, Static

from winder.errors import WinderError
from winder.tui.dialogs import CautionScreen, EntryDialog, ReadingDialog, ReadingEntry
from winder.tui.feed import Batch, LogLine, Status, WindControl
from winder.tui.progress import Figures, Reading, band_text, duration_text, figures, ohm_text
from winder.tui.widgets import ChartView, FillBar, GuideTrack, SectionView

REFRESH_HZ = 10.0
READOUT_EVERY = 3       # refresh ticks between updates of the numeric read-outs (about 3 Hz)

LINK_TEXT = {
    "offline": ("○ offline", "#8a94a6"),
    "connecting": ("◌ connecting", "#d9a440"),
    "connected": ("● connected", "#5fd7af"),
    "reconnecting": ("◌ reconnecting", "#d9a440"),
    "rebooted": ("● connected · device rebooted, count kept", "#d9a440"),
    "lost": ("✕ link lost: motor stop sent", "#ff5f5f"),
}
STATE_TEXT = {
    "idle": ("READY", "#8a94a6"), "running": ("WINDING", "#5fd7af"),
    "paused": ("PAUSED", "#d9a440"), "stopped": ("STOPPED", "#ff8f5f"),
    "done": ("DONE", "#6fa8c8"), "fault": ("FAULT", "#ff5f5f"),
}
LOG_STYLE = {"info": "#c0c6d0", "warn": "#d9a440", "error": "bold #ff5f5f",
             "reading": "#ffaf5f", "mark": "#6fa8c8", "link": "#b48ead"}


def _thousands(turns: float) -> str:
    return f"{int(turns):,}".replace(",", " ")


class MonitorScreen(Screen[None]):
    """Live view of one winding, driven by a :class:`~winder.tui.feed.WindControl`."""

    BINDINGS = [
        Binding("space", "toggle_pause", "Pause/continue"),
        Binding("r", "reading", "Log reading"),
        Binding("b", "mark_break", "Wire break"),
        Binding("j", "mark_splice", "Splice"),
        Binding("n", "note", "Note"),
        Binding("x", "stop", "Stop"),
        Binding("a", "accept_stop", "Accept stop"),
        Binding("q", "quit_wind", "Quit"),
    ]

    def __init__(self, control: WindControl, plan: Any, schedule: Any | None = None, *,
                 title: str = "", cautioned: bool = False, autostart: bool = False,
                 clock: Any = time.localtime):
        super().__init__()
        self.control = control
        self.plan = plan
        self.schedule = schedule
        self.title_text = title or getattr(getattr(plan, "coil", None), "name", "coil")
        self.cautioned = cautioned or not getattr(control, "motor", True)
        self.autostart = autostart
        self.clock = clock
        self.status = Status()
        self.readings: list[Reading] = []
        self.last: Figures | None = None
        self.last_temp = "20 degC"
        self.frames = 0       # renders done (the tests read it to check the rate cap)
        self._control_closed = False
        self._last_line = ""
        self._repeats = 0
        self._shown: dict[str, Text] = {}
        self._readouts_due = True
        self._readouts_pending = False
        self._readout_tick = 0
        self._ticks = 0

    # ----- layout
    def compose(self) -> ComposeResult:
        with Horizontal(id="mon-top"):
            yield Static(id="mon-title")
            yield Static(id="mon-state")
            yield Static(id="mon-link")
        with Horizontal(id="mon-body"):
            with Vertical(id="mon-left"):
                with Vertical(id="count-panel", classes="panel") as p:
                    p.border_title = "turns"
                    yield Digits("0", id="count")
                    yield Static(id="count-of")
                    yield ProgressBar(total=100, show_eta=False, show_percentage=False,
                                      id="count-bar")
                    yield Static(id="count-speed")
                with Vertical(id="pass-panel", classes="panel") as p:
                    p.border_title = "traverse"
                    yield Static(id="pass-text")
                    yield GuideTrack(id="guide")
                    yield Static(id="guide-text")
                with Vertical(id="build-panel", classes="panel") as p:
                    p.border_title = "build"
                    yield SectionView(id="mon-section")
                    yield FillBar(id="fill-bar")
                    yield Static(id="fill-text")
            with Vertical(id="mon-right"):
                with Vertical(id="ohm-panel", classes="panel") as p:
                    p.border_title = "resistance"
                    yield Static(id="ohm-text")
                    yield ChartView(id="chart")
                with Vertical(id="log-panel", classes="panel") as p:
                    p.border_title = "events"
                    yield RichLog(id="log", wrap=True, markup=False, max_lines=1000,
                                  min_width=20)
        yield Footer()

    def on_mount(self) -> None:
        bobbin = self.plan.bobbin
        self.query_one("#mon-title", Static).update(
            Text.assemble(("winder ", "bold #5fd7af"), ("· ", "#4a5263"),
                          (self.title_text, "bold")))
        self.query_one(GuideTrack).set_window(bobbin.window_width_m * 1e3,
                                              bobbin.clearance_ends_m * 1e3)
        self.query_one(ChartView).set_plan(self.plan)
        self.render_batch(self.control.feed.take(), force=True)
        self.set_interval(1.0 / REFRESH_HZ, self.tick, name="monitor-refresh")
        if self.autostart:
            self.call_after_refresh(self.action_start)

    # ----- refresh
    def tick(self) -> None:
        """Timer: render the newest state (at most REFRESH_HZ times a second)."""
        self.render_batch(self.control.feed.take())

    def render_batch(self, batch: Batch, force: bool = False) -> None:
        for r in batch.readings:
            self.readings.append(Reading(r.turns, r.ohm, r.temp_c))
        log = self.query_one(RichLog)
        if batch.dropped:
            log.write(Text(f"… {batch.dropped} older events not shown", "#8a94a6"))
        for line in batch.lines:
            if line.text == self._last_line:        # a device repeating itself: count it
                self._repeats += 1
                continue
            self._flush_repeats(log)
            self._last_line = line.text
            log.write(self._log_text(line))
        self._ticks += 1
        late = self._ticks - self._readout_tick >= READOUT_EVERY
        if not (batch.changed or batch.readings or force):
            if self._readouts_pending and late and self.last is not None:
                self._readouts_due = True        # the count stopped: show the last figures
                self._readout_tick = self._ticks
                self._readouts_pending = False
                self._show(self.last, self.status)
            return
        prev, st = self.status, batch.status
        # Numeric read-outs change every READOUT_EVERY ticks (a person cannot read a number
        # changing 12 times a second, and every update costs a redraw of its panel);
        # anything else that changed shows at once.
        self._readouts_due = (force or batch.readings != [] or late or
                              (prev.state, prev.link, prev.stop_turns, prev.faults) !=
                              (st.state, st.link, st.stop_turns, st.faults))
        if self._readouts_due:
            self._readout_tick = self._ticks
        self._readouts_pending = not self._readouts_due
        if st.state == "done" and prev.state != "done":
            self.control.feed.log("the coil is wound: measure it and log the reading (r), "
                                  "then q", "info")
        self.status = st
        self.frames += 1
        f = figures(self.plan, batch.status.turns, batch.status.rpm,
                    schedule=self.schedule, readings=self.readings,
                    stop_turns=batch.status.stop_turns)
        self.last = f
        self._show(f, batch.status)

    def _flush_repeats(self, log: RichLog) -> None:
        if self._repeats:
            log.write(Text(f"         … the line above {self._repeats} more time"
                           f"{'s' if self._repeats > 1 else ''}", "#8a94a6"))
            self._repeats = 0

    def _log_text(self, line: LogLine) -> Text:
        stamp = time.strftime("%H:%M:%S", self.clock(line.at))
        return Text.assemble((stamp + " ", "#5a5f6b"), (line.text, LOG_STYLE.get(line.kind, "")))

    def _set(self, selector: str, content: Text, readout: bool = False) -> None:
        """Update a Static only when its content changed, and re-lay out the screen only
        when its shape changed (a layout pass costs more than the rest of a frame).
        A ``readout`` (a number that moves with the count) waits for its frame."""
        if readout and not self._readouts_due and selector in self._shown:
            return
        old = self._shown.get(selector)
        if old == content:
            return
        self._shown[selector] = content
        # The panels' lines fill their width; only the top bar's pieces size to content.
        if selector in ("#mon-state", "#mon-link"):
            relayout = old is None or len(old.plain) != len(content.plain)
        else:
            relayout = old is None or old.plain.count("\n") != content.plain.count("\n")
        self.query_one(selector, Static).update(content, layout=relayout)

    def _show(self, f: Figures, st: Status) -> None:
        q = self.query_one
        digits = q("#count", Digits)
        if digits.value != _thousands(f.turns):
            digits.update(_thousands(f.turns))
        pct = f.fraction * 100
        moved = abs(f.planned_turns - float(self.plan.turns)) > 0.5
        self._set("#count-of", Text.assemble(
            ("of ", "#8a94a6"), (_thousands(f.planned_turns), "bold"),
            (" (stop moved from the plan's " + _thousands(self.plan.turns) + ")  " if moved
             else " planned  ", "#8a94a6"),
            (f"{pct:5.1f} %", "bold #5fd7af")), readout=True)
        bar = q("#count-bar", ProgressBar)
        total = max(f.planned_turns, 1.0)
        done = round(min(f.turns, f.planned_turns) / total * 500) / 500 * total  # bar steps
        if (bar.total, bar.progress) != (total, done):
            bar.update(total=total, progress=done)
        self._set("#count-speed", Text.assemble(
            ("speed ", "#8a94a6"), (f"{f.rpm:5.0f} rpm", "bold"),
            ("   left ", "#8a94a6"), (duration_text(f.remaining_s), "bold")), readout=True)
        # Traverse.
        if f.pass_index is not None:
            arrow = {"outward": "→ outward", "homeward": "← homeward"}.get(f.direction or "", "")
            self._set("#pass-text", Text.assemble(
                ("pass ", "#8a94a6"), (f"{f.pass_index + 1} / {f.pass_count}", "bold"),
                ("  ", ""), (arrow, "bold #5fd7af")))
        else:
            self._set("#pass-text", Text("no schedule: wind evenly across", "#8a94a6"))
        q(GuideTrack).set_position(f.guide_mm, st.guide_mm, f.direction)
        parts: list[tuple[str, str]] = []
        if f.guide_mm is not None:
            parts += [("wire at ", "#8a94a6"), (f"{f.guide_mm:5.1f} mm", "bold #5fd7af")]
        if st.guide_mm is not None:
            parts += [("  guide ", "#8a94a6"), (f"{st.guide_mm:5.1f} mm", "bold")]
        parts += [("  of ", "#8a94a6"), (f"{self.plan.bobbin.window_width_m * 1e3:.1f} mm",
                                        "")]
        self._set("#guide-text", Text.assemble(*parts), readout=True)
        # Build.
        q(SectionView).show(self.plan.bobbin, float(self.plan.build_height_m), f.build_m)
        q(FillBar).set_fill(f.fill, float(self.plan.fill))
        msg = {"ok": ("of usable height", "#8a94a6"),
               "warn": ("NEAR THE RIM: 90 % of usable height", "bold #d9a440"),
               "full": ("AT THE RIM: usable height reached", "bold #ff5f5f")}[f.fill_level]
        self._set("#fill-text", Text.assemble(
            (f"build {f.build_m * 1e3:.2f} mm ", "bold"), msg), readout=True)
        # Resistance.
        e = f.estimate
        lines = Text.assemble(
            ("now ", "#8a94a6"), (ohm_text(e.ohm, 3), "bold #ffaf5f"),
            (f"  ({band_text(e.lo, e.hi)})", "#c0c6d0"),
            (" at 20 °C", "#8a94a6"),
            ("  calibrated" if e.calibrated else "  from the plan", "#6fa8c8"),
            ("\ntarget ", "#8a94a6"), (ohm_text(float(self.plan.resistance_ohm)), "bold"),
            (f" at {_thousands(f.planned_turns)} turns", "#8a94a6"))
        if f.final is not None and f.final.calibrated:
            lines.append_text(Text.assemble(
                ("  expect ", "#8a94a6"), (ohm_text(f.final.ohm), "bold #ffaf5f"),
                (" there", "#8a94a6")))
        if f.readings:
            r = f.readings[-1]
            lines.append_text(Text.assemble(
                ("\nlast reading ", "#8a94a6"), (ohm_text(r.ohm), "bold #ffaf5f"),
                (f" at {_thousands(r.turns)} t, {r.temp_c:.1f} °C", "#8a94a6")))
        self._set("#ohm-text", lines, readout=True)
        q(ChartView).set_state(f.turns, f.readings, e)
        # Top bar.
        label, colour = STATE_TEXT.get(st.state, (st.state.upper(), "#c0c6d0"))
        self._set("#mon-state", Text(f" {label} ", f"bold #14161a on {colour}"))
        ltext, lcol = LINK_TEXT.get(st.link, (st.link, "#c0c6d0"))
        detail = f" · {st.link_detail}" if st.link_detail else ""
        self._set("#mon-link", Text(f"link {ltext}{detail}", lcol))

    # ----- actions
    def _do(self, what: str, fn: Any, *args: Any) -> bool:
        try:
            fn(*args)
        except WinderError as err:
            self.control.feed.log(f"{what}: {err}", "error")
            return False
        return True

    def action_start(self) -> None:
        """Start or continue the motor; the caution comes first if not yet acknowledged."""
        if not self.cautioned:
            self.app.push_screen(CautionScreen(), self._after_caution)
            return
        if self.status.state == "paused":
            self._do("continue", self.control.resume)
        else:
            self._do("start", self.control.start)

    def _after_caution(self, accepted: bool | None) -> None:
        if accepted:
            self.cautioned = True
            self._do("note", self.control.mark, "note",
                     "safety caution acknowledged before the motor ran")
            self.action_start()
        else:
            self.control.feed.log("motor not started: caution not acknowledged "
                                  "(space to start)", "warn")

    def action_toggle_pause(self) -> None:
        if self.status.state == "running":
            self._do("pause", self.control.pause)
        else:
            self.action_start()

    def action_stop(self) -> None:
        self._do("stop", self.control.stop)

    def action_accept_stop(self) -> None:
        """Move the stop point to the one proposed after a reading."""
        accept = getattr(self.control, "accept_stop", None)
        if accept is not None:
            self._do("accept", accept)

    def action_reading(self) -> None:
        def now() -> tuple[float, float | None]:
            turns = self.status.turns
            expected = self.last.estimate.ohm if self.last is not None and turns > 0 else None
            return turns, expected

        def done(entry: ReadingEntry | None) -> None:
            if entry is None:
                return
            self.last_temp = f"{entry.temp_c:g} degC"
            self._do("reading", self.control.log_reading, entry.ohm, entry.temp_c)

        self.app.push_screen(ReadingDialog(now=now, last_temp=self.last_temp), done)

    def _ask_mark(self, kind: str, title: str, hint: str) -> None:
        def done(text: object | None) -> None:
            if text is not None:
                self._do(kind, self.control.mark, kind, str(text).strip())

        self.app.push_screen(EntryDialog(title, hint, placeholder="optional"), done)

    def action_mark_break(self) -> None:
        """Mark a wire break now (the motor stops), then ask for an optional note."""
        self._do("break", self.control.mark, "break", "")

        def done(text: object | None) -> None:
            if text is not None and str(text).strip():
                self._do("note", self.control.mark, "note", f"wire break: {str(text).strip()}")

        self.app.push_screen(EntryDialog("Wire break", "Marked at the count now; the motor "
                                         "is stopped. What happened (optional)?",
                                         placeholder="optional"), done)

    def action_mark_splice(self) -> None:
        self._ask_mark("splice", "Splice", "Joined the wire? Note where and how (optional):")

    def action_note(self) -> None:
        self._ask_mark("note", "Note", "A note for the journal at the count now:")

    def action_quit_wind(self) -> None:
        """Stop the motor, journal, release the link, leave the app."""
        self.close_control("quit")
        self.app.exit()

    def close_control(self, reason: str) -> None:
        if not self._control_closed:
            self._control_closed = True
            try:
                self.control.close(reason)
            except WinderError as err:
                self.control.feed.log(f"close: {err}", "error")
