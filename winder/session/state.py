"""The session state rebuilt from the journal, one event at a time.

:func:`rebuild` folds :func:`SessionState.apply` over replayed events; the
live runner applies each event it journals to the same object, so what a host
shows while winding and what a later replay shows are the same thing.

States: ``running`` (winding or ready to wind), ``paused``, ``finished``,
``aborted``; a journal that ends ``running`` with no live host holding the
session lock is reported as ``interrupted`` (:func:`effective_state`).

Interruptions (``SessionState.interruptions``, dicts) have ``kind`` one of
``host_lost`` (the host stopped journaling while winding: crash, kill, power
cut; closed by the next ``resumed``), ``host_stopped`` (a clean stop by signal
or quit), ``link_lost`` (closed by ``link_back``), ``device_rebooted``,
``wire_break`` and ``fault``; with ``turns`` (count when it began),
``t_start``/``t_end`` (epoch s), ``duration_s`` and, where known,
``turns_after`` and ``unaccounted_turns``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from winder.errors import InputError
from winder.session.calibration import Calibrator, Estimate, Reading, ResistanceCurve

STATES = ("running", "paused", "finished", "aborted", "interrupted")


@dataclass
class SessionState:
    """Everything known about a session from its journal. Turns, ohm, degC, epoch s."""

    session: str = ""
    format: int = 1
    coil: str = ""
    planned_turns: float = 0.0
    stop_turns: float = 0.0
    target: dict[str, Any] = field(default_factory=dict)
    turns: float = 0.0
    rpm: float = 0.0
    state: str = "running"
    reason: str = ""
    boot_id: str | None = None
    boot_ids: list[str] = field(default_factory=list)
    machine: dict[str, Any] = field(default_factory=dict)
    device: dict[str, Any] = field(default_factory=dict)
    readings: list[dict[str, Any]] = field(default_factory=list)
    interruptions: list[dict[str, Any]] = field(default_factory=list)
    stop_changes: list[dict[str, Any]] = field(default_factory=list)
    corrections: list[dict[str, Any]] = field(default_factory=list)
    notes: list[dict[str, Any]] = field(default_factory=list)
    splices: int = 0
    started_t: float | None = None
    last_t: float | None = None
    winding_s: float = 0.0
    events: int = 0
    link_down: bool = False
    curve: ResistanceCurve | None = None
    host_runs: int = 0

    # ---- folding -----------------------------------------------------------------
    def apply(self, ev: dict[str, Any]) -> None:
        """Update from one journal event (unknown kinds are counted and ignored)."""
        kind = ev.get("kind")
        t = float(ev.get("t") or 0.0)
        if kind == "checkpoint" and self.last_t is not None:   # the common case, inlined
            if self.state == "running" and not self.link_down and t > self.last_t:
                self.winding_s += t - self.last_t
            turns = ev.get("turns")
            if type(turns) is float or type(turns) is int:
                self.turns = float(turns)
            self.rpm = float(ev.get("rpm") or 0.0)
            self.last_t = t
            self.events += 1
            return
        prev_t = self.last_t
        if (prev_t is not None and self.state == "running" and not self.link_down
                and kind != "resumed"):
            self.winding_s += max(0.0, t - prev_t)
        moves = kind not in ("started", "reading", "note", "target_changed", "torn_line") \
            and isinstance(ev.get("turns"), (int, float))
        if moves and kind != "resumed":  # resumed compares against the count before it
            self.turns = float(ev["turns"])
        handler = getattr(self, f"_on_{kind}", None)
        if handler is not None:
            handler(ev, t)
        if moves and kind == "resumed":
            self.turns = float(ev["turns"])
        self.last_t = t
        self.events += 1

    def _on_started(self, ev, t):
        self.session = str(ev.get("session", ""))
        self.format = int(ev.get("format", 1))
        self.coil = str(ev.get("coil", ""))
        self.planned_turns = float(ev.get("planned_turns") or 0.0)
        self.stop_turns = float(ev.get("stop_turns") or self.planned_turns)
        self.target = dict(ev.get("target") or {})
        self.machine = dict(ev.get("machine") or {})
        self.device = dict(ev.get("device") or {})
        self.boot_id = self.device.get("boot_id")
        if self.boot_id:
            self.boot_ids.append(self.boot_id)
        curve = ev.get("curve")
        if curve:
            try:
                self.curve = ResistanceCurve.from_pairs(curve)
            except (ValueError, TypeError):
                self.curve = None
        self.turns = float(ev.get("turns") or 0.0)
        self.started_t = t
        self.host_runs = 1

    def _on_checkpoint(self, ev, t):
        self.rpm = float(ev.get("rpm") or 0.0)

    def _on_reading(self, ev, t):
        self.readings.append({"turns": float(ev.get("turns", self.turns)),
                              "ohm": float(ev["ohm"]), "temp_c": ev.get("temp_c"),
                              "note": ev.get("note", ""), "source": ev.get("source", "user"),
                              "t": t})

    def _on_paused(self, ev, t):
        reason = str(ev.get("reason", "user"))
        self.state = "paused"
        self.reason = reason
        self.rpm = 0.0
        if reason.startswith("signal") or reason in ("quit", "host"):
            self._open("host_stopped", t, reason=reason)
        elif reason not in ("user", "pedal", "reading", "link"):
            self._open("fault", t, reason=reason)

    def _on_continued(self, ev, t):
        self.state = "running"
        self._close(t, "fault")

    def _on_link_lost(self, ev, t):
        self.link_down = True
        self.rpm = 0.0
        self._open("link_lost", t, reason=str(ev.get("reason", "")))

    def _on_link_back(self, ev, t):
        self.link_down = False
        it = self._close(t, "link_lost")
        if it is not None:
            it["rebooted"] = bool(ev.get("rebooted", False))
            if isinstance(ev.get("turns"), (int, float)):
                it["turns_after"] = float(ev["turns"])

    def _on_device_rebooted(self, ev, t):
        new = ev.get("boot_id")
        if new:
            self.boot_id = str(new)
            if not self.boot_ids or self.boot_ids[-1] != self.boot_id:
                self.boot_ids.append(self.boot_id)
        self.interruptions.append({
            "kind": "device_rebooted", "turns": float(ev.get("turns", self.turns)),
            "t_start": t, "t_end": t, "duration_s": 0.0,
            "unaccounted_turns": ev.get("unaccounted_turns"),
            "boot_id": new, "old_boot_id": ev.get("old_boot_id")})

    def _on_wire_break(self, ev, t):
        self.state = "paused"
        self.reason = "wire_break"
        self.rpm = 0.0
        self._open("wire_break", t, note=ev.get("note", ""))

    def _on_splice(self, ev, t):
        self.splices += 1
        self._close(t, "wire_break")

    def _on_note(self, ev, t):
        self.notes.append({"t": t, "turns": ev.get("turns", self.turns),
                           "text": ev.get("text", "")})

    def _on_target_changed(self, ev, t):
        if isinstance(ev.get("stop_turns"), (int, float)):
            self.stop_turns = float(ev["stop_turns"])
        self.stop_changes.append({k: ev.get(k) for k in
                                  ("t", "stop_turns", "reason", "target_ohm", "ratio")})

    def _on_count_corrected(self, ev, t):
        self.corrections.append({k: ev.get(k) for k in
                                 ("t", "turns", "old_turns", "reason", "ohm")})

    def _on_resumed(self, ev, t):
        self.host_runs += 1
        last_turns = self.turns
        if self.state == "running":
            # the previous host stopped journaling while winding
            self.interruptions.append({"kind": "host_lost", "turns": last_turns,
                                       "t_start": self.last_t, "t_end": t,
                                       "duration_s": t - (self.last_t or t)})
        it = self._close(t, "host_stopped")
        if it is None and self.interruptions and self.interruptions[-1]["kind"] == "host_lost":
            it = self.interruptions[-1]
        if it is not None:
            dev = ev.get("device_turns")
            if isinstance(dev, (int, float)):
                it["turns_after"] = float(dev)
            it["same_boot"] = ev.get("same_boot")
        if self.link_down:
            self.link_down = False
            self._close(t, "link_lost")
        new = ev.get("boot_id")
        if new and new != self.boot_id:
            self.boot_id = str(new)
            self.boot_ids.append(self.boot_id)
        if self.state not in ("finished", "aborted"):
            self.state = "running" if ev.get("state", "running") == "running" else "paused"

    def _on_finished(self, ev, t):
        self.state = "finished"
        self.reason = str(ev.get("reason", ""))
        self.rpm = 0.0
        self._close_all(t)

    def _on_aborted(self, ev, t):
        self.state = "aborted"
        self.reason = str(ev.get("reason", ""))
        self.rpm = 0.0
        self._close_all(t)

    # ---- interruption bookkeeping ---------------------------------------------------
    def _open(self, kind: str, t: float, **extra) -> None:
        self.interruptions.append({"kind": kind, "turns": self.turns, "t_start": t,
                                   "t_end": None, "duration_s": None, **extra})

    def _close(self, t: float, kind: str) -> dict | None:
        for it in reversed(self.interruptions):
            if it["kind"] == kind and it["t_end"] is None:
                it["t_end"] = t
                it["duration_s"] = t - it["t_start"]
                return it
        return None

    def _close_all(self, t: float) -> None:
        for it in self.interruptions:
            if it["t_end"] is None:
                it["t_end"] = t
                it["duration_s"] = t - it["t_start"]

    # ---- derived ----------------------------------------------------------------------
    @property
    def reading_objects(self) -> list[Reading]:
        return [Reading(r["turns"], r["ohm"], r["temp_c"], r.get("note", ""))
                for r in self.readings]

    @property
    def target_ohm(self) -> float | None:
        if self.target.get("kind") == "resistance" and self.target.get("value"):
            return float(self.target["value"])
        return None

    def calibrator(self) -> Calibrator | None:
        if self.curve is None:
            return None
        return Calibrator(self.curve, self.curve.turns_for)

    def estimate(self) -> Estimate | None:
        """The calibration from the readings so far (None without readings or curve)."""
        cal = self.calibrator()
        if cal is None:
            return None
        return cal.estimate(self.reading_objects, self.stop_turns, self.target_ohm)

    def predicted_ohm(self, turns: float | None = None) -> float | None:
        """The plan's (uncalibrated) 20 C resistance at ``turns`` (default: stop point)."""
        if self.curve is None:
            return None
        return self.curve(self.stop_turns if turns is None else turns)

    @property
    def duration_s(self) -> float:
        if self.started_t is None or self.last_t is None:
            return 0.0
        return self.last_t - self.started_t


def rebuild(events: list[dict[str, Any]]) -> SessionState:
    """The state after all ``events`` (from :func:`winder.session.journal.replay`)."""
    st = SessionState()
    for i, ev in enumerate(events):
        try:
            st.apply(ev)
        except (TypeError, ValueError, KeyError, AttributeError) as err:
            # valid JSON with a field of the wrong type or missing (bit rot, hand edits)
            raise InputError(f"journal line {i + 1} ({str(ev.get('kind'))[:20]!r} event) has a "
                             f"damaged field ({type(err).__name__}: {str(err)[:80]})",
                             where="journal.jsonl") from None
    return st


def effective_state(state: SessionState, session_dir: Path | None) -> str:
    """``state.state``, except a ``running`` journal with no live host is ``interrupted``."""
    if state.state == "running":
        from winder.session.store import SessionLock

        if session_dir is None or not SessionLock.held_elsewhere(session_dir):
            return "interrupted"
    return state.state
