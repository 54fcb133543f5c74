"""The monitor's control over a real winding: the session runner on its own thread.

:class:`RunnerControl` implements :class:`~winder.tui.feed.WindControl` over a
:class:`winder.session.runner.Runner` and an open link. One thread (the
*runner thread*, ``winder-runner``) does everything that talks to the link:
it calls ``Runner.start`` / ``Runner.resume`` when the user has acknowledged
the caution, then ``Runner.poll`` in a loop, and after each poll publishes the
count, speed, guide position, run and link state into the :class:`Feed`. The
runner's updates (readings, link loss, reboots, faults, pauses) become log
lines and readings in the feed. The UI thread only queues actions.

Closing stops the motor first (``Runner.halt`` on the runner thread: the link
stops the spindle and the journal records a resumable pause), then closes the
link (which commands a halt again) and the session. If the runner thread does
not finish the halt within :data:`CLOSE_TIMEOUT_S`, the closing thread sends
the stop itself.
"""

from __future__ import annotations

import math
import queue
import threading
import time
from collections.abc import Callable
from typing import Any

from winder.errors import WinderError
from winder.tui.feed import Feed

CLOSE_TIMEOUT_S = 5.0
POLL_S = 0.05           # runner poll period: the feed is refreshed at up to 20 Hz

LOG_KINDS = {
    "reading": "reading", "estimate": "reading", "stop_proposed": "warn",
    "stop_changed": "info", "link_lost": "link", "link_back": "link", "rebooted": "link",
    "fault": "error", "paused": "warn", "continued": "info", "finished": "info",
    "aborted": "warn", "stopped": "warn", "info": "info", "warn": "warn", "error": "error",
}


