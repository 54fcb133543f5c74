"""The plan view: a coil's inputs, its figures, warnings, the window section and
the gauge comparison, with keys to change target, wire or style and re-plan at once.

The screen plans through a :class:`Planner` (by default the real planner and
schedule); every change builds a new ``Coil`` with :func:`dataclasses.replace`
and calls ``make_plan`` again, so the figures on screen are always the
planner's own.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from rich.table import Table
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Static

from winder.errors import InputError, WinderError
from winder.tui.dialogs import EntryDialog
from winder.tui.progress import band_text, duration_text, ohm_text
from winder.tui.section import core_text
from winder.tui.widgets import SectionView
from winder.units import parse_resistance

STYLES = ("layer", "orthocyclic", "scatter")


@dataclass(frozen=True)
class GaugeRow:
    """One wire in the gauge comparison (SI floats; ``error`` when it cannot be planned)."""

    wire: str
    turns: int | None = None
    layers: float | None = None
    fill: float | None = None
    resistance_ohm: float | None = None
    length_m: float | None = None
    current: bool = False
    error: str = ""
    recommended: bool = False     # the gauge chooser's pick for this bobbin and target


@dataclass
class Planner:
    """How the plan view makes plans; the defaults are the real layers."""

    make_plan: Callable[..., Any]
    make_wire: Callable[..., Any]
    make_schedule: Callable[[Any], Any] | None = None

    @classmethod
    def default(cls, machine: Any | None = None) -> Planner:
        from winder.planner import make_plan
        from winder.wire import make_wire

        make_schedule = None
        try:
            from winder.schedule import build_schedule

            def make_schedule(plan: Any) -> Any:
                return build_schedule(plan, machine)
        except ImportError:  # the schedule layer is optional for the plan view
            pass
        return cls(make_plan=make_plan, make_wire=make_wire, make_schedule=make_schedule)


def _series(size_name: str) -> list[str]:
    """The catalog series (thickest first) that ``size_name`` belongs to, or []."""
    from winder.wire import awg_sizes, metric_sizes

    for series in (awg_sizes(), metric_sizes()):
        if size_name in series:
            return series
    return []


def neighbour_sizes(size_name: str, span: int = 2) -> list[str]:
    """The catalog sizes ``span`` steps either side of ``size_name``, thickest first."""
    series = _series(size_name)
    if not series:
        return [size_name]
    i = series.index(size_name)
    return series[max(0, i - span): i + span + 1]


def step_size(size_name: str, thicker: bool) -> str | None:
    """The next thicker or thinner catalog size after ``size_name``, or None at the end."""
    series = _series(size_name)
    if not series:
        return None
    i = series.index(size_name) + (-1 if thicker else 1)
    return series[i] if 0 <= i < len(series) else None


def parse_target(text: str) -> tuple[str, float | None]:
    """'8 ohm'/'6.2 kohm' -> resistance; '8000 turns' -> turns; 'fill' -> fill the bobbin."""
    t = text.strip()
    m = re.fullmatch(r"(\d+(?:\.\d*)?)\s*(?:t|turns?)", t, re.IGNORECASE)
    if m:
        turns = float(m.group(1))
        if turns < 1 or turns != int(turns):
            raise InputError(f"{t!r}: a whole number of turns, 1 or more", where="target")
        return "turns", turns
    if t.lower() in ("fill", "full"):
        return "fill", None
    try:
        return "resistance", parse_resistance(t, where="target")
    except InputError as err:
        raise InputError(f"{t!r}: write a resistance ('6.2 kohm', '8 ohm'), a turn count "
                         "('8000 turns') or 'fill'", where="target") from err


def target_text(target: Any) -> str:
    kind, value = target.kind, target.value
    if kind == "resistance" and value:
        return ohm_text(float(value))
    if kind == "turns" and value:
        return f"{value:,.0f} turns"
    if kind == "fill":
        return "fill"
    return f"{kind} {value}"


def _mm(m: float, digits: int = 2) -> str:
    return f"{m * 1e3:.{digits}f} mm"


def _um(m: float) -> str:
    return f"{m * 1e6:.1f} µm"


class PlanScreen(Screen[None]):
    """The coil's plan; keys re-plan with another target, wire or winding style."""

    BINDINGS = [
        Binding("t", "target", "Target"),
        Binding("w", "wire", "Wire"),
        Binding("minus", "thinner", "Thinner"),
        Binding("plus,equals_sign", "thicker", "Thicker"),
        Binding("s", "style", "Style"),
        Binding("enter", "wind", "Wind"),
        Binding("q", "app.quit", "Quit"),
    ]

    def __init__(self, coil: Any, planner: Planner, *,
                 on_wind: Callable[[Any, Any, Any], None] | None = None,
                 compare_span: int = 2):
        super().__init__()
        self.coil = coil
        self.planner = planner
        self.on_wind = on_wind
        self.compare_span = compare_span
        self.plan: Any = None
        self.schedule: Any = None
        self.message = ""
        self.compare_rows: list[GaugeRow] = []
        self.recommended: str | None = None
        self._recommend_key: tuple | None = None
        self._recommended: str | None = None

    def compose(self) -> ComposeResult:
        with Horizontal(id="plan-top"):
            yield Static(id="plan-title")
            yield Static(id="plan-hint")
        with Horizontal(id="plan-body"):
            with VerticalScroll(id="plan-left"):
                with Vertical(id="inputs-panel", classes="panel") as p:
                    p.border_title = "inputs"
                    yield Static(id="inputs")
                with Vertical(id="figures-panel", classes="panel") as p:
                    p.border_title = "figures"
                    yield Static(id="figures")
                with Vertical(id="warnings-panel", classes="panel") as p:
                    p.border_title = "warnings"
                    yield Static(id="warnings")
            with Vertical(id="plan-right"):
                with Vertical(id="section-panel", classes="panel") as p:
                    p.border_title = "window section"
                    yield SectionView(id="plan-section")
                with Vertical(id="gauges-panel", classes="panel") as p:
                    p.border_title = "gauge comparison"
                    yield Static(id="gauges")
                    yield Static(id="gauges-note")
        yield Footer()

    def on_mount(self) -> None:
        self.replan(self.coil)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "wind":
            return self.on_wind is not None
        return True

    # ----- planning
    def replan(self, coil: Any) -> bool:
        """Plan ``coil``; on success show it and keep it, else keep the last plan and say why."""
        try:
            plan = self.planner.make_plan(coil, force=True)
            schedule = (self.planner.make_schedule(plan)
                        if self.planner.make_schedule is not None else None)
        except WinderError as err:
            self.message = f"not re-planned: {err}"
            self._show_message()
            return False
        self.coil, self.plan, self.schedule = coil, plan, schedule
        self.message = ""
        self._show()
        return True

    def compare(self) -> list[GaugeRow]:
        """Plan the same target on the neighbouring sizes of the coil's wire."""
        rows = []
        wire = self.plan.wire
        for size in neighbour_sizes(wire.size_name, self.compare_span):
            if size == wire.size_name:
                p = self.plan
            else:
                try:
                    w = self.planner.make_wire(size, wire.insulation,
                                               material=wire.material.name)
                    p = self.planner.make_plan(dataclasses.replace(self.coil, wire=w),
                                               force=True)
                except WinderError as err:
                    rows.append(GaugeRow(size, error=err.message if isinstance(err, InputError)
                                         else str(err)))
                    continue
            rows.append(GaugeRow(p.wire.size_name, p.turns, p.layers, p.fill, p.resistance_ohm,
                                 p.wire_length_m, current=size == wire.size_name,
                                 recommended=size == self.recommended))
        self.compare_rows = rows
        return rows

    def recommend(self) -> str | None:
        """The gauge chooser's pick (:func:`winder.gauges.rank_gauges`) for a resistance
        target: of the sizes in the wire's series whose target length fits, the one that
        fills the bobbin most. None for other targets or custom sizes."""
        wire, target = self.plan.wire, self.coil.target
        series = getattr(wire, "series", None)
        if target.kind != "resistance" or series not in ("awg", "metric"):
            return None
        key = (self.plan.bobbin, wire.insulation, wire.material.name, self.coil.style,
               float(target.value), series)
        if key != self._recommend_key:
            from winder.gauges import rank_gauges

            try:
                options = rank_gauges(self.plan.bobbin, float(target.value), series=series,
                                      insulation=wire.insulation, style=self.coil.style,
                                      material=wire.material.name)
            except WinderError:
                options = []
            best = [o for o in options if o.recommended]
            self._recommend_key = key
            self._recommended = best[0].size if best else None
        return self._recommended

    # ----- drawing
    def _show_message(self) -> None:
        hint = self.query_one("#plan-hint", Static)
        hint.update(Text(self.message, "bold #ff8f5f") if self.message else "")

    def _show(self) -> None:
        plan, coil, bobbin, wire = self.plan, self.coil, self.plan.bobbin, self.plan.wire
        self.query_one("#plan-title", Static).update(Text.assemble(
            ("winder ", "bold #5fd7af"), ("· plan · ", "#4a5263"), (coil.name, "bold")))
        self._show_message()
        t = Table.grid(padding=(0, 1))
        t.add_column(style="#8a94a6", no_wrap=True)
        t.add_column()
        t.add_row("coil", Text(coil.name, "bold"))
        if getattr(coil, "source", None):
            t.add_row("file", str(coil.source))
        t.add_row("bobbin", f"{bobbin.name}: {core_text(bobbin.core)}")
        t.add_row("window", f"{_mm(bobbin.window_width_m, 1)} wide x "
                            f"{_mm(bobbin.window_height_m)} high")
        t.add_row("clearance", f"{_mm(bobbin.clearance_ends_m)} each end, "
                               f"{_mm(bobbin.clearance_top_m)} at the rim")
        t.add_row("wire", Text(wire.name, "bold"))
        t.add_row("", f"bare {_um(wire.bare_m)} ± {_um(wire.bare_tol_m)}, "
                      f"overall {_um(wire.od_m)} (max {_um(wire.od_max_m)}), "
                      f"{wire.material.name}")
        t.add_row("target", Text(target_text(coil.target), "bold #ffaf5f"))
        style = coil.style
        extra = ""
        if style.kind == "scatter":
            extra = f", packing {style.packing:g}" if style.packing else ", default packing"
        t.add_row("style", Text(style.kind + extra, "bold"))
        self.query_one("#inputs", Static).update(t)

        f = Table.grid(padding=(0, 2))
        f.add_column(style="#8a94a6", no_wrap=True)
        f.add_column(justify="right", style="bold", no_wrap=True)
        f.add_column(style="#8a94a6")
        tpl = f"{plan.turns_per_layer} per layer" if plan.turns_per_layer else "scatter"
        layers = plan.layers if isinstance(plan.layers, int) else f"{float(plan.layers):.1f}"
        f.add_row("turns", f"{plan.turns:,}".replace(",", " "), tpl)
        f.add_row("layers", str(layers), "")
        f.add_row("build", _mm(plan.build_height_m),
                  f"of {_mm(bobbin.usable_height_m)} usable")
        fill_style = ("bold #ff5f5f" if plan.fill > 1 else
                      "bold #d9a440" if plan.fill >= 0.9 else "bold #5fd7af")
        f.add_row("fill", Text(f"{plan.fill * 100:.1f} %", fill_style), "of usable height")
        f.add_row("wire length", f"{plan.wire_length_m:,.1f} m".replace(",", " "),
                  f"{plan.mass_kg * 1e3:.1f} g of wire")
        lo, hi = plan.resistance_band_ohm
        f.add_row("resistance", Text(ohm_text(plan.resistance_ohm), "bold #ffaf5f"),
                  f"{band_text(lo, hi)} at 20 °C")
        if abs(plan.temp_c - 20.0) > 1e-9:
            f.add_row("", ohm_text(plan.resistance_at_temp_ohm),
                      f"at {plan.temp_c:g} °C")
        if self.schedule is not None:
            f.add_row("time", duration_text(self.schedule.est_time_s),
                      f"{len(self.schedule.passes)} passes")
        else:
            f.add_row("time", "--", "no schedule")
        self.query_one("#figures", Static).update(f)

        warnings = list(plan.warnings)
        if self.schedule is not None:
            warnings += [w for w in self.schedule.warnings if w not in warnings]
        self.query_one("#warnings", Static).update(
            Text("\n".join(f"▲ {w}" for w in warnings), "#d9a440") if warnings
            else Text("none", "#5fd7af"))
        self.query_one(SectionView).show(bobbin, float(plan.build_height_m))
        self._show_gauges()

    def _show_gauges(self) -> None:
        self.recommended = self.recommend()
        t = Table(box=None, padding=(0, 1), header_style="#8a94a6", expand=True)
        for name, just in (("wire", "left"), ("turns", "right"), ("layers", "right"),
                           ("fill", "right"), ("resistance", "right"), ("length", "right")):
            t.add_column(name, justify=just, no_wrap=True)  # type: ignore[arg-type]
        for r in self.compare():
            if r.error:
                t.add_row(r.wire, Text(r.error, "#ff8f5f"), "", "", "", "")
                continue
            style = "bold #5fd7af" if r.current else ""
            fill = r.fill if r.fill is not None else math.nan
            fill_style = "#ff5f5f" if fill > 1 else "#d9a440" if fill >= 0.9 else ""
            layers = (f"{r.layers}" if isinstance(r.layers, int)
                      else f"{float(r.layers or 0):.0f}")
            mark = ("▶" if r.current else " ") + ("★" if r.recommended else " ")
            t.add_row(Text(f"{mark}{r.wire}", style),
                      f"{r.turns:,}".replace(",", " "), layers,
                      Text(f"{fill * 100:.0f} %", fill_style),
                      ohm_text(r.resistance_ohm or 0.0, 3),
                      f"{r.length_m or 0:,.0f} m".replace(",", " "), style=style)
        self.query_one("#gauges", Static).update(t)
        over = [r for r in self.compare_rows if r.fill is not None and r.fill > 1]
        note = ("; over 100 % does not fit the usable height" if over else "")
        pick = ""
        if self.recommended:
            pick = (f"\n★ {self.recommended}: the most fill at the target resistance that "
                    "still fits (the gauge chooser's pick; see winder gauges)")
        self.query_one("#gauges-note", Static).update(Text(
            f"same target, same insulation ({self.plan.wire.insulation}), "
            f"{self.coil.style.kind} winding{note}{pick}", "#8a94a6"))

    # ----- actions
    def action_target(self) -> None:
        def done(result: object | None) -> None:
            if result is None:
                return
            kind, value = result  # type: ignore[misc]
            target = dataclasses.replace(self.coil.target, kind=kind, value=value)
            self.replan(dataclasses.replace(self.coil, target=target))

        self.app.push_screen(EntryDialog(
            "Target", "A resistance ('6.2 kohm'), a turn count ('8000 turns') or 'fill':",
            value=target_text(self.coil.target), parse=parse_target), done)

    def _wire_from(self, text: str) -> Any:
        from winder.wire import parse_wire

        size, insulation = parse_wire(text)
        return self.planner.make_wire(size, insulation or self.plan.wire.insulation,
                                      material=self.plan.wire.material.name)

    def action_wire(self) -> None:
        def done(wire: object | None) -> None:
            if wire is not None:
                self.replan(dataclasses.replace(self.coil, wire=wire))

        self.app.push_screen(EntryDialog(
            "Wire", "Size and insulation, e.g. '43 AWG heavy' or '0.056 mm grade 2':",
            value=self.plan.wire.name, parse=self._wire_from), done)

    def _step(self, thicker: bool) -> None:
        size = step_size(self.plan.wire.size_name, thicker)
        if size is None:
            self.message = "no further standard size that way"
            self._show_message()
            return
        try:
            wire = self._wire_from(f"{size} {self.plan.wire.insulation}")
        except WinderError as err:
            self.message = f"not re-planned: {err}"
            self._show_message()
            return
        self.replan(dataclasses.replace(self.coil, wire=wire))

    def action_thinner(self) -> None:
        self._step(thicker=False)

    def action_thicker(self) -> None:
        self._step(thicker=True)

    def action_style(self) -> None:
        kind = self.coil.style.kind
        nxt = STYLES[(STYLES.index(kind) + 1) % len(STYLES)] if kind in STYLES else STYLES[0]
        self.replan(dataclasses.replace(self.coil,
                                        style=dataclasses.replace(self.coil.style, kind=nxt)))

    def action_wind(self) -> None:
        if self.on_wind is None:
            return
        if self.plan.fill > 1.0:
            self.message = "the build passes the usable height: change target, wire or style"
            self._show_message()
            return
        self.on_wind(self.coil, self.plan, self.schedule)
