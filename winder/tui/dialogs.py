"""Modal screens: the safety caution, the resistance reading and a one-line entry.

Dialogs parse what is typed with :mod:`winder.units` and refuse bad input with
the parser's one-line message, keeping the dialog open so the user can correct
it. They return their result through ``dismiss``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from winder.errors import InputError
from winder.tui.progress import ohm_text
from winder.units import parse_resistance, parse_temperature

# A bench reading: ambient and hand-warm coils. Outside this the entry is a typo
# or the coil needs to cool (common practice, no source).
READING_TEMP_RANGE_C = (-10.0, 80.0)
READING_MAX_OHM = 100e6    # beyond any coil this tool plans (and most bench meters)
PLAUSIBLE_RATIO = 2.0      # a reading off the model by more than this asks to confirm

CAUTION_TEXT = """\
[b]The spindle is about to turn under motor power.[/b]

 • A moving spindle and traverse catch hair, sleeves, cords and jewellery:
   tie back long hair, roll up sleeves, keep fingers clear while it turns.
 • Fine wire under tension cuts skin and can whip when it breaks; heavier
   wire springs back. Never tension wire by wrapping it round a finger.
 • Wear eye protection.
 • Keep a hardware stop within reach. [b]x[/b] stops the motor, [b]q[/b] stops it
   and quits; a firmware or wiring fault can still leave it running.