class RunnerControl:
    """A :class:`WindControl` that drives a session runner on a worker thread.

    ``make_runner(on_update)`` builds the :class:`Runner` (on the session and link,
    sharing the link's event queue); ``begin(runner)`` starts it (``runner.start``
    for a new session, ``runner.resume(...)`` to resume) and runs on the runner
    thread once the monitor calls :meth:`start`. ``guide_offset_mm`` is the machine
    position of the start flange (device guide positions are machine millimetres;
    the monitor shows window millimetres). ``on_closed`` callbacks run after
    the link and session are closed (the demo stops its simulator there).
    """

    def __init__(self, *, link: Any, session: Any, make_runner: Callable[..., Any],
                 begin: Callable[[Any], Any], traverse: bool = True,
                 guide_offset_mm: float = 0.0,
                 clock: Callable[[], float] = time.time,
                 on_closed: list[Callable[[], None]] | None = None):
        self.feed = Feed(clock=clock)
        self.link = link
        self.session = session
        self.make_runner = make_runner
        self.begin = begin
        self.traverse = traverse
        self.guide_offset_mm = guide_offset_mm
        self.on_closed = list(on_closed or [])
        self.runner = make_runner(self._on_update)
        self.motor = bool(self.runner.motor)
        self.started = False
        self.link_state = "connected" if getattr(link, "connected", True) else "reconnecting"
        self._jobs: queue.Queue[Callable[[], None]] = queue.Queue()
        self._closing: str | None = None
        self._closed = threading.Event()
        self._done_close = False
        for r in session.state.readings:     # a resumed session: readings so far
            self.feed.reading(float(r["turns"]), float(r["ohm"]), float(r.get("temp_c") or 20.0))
        self._publish()
        self.thread = threading.Thread(target=self._loop, name="winder-runner", daemon=True)
        self.thread.start()

    # ----- runner thread
    def _loop(self) -> None:
        try:
            while self._closing is None:
                self._run_jobs()
                if self.started and not self.runner.done:
                    self.runner.poll(POLL_S)
                else:
                    if self.started:
                        self.runner.poll(0.0)    # actions still apply (a final reading)
                    self._drain(POLL_S)
                self._publish()
        except Exception as err:  # noqa: BLE001 - anything here must still stop the motor
            self.feed.log(f"runner stopped by an error: {err!r}", "error")
        finally:
            self._halt(self._closing or "runner error")
            self._publish()
            self._closed.set()

    def _run_jobs(self) -> None:
        while True:
            try:
                job = self._jobs.get_nowait()
            except queue.Empty:
                return
            try:
                job()
            except WinderError as err:
                self.feed.log(str(err), "error")

    def _drain(self, timeout: float) -> None:
        """Consume link events while the runner is not polling (before start, after the end)."""
        deadline = time.monotonic() + timeout
        while True:
            left = deadline - time.monotonic()
            try:
                ev = self.runner.events.get(timeout=left) if left > 0 else \
                    self.runner.events.get_nowait()
            except queue.Empty:
                return
            name = type(ev).__name__
            if name == "LinkLost":
                self.link_state = "reconnecting"
                self.feed.log(f"link lost ({ev.reason})", "link")
            elif name == "LinkRestored":
                self.link_state = "rebooted" if ev.rebooted else "connected"
                self.feed.log("link back" + (" (device restarted)" if ev.rebooted else ""),
                              "link")

    def _halt(self, reason: str) -> None:
        try:
            self.runner.halt(reason)
        except WinderError as err:
            self.feed.log(f"stop: {err}", "error")

    def _on_update(self, u: Any) -> None:   # runner thread
        kind = u.kind
        if kind == "progress":
            return
        if kind == "link_lost":
            self.link_state = "reconnecting"
        elif kind == "link_back":
            self.link_state = "connected"
        elif kind == "rebooted":
            self.link_state = "rebooted"
        if kind == "reading" and "ohm" in u.data:
            t = u.data.get("temp_c")
            self.feed.reading(float(u.data.get("turns", 0.0)), float(u.data["ohm"]),
                              20.0 if t is None else float(t))
        self.feed.log(u.text, LOG_KINDS.get(kind, "info"))

    def _publish(self) -> None:
        r = self.runner
        st = getattr(self.link, "status", None)
        rpm = float(getattr(st, "rpm", 0.0) or 0.0) if st is not None else 0.0
        if not math.isfinite(rpm):
            rpm = 0.0
        guide = getattr(st, "guide_mm", None) if (st is not None and self.traverse) else None
        if guide is not None:
            guide = float(guide) - self.guide_offset_mm   # machine -> window coordinates
            if not math.isfinite(guide):
                guide = None
        sess = self.session.state.state
        if not self.started:
            state = "idle"
        elif r.done:
            state = {"finished": "done", "aborted": "stopped"}.get(sess, "stopped")
        elif sess == "paused" or r.waiting:
            state = "paused"
        else:
            state = "running"
        link = self.link_state
        if self._done_close:
            link = "offline"
        elif not getattr(self.link, "connected", True):
            link = "reconnecting"
        faults = tuple(sorted(getattr(st, "faults", ()) or ())) if st is not None else ()
        self.feed.status(turns=float(r.turns), rpm=rpm if state == "running" else 0.0,
                         guide_mm=guide, state=state, link=link,
                         stop_turns=float(r.stop_turns) or None, faults=faults)

    # ----- WindControl (UI thread)
    def start(self) -> None:
        """Begin (after the caution) or continue."""
        if not self.started:
            def job() -> None:
                self.started = True
                self.begin(self.runner)
            self._jobs.put(job)
        else:
            self.resume()

    def resume(self) -> None:
        if not self.started:
            self.start()
        elif self.runner.done:
            if self.session.state.state != "paused":
                self.feed.log(f"the session is {self.session.state.state}; nothing to continue",
                              "warn")
                return

            def job() -> None:     # after a stop: a fresh runner resumes the session
                self.runner = self.make_runner(self._on_update)
                self.runner.resume()
            self._jobs.put(job)
        else:
            self.runner.cont()

    def pause(self) -> None:
        self.runner.pause("user")

    def stop(self) -> None:
        """Stop the motor now; the journal keeps a resumable pause (space continues)."""
        if not self.started:
            return
        self.runner.stop("stop key")

    def log_reading(self, ohm: float, temp_c: float) -> None:
        if not self.started:
            self.feed.log("start winding first (space); readings are journaled at the count",
                          "warn")
            return
        self.runner.reading(ohm, temp_c)

    def mark(self, kind: str, text: str = "") -> None:
        if kind == "break":
            self.runner.wire_break(text)
        elif kind == "splice":
            self.runner.splice(text)
        else:
            self.runner.note(text)

    def accept_stop(self) -> None:
        self.runner.accept_stop()

    def close(self, reason: str = "quit") -> None:
        """Stop the motor, journal, close the link and the session. Idempotent."""
        if self._done_close:
            return
        self._closing = reason
        if not self._closed.wait(CLOSE_TIMEOUT_S):
            # The runner thread is stuck (a command waiting on a dead link): stop from here.
            try:
                self.link.stop()
            except WinderError:
                pass
        self._done_close = True
        try:
            self.link.close()
        finally:
            try:
                self.session.close()
            finally:
                for fn in self.on_closed:
                    fn()
        self._publish()