Where your equipment's documentation, local codes or workshop practice say
more, follow them."""


class CautionScreen(ModalScreen[bool]):
    """The safety caution, shown before the first motor run; dismisses True when acknowledged."""

    BINDINGS = [
        Binding("y", "accept", "I understand, start"),
        Binding("escape,n", "decline", "Not yet"),
    ]

    def compose(self) -> ComposeResult:
        with Vertical(id="caution-box", classes="dialog"):
            yield Static("⚠  Before the motor runs", id="caution-title")
            yield Static(CAUTION_TEXT, id="caution-text")
            with Horizontal(classes="buttons"):
                yield Button("I understand, start (y)", id="caution-yes", variant="warning")
                yield Button("Not yet (n)", id="caution-no")

    def on_mount(self) -> None:
        self.query_one("#caution-no", Button).focus()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        self.dismiss(event.button.id == "caution-yes")

    def action_accept(self) -> None:
        self.dismiss(True)

    def action_decline(self) -> None:
        self.dismiss(False)


@dataclass(frozen=True)
class ReadingEntry:
    """A reading as typed and parsed: ohm, degC."""

    ohm: float
    temp_c: float


def check_reading(resistance_text: str, temp_text: str,
                  expected_ohm: float | None = None) -> tuple[ReadingEntry, str | None]:
    """Parse and range-check a typed reading.

    Returns the entry and a caution (a reading far from ``expected_ohm``, which
    the user must confirm) or raises :class:`InputError` for input to refuse.
    """
    ohm = parse_resistance(resistance_text.strip(), where="reading", key="resistance",
                           maximum=READING_MAX_OHM)
    temp_text = temp_text.strip() or "20 degC"
    temp_c = parse_temperature(temp_text, where="reading", key="temperature")
    lo, hi = READING_TEMP_RANGE_C
    if not lo <= temp_c <= hi:
        raise InputError(f"{temp_text!r} is outside {lo:g} to {hi:g} degC; measure the "
                         "coil at room temperature", where="reading", key="temperature")
    caution = None
    if expected_ohm and expected_ohm > 0:
        ratio = ohm / expected_ohm
        if ratio > PLAUSIBLE_RATIO or ratio < 1 / PLAUSIBLE_RATIO:
            caution = (f"{ohm_text(ohm)} is {ratio:.2g} x the "
                       f"{ohm_text(expected_ohm)} expected here: check the unit "
                       "and the meter leads; press Log again to record it anyway")
    return ReadingEntry(ohm, temp_c), caution


class ReadingDialog(ModalScreen["ReadingEntry | None"]):
    """Ask for a resistance reading and its temperature; refuse bad input and ask again.

    ``now()`` gives (turns, expected ohm or None) at this moment: the reading is
    journaled at the count when Log is pressed, and the plausibility check uses the
    resistance expected then (the count goes on while the motor runs).
    """

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, *, now: Callable[[], tuple[float, float | None]],
                 last_temp: str = "20 degC"):
        super().__init__()
        self.now = now
        self.last_temp = last_temp
        self._confirm: tuple[str, str] | None = None

    @property
    def turns(self) -> float:
        return self.now()[0]

    @property
    def expected_ohm(self) -> float | None:
        return self.now()[1]

    def _head(self) -> str:
        turns, expected = self.now()
        head = f"Resistance reading · count now {turns:,.0f} turns".replace(",", " ")
        if expected:
            head += f" · expected about {ohm_text(expected, 3)}"
        return head

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog", id="reading-box"):
            yield Static(self._head(), classes="dialog-title", id="reading-head")
            yield Static("Journaled at the count when you press Log; pause (space) first "
                         "for a steady reading.", classes="dialog-hint")
            yield Label("Resistance (e.g. '5.92 kohm', '7.9 ohm')")
            yield Input(placeholder="5.92 kohm", id="reading-ohm")
            yield Label("Coil temperature (e.g. '23 degC')")
            yield Input(value=self.last_temp, id="reading-temp")
            yield Static("", id="reading-error")
            with Horizontal(classes="buttons"):
                yield Button("Log", id="reading-log", variant="primary")
                yield Button("Cancel", id="reading-cancel")

    def _tick(self) -> None:
        self.query_one("#reading-head", Static).update(self._head())

    def on_mount(self) -> None:
        self.query_one("#reading-ohm", Input).focus()
        self.set_interval(0.25, self._tick, name="reading-head")

    def _error(self, text: Text) -> None:
        self.query_one("#reading-error", Static).update(text)

    def submit(self) -> None:
        """Parse the entries; dismiss with the reading, or show why not and stay open."""
        typed_ohm = self.query_one("#reading-ohm", Input).value
        temp_text = self.query_one("#reading-temp", Input).value
        try:
            entry, caution = check_reading(typed_ohm, temp_text, self.now()[1])
        except InputError as err:
            self._confirm = None
            self._error(Text.assemble(("Not logged: ", "bold red"), err.message))
            self.query_one("#reading-ohm", Input).focus()
            return
        if caution and self._confirm != (typed_ohm, temp_text):
            self._confirm = (typed_ohm, temp_text)
            self._error(Text.assemble(("Check: ", "bold yellow"), caution))
            return
        self.dismiss(entry)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.submit()          # Enter in either field logs (Tab moves between them)

    def on_button_pressed(self, event: Button.Pressed) -> None:
        if event.button.id == "reading-log":
            self.submit()
        else:
            self.dismiss(None)

    def action_cancel(self) -> None:
        self.dismiss(None)


class EntryDialog(ModalScreen["object | None"]):
    """One line of input checked by ``parse`` (which raises InputError to refuse)."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, title: str, hint: str, *, value: str = "", placeholder: str = "",
                 parse: Callable[[str], object] = str):
        super().__init__()
        self.title_text, self.hint, self.value = title, hint, value
        self.placeholder, self.parse = placeholder, parse

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog", id="entry-box"):
            yield Static(self.title_text, classes="dialog-title")
            yield Label(self.hint)
            yield Input(value=self.value, placeholder=self.placeholder, id="entry-input")
            yield Static("", id="entry-error")
            with Horizontal(classes="buttons"):
                yield Button("OK", id="entry-ok", variant="primary")
                yield Button("Cancel", id="entry-cancel")

    def on_mount(self) -> None:
        self.query_one("#entry-input", Input).focus()

    def submit(self) -> None:
        text = self.query_one("#entry-input", Input).value
        try:
            result = self.parse(text)
        except InputError as err:
            self.query_one("#entry-error", Static).update(
                Text.assemble(("Not accepted: ", "bold red"), err.message))
            return
        self.dismiss(result)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.submit()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        if event.button.id == "entry-ok":
            self.submit()
        else:
            self.dismiss(None)

    def action_cancel(self) -> None:
        self.dismiss(None)
