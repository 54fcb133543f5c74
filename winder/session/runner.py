"""The winding runner: link events in, session state and journal writes out.

:class:`Runner` owns the policy of a winding session and nothing of its
presentation: it never prints. A front end (the headless ``winder wind`` /
``winder resume`` loop, or the terminal UI) gives it an open link and a
session, calls :meth:`Runner.start` or :meth:`Runner.resume`, then calls
:meth:`Runner.poll` repeatedly from one thread (the *runner thread*), and
receives :class:`Update` objects through ``on_update`` (called on the runner
thread) to show however it likes.

Thread rules: the link delivers its events into :attr:`Runner.events` (pass
it to ``WinderLink(events=...)``); link commands are sent only from the
runner thread. User actions (:meth:`pause`, :meth:`cont`, :meth:`reading`,
:meth:`note`, :meth:`wire_break`, :meth:`splice`, :meth:`accept_stop`,
:meth:`correct_count`, :meth:`stop`, :meth:`abort`) may be called from any
thread: they are queued and carried out by the next :meth:`poll`.

Machines:

* **controller** (device capability ``spindle``): the runner queues the
  schedule's passes (from the current turn count, the current pass and guide
  position, as many as the device queue takes), keeps the queue topped up,
  and finishes when the device has run the queue out at the stop point.
* **counter** (no ``spindle``): the maker turns the spindle; the runner follows
  the count, says which pass and guide position the count is at, and records
  ``finished`` the moment the count reaches the stop point (nothing is
  journaled after that).

Safety: the motor stops on link loss (device watchdog), on :meth:`stop`,
:meth:`abort` and :meth:`close`; after a link loss or a device reboot the
runner waits for :meth:`cont` unless ``auto_continue`` is set.

Stop at resistance (``stop_at_resistance``, needs a resistance target and a
device with capability ``ohm``): the runner winds to milestones at
:data:`MILESTONES` of the current stop estimate, measures with the spindle
stopped, updates the calibration (:mod:`.calibration`) and moves the stop point
to the estimated turn count of the target (journaled as ``target_changed``),
then winds the rest and takes a final reading.
"""

from __future__ import annotations

import math
import queue
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, Protocol

from winder.errors import InputError, WinderError
from winder.session.calibration import Reading
from winder.session.journal import CheckpointPolicy
from winder.session.session import Session

MILESTONES = (0.5, 0.8, 0.9, 0.95, 0.98)
MAX_STOP_FACTOR = 1.25      # the stop point never moves past 1.25 x the planned turns
READING_TIMEOUT_S = 3.0
SETTLE_TIMEOUT_S = 15.0
TOP_UP_BUDGET_S = 0.2   # sending passes while winding yields to statuses after this
STALE_STATUS_S = 0.5    # a status older than this (a backlog) does not start a top-up


class LinkLike(Protocol):
    """What the runner needs of :class:`winder.link.WinderLink`."""

    info: Any
    turns: float
    counts: int
    connected: bool

    def zero(self) -> None: ...
    def preload(self, counts: int) -> None: ...
    def queue_pass(self, start_mm: float, end_mm: float, turns: float, rpm: float) -> None: ...
    def go(self) -> None: ...
    def pause(self) -> None: ...
    def stop(self) -> None: ...
    def clear(self) -> None: ...
    def measure(self) -> None: ...
    def close(self) -> None: ...


@dataclass(frozen=True)
class Update:
    """Something for a front end to show. ``kind`` names it; ``text`` is one line.

    Kinds: ``progress`` (data: turns, stop_turns, rpm, pass_index, passes,
    guide_mm, eta_s, predicted_ohm), ``reading``, ``estimate``, ``stop_proposed``,
    ``stop_changed``, ``link_lost``, ``link_back``, ``rebooted``, ``fault``,
    ``paused``, ``continued``, ``finished``, ``aborted``, ``stopped``,
    ``info``, ``warn``, ``error``.
    """

    kind: str
    text: str
    data: dict[str, Any] = field(default_factory=dict)


@dataclass
class Segment:
    """A piece of a pass as sent to the device: machine mm, turns, rpm."""

    start_mm: float
    end_mm: float
    turns: float
    rpm: float
    end_turns: float     # cumulative turns at its end


@dataclass(frozen=True)
class Reconciliation:
    """What :meth:`Runner.resume` found. Turns."""

    journal_turns: float
    device_turns: float
    same_boot: bool
    turns: float                       # the count the session continues from
    unaccounted_turns: float           # upper bound (0 when the count was adopted)
    suggested_turns: float | None = None   # from a fresh reading, if one was given
    suggested_pm: float | None = None      # its +/- (one standard deviation), turns


class Runner:
    """One winding session driven over one link. See the module docstring."""

    def __init__(self, session: Session, link: LinkLike, *, schedule: Any | None = None,
                 machine: Any | None = None, stop_at_resistance: bool = False,
                 auto_continue: bool = False, policy: CheckpointPolicy | None = None,
                 on_update: Callable[[Update], None] | None = None,
                 ambient_c: float | None = None,
                 summary_every_s: float = 5.0, measure_fractions: tuple[float, ...] = (
                     0.25, 0.5, 0.75),
                 clock: Callable[[], float] = time.time, events: queue.Queue | None = None):
        self.session = session
        self.link = link
        self.schedule = schedule
        self.machine = machine
        self.stop_at_resistance = stop_at_resistance
        self.auto_continue = auto_continue
        self.policy = policy or CheckpointPolicy()
        self.on_update = on_update
        self.summary_every_s = summary_every_s
        self.ambient_c = ambient_c      # degC given to device readings (None = 20 C)
        self.measure_fractions = measure_fractions
        self.clock = clock
        self.events: queue.Queue = events if events is not None else queue.Queue(maxsize=10000)
        self._actions: queue.Queue = queue.Queue()
        self.done = False
        self.waiting = False            # waiting for the user to continue
        self.status: Any = None
        self._pending: list[Segment] = []
        self._queued_end: float | None = None   # cumulative turns the device queue ends at
        self._segment_goal: float | None = None  # where the current run of segments ends
        self._last_summary = 0.0
        self._last_status_t = 0.0
        self._last_rpm = 0.0
        self._measured_at: set[float] = set()
        self._milestone_i = 0
        self._want_reading: str | None = None   # reason a device reading is awaited
        self._reading_deadline = 0.0
        self._proposed_stop: float | None = None
        self._finishing = False
        self._fresh_after = 0.0
        self._resync = False     # a pass went unacknowledged: the device queue is unknown
        self._queue_unknown = False   # a HALT went unacknowledged
        self._queue_t = 0.0
        self._queued_guess = 0
        self._started_run = False
        st = session.state
        check_stop_at_resistance(stop_at_resistance, st.target_ohm, self.caps)

    # ---- capabilities -----------------------------------------------------------------
    @property
    def caps(self) -> frozenset[str]:
        info = getattr(self.link, "info", None)
        return frozenset(getattr(info, "capabilities", ()) or ())

    @property
    def motor(self) -> bool:
        """True when the device drives the spindle (a caution is due before it runs)."""
        return "spindle" in self.caps

    @property
    def can_measure(self) -> bool:
        return "ohm" in self.caps

    @property
    def state(self):
        return self.session.state

    @property
    def turns(self) -> float:
        """The live count: the latest device status, else the journal's last count."""
        if self.status is not None and not self.session.state.link_down:
            return float(self.status.turns)
        return self.session.state.turns

    @property
    def stop_turns(self) -> float:
        return self.session.state.stop_turns

    def _emit(self, kind: str, text: str, **data: Any) -> None:
        if self.on_update is not None:
            self.on_update(Update(kind, text, data))

    def _record(self, kind: str, **data: Any) -> dict:
        ev = self.session.record(kind, **data)
        if kind not in ("checkpoint",):
            self._summary(force=True)
        return ev

    def _summary(self, force: bool = False) -> None:
        now = time.monotonic()
        if force or now - self._last_summary >= self.summary_every_s:
            self._last_summary = now
            self.session.write_summary()

    def _cpr(self) -> int:
        return int(getattr(getattr(self.link, "info", None), "counts_per_rev", 1) or 1)

    # ---- start and resume -------------------------------------------------------------
    def start(self) -> None:
        """Begin a new session: zero the count, then wind (motor) or follow (counter)."""
        self.link.zero()
        self._emit("info", "count zeroed; " + ("winding starts" if self.motor else
                   "turn the spindle: winder follows the count"))
        self.policy.mark(0.0, self.clock())
        self._begin_run()

    def resume(self, reading: Reading | None = None,
               accept_correction: bool = False) -> Reconciliation:
        """Reconcile the journal with the device after any interruption, then go on.

        Same boot id: the device's count is adopted (turns made while the host was
        down are kept). Another boot id: the device is preloaded with the last
        journaled count and the upper bound of unaccounted turns is reported;
        ``reading`` (a fresh resistance reading) yields a suggested count, applied
        when ``accept_correction``.
        """
        st = self.session.state
        if st.state in ("finished", "aborted"):
            raise InputError(f"session {self.session.id} is already {st.state}",
                             where="SESSION")
        info = self.link.info
        boot = getattr(info, "boot_id", "") or ""
        wait_for = getattr(self.link, "wait_for", None)
        if wait_for is not None:   # the count is known once the first status arrived
            try:
                wait_for(lambda s: True, 3.0)
            except WinderError as err:
                raise InputError(f"the device sent no status after connecting ({err})",
                                 where="--port") from None
        device_turns = float(self.link.turns)
        journal_turns = st.turns
        same = bool(boot) and boot == st.boot_id
        if not boot and device_turns >= journal_turns:
            same = True   # a device without boot ids: trust a count that did not go back
        if self.motor:
            self._clear_device()               # left-over queue and latched faults
        if same:
            turns = device_turns
            unacc = 0.0
            self._record("resumed", turns=turns, device_turns=device_turns, boot_id=boot,
                         same_boot=True, journal_turns=journal_turns, state="paused")
            gained = turns - journal_turns
            self._emit("info", f"same device boot: adopted its count {turns:g} "
                       f"({gained:+g} turns since the last journal entry)")
        else:
            unacc = self._unaccounted_after_host_loss()
            self._record("resumed", turns=journal_turns, device_turns=device_turns,
                         boot_id=boot, same_boot=False, journal_turns=journal_turns,
                         state="paused")
            self.link.preload(round(journal_turns * self._cpr()))
            self._record("device_rebooted", boot_id=boot, old_boot_id=st.boot_id,
                         turns=journal_turns, unaccounted_turns=unacc)
            turns = journal_turns
            self._emit("rebooted", f"the device restarted while the host was away: count "
                       f"preloaded with {journal_turns:g}; up to {unacc:g} turns may be "
                       "unaccounted (give a fresh resistance reading to correct it)",
                       unaccounted_turns=unacc)
        sugg = pm = None
        if reading is not None:
            sugg, pm = self.count_from_reading(reading)
            self._record("reading", turns=turns, ohm=reading.ohm, temp_c=reading.temp_c,
                         note=reading.note or "at resume", source="user")
            if sugg is not None:
                self._emit("info", f"the reading implies {sugg:.0f} +/- {pm:.0f} turns "
                           f"(count {turns:g})", suggested_turns=sugg)
                if accept_correction and not same:
                    self._correct(round(sugg), "resistance reading", reading.ohm)
                    turns = self.turns
        self.policy.mark(self.turns, self.clock())
        self._record("continued", turns=self.turns)
        if self.schedule is not None and getattr(self.schedule, "passes", None):
            i, pos = self.schedule.pass_at(min(self.turns, self.schedule.total_turns))
            self._emit("info", f"continuing from {self.turns:g} turns: pass {i + 1} of "
                       f"{len(self.schedule.passes)}, guide at {pos:.2f} mm from the start "
                       "flange", pass_index=i, guide_mm=pos)
        self._begin_run()
        return Reconciliation(journal_turns, device_turns, same, turns, unacc, sugg, pm)

    def _unaccounted_after_host_loss(self) -> float:
        """Upper bound of turns made after the last journal entry and lost in a reboot."""
        st = self.session.state
        if st.state != "running" or st.link_down:
            return 0.0
        rpm = st.rpm
        if rpm <= 0:
            # running, but no checkpoint with a speed since the last start or continue:
            # the spindle may have reached full speed right after it
            rpm = float(getattr(getattr(self.machine, "spindle", None), "max_rpm", 0.0) or 0.0)
        if rpm <= 0:
            return 0.0
        wd = float(getattr(self.link.info, "watchdog_s", 1.0) or 1.0)
        return math.ceil(rpm / 60.0 * (self.policy.interval_s + wd) + self._decel_turns(rpm))

    def _decel_turns(self, rpm: float) -> float:
        accel = 600.0
        sp = getattr(self.machine, "spindle", None)
        if sp is not None and getattr(sp, "accel_rpm_s", 0) > 0:
            accel = sp.accel_rpm_s
        return rpm * rpm / (120.0 * accel)

    def measure_now(self, timeout: float = READING_TIMEOUT_S) -> float | None:
        """Ask the device for a reading and wait for it (ohm), keeping other events queued.

        Call from the runner thread before :meth:`resume` (the spindle stands still).
        """
        if not self.can_measure or not self._safe(self.link.measure):
            return None
        held: list[Any] = []
        deadline = time.monotonic() + timeout
        ohm = None
        while time.monotonic() < deadline:
            try:
                ev = self.events.get(timeout=max(0.0, deadline - time.monotonic()))
            except queue.Empty:
                break
            if type(ev).__name__ == "DeviceEvent" and ev.kind == "reading" and "ohm" in ev.data:
                ohm = float(ev.data["ohm"])
                break
            held.append(ev)
        for ev in held:
            self.events.put(ev)
        return ohm

    def count_from_reading(self, reading: Reading) -> tuple[float | None, float | None]:
        """The turn count a fresh reading implies (and its 1-sigma), using the readings so
        far for the ratio (1 when there are none)."""
        cal = self.session.state.calibrator()
        if cal is None:
            return None, None
        got = cal.ratio(self.session.state.reading_objects)
        k, kstd = (got[0], got[1]) if got else (1.0, 0.0)
        n = cal.turns_from_reading(reading, k, max(self.stop_turns, 1.0))
        # spread: meter spec and ratio uncertainty, through dR/dn
        r20 = reading.ohm_20c
        dn = max(n * 1e-3, 1.0)
        slope = (cal.predicted(n + dn) - cal.predicted(n - dn)) / (2 * dn) * k
        sr = math.hypot(cal.rel * r20, cal.abs_ohm)
        pm = math.hypot(sr / slope if slope > 0 else 0.0, n * kstd / k)
        return n, pm

    # ---- winding ------------------------------------------------------------------------
    def _clear_device(self) -> None:
        """Stop with an empty queue and no latched faults (statuses older are ignored)."""
        stopped = self._safe(self.link.stop)
        if not stopped and getattr(self.link, "connected", True):
            stopped = self._safe(self.link.stop)    # once more on a noisy line
        # an unacknowledged HALT leaves the device queue unknown: no new passes until a
        # later HALT is acknowledged (queueing on top could wind them twice)
        self._queue_unknown = not stopped
        clear = getattr(self.link, "clear", None)
        if clear is not None:
            self._safe(clear)
        self._fresh_after = time.monotonic()
        self._queued_guess = 0             # the stop emptied the device queue
        if self.status is not None:
            self.status = _with_queued(self.status, 0)
        # plan from where the spindle came to rest: a status sent after the stop with the
        # spindle still (a link that came back before the watchdog tripped finds it turning);
        # not before a resume, which reconciles the count itself (status None until then)
        wait_for = getattr(self.link, "wait_for", None)
        if wait_for is not None and self.status is not None:
            since = self._fresh_after
            try:
                self.status = _with_queued(wait_for(
                    lambda s: getattr(s, "t", since) >= since and not (s.rpm > 0), 4.0), 0)
            except WinderError:
                pass

    def _begin_run(self) -> None:
        if self.motor and self._queue_unknown:
            self._resync = True          # the next status halts again, then begins
            self.waiting = False
            return
        if self.motor:
            self._started_run = False
            self._plan_segments()
            self._top_up()
            self._safe(self.link.go)
            self._started_run = True
        self.waiting = False

    def _goal(self) -> float:
        """Where the current run of segments ends (a milestone or the stop point)."""
        stop = self.stop_turns
        if self.stop_at_resistance and self.can_measure:
            while self._milestone_i < len(MILESTONES):
                m = round(stop * MILESTONES[self._milestone_i])
                if m > self.turns + 1:
                    return float(m)
                self._milestone_i += 1
        return stop

    def _plan_segments(self) -> None:
        goal = self._goal()
        self._segment_goal = goal
        self._pending = make_segments(self.schedule, self.machine, self.turns, goal)
        self._queued_end = self.turns

    def _top_up(self, budget_s: float | None = None) -> None:
        """Send pending segments while the device queue has room (and, given a budget,
        until ``budget_s`` seconds have gone on sending; the rest waits for the next call)."""
        if not self._pending or not getattr(self.link, "connected", True):
            return
        qmax = int(getattr(self.link.info, "queue_max", 0) or 8)
        st = self.status
        queued = st.queued if st is not None else 0
        if st is not None and getattr(st, "t", 0.0) < self._queue_t:
            queued = max(queued, self._queued_guess)   # a status older than our last send
        room = max(0, qmax - 1 - queued)
        sent = 0
        t_end = time.monotonic() + budget_s if budget_s is not None else math.inf
        while self._pending and sent < room and time.monotonic() < t_end:
            s = self._pending[0]
            try:
                self.link.queue_pass(s.start_mm, s.end_mm, s.turns, s.rpm)
            except WinderError as err:
                code = getattr(err, "code", "")
                if code != "FUL":   # a full queue is only a late status: try again later
                    self._emit("warn", f"could not queue a pass: {err}")
                if type(err).__name__ == "CommandTimeout":
                    # every acknowledgement lost: the device may hold the pass already, and
                    # sending it again under a new number would wind it twice
                    self._resync = True
                break
            self._pending.pop(0)
            self._queued_end = s.end_turns
            sent += 1
        if sent:
            self._queue_t = time.monotonic()
            self._queued_guess = queued + sent
            if st is not None:
                self.status = _with_queued(st, queued + sent)
                if st.state == "idle" and self._segment_goal is not None and not self.waiting \
                        and self.session.state.state == "running" and self._started_run:
                    self._safe(self.link.go)   # the queue ran dry before the top-up

    def _safe(self, fn: Callable[..., Any], *args: Any) -> bool:
        try:
            fn(*args)
            return True
        except WinderError as err:
            self._emit("warn", f"{getattr(fn, '__name__', 'command')}: {err}")
            return False

    # ---- the loop -----------------------------------------------------------------------
    def poll(self, timeout: float = 0.1) -> bool:
        """Handle queued link events and user actions; returns False once done."""
        deadline = time.monotonic() + timeout
        while True:
            try:
                action = self._actions.get_nowait()
            except queue.Empty:
                break
            self._do(action)
        while not self.done:
            left = deadline - time.monotonic()
            try:
                ev = self.events.get(timeout=max(0.0, left)) if left > 0 else \
                    self.events.get_nowait()
            except queue.Empty:
                break
            self._handle(ev)
        if self._want_reading and time.monotonic() > self._reading_deadline:
            self._reading_timed_out()
        if not self.done:
            self._summary()
        return not self.done

    def _handle(self, ev: Any) -> None:
        name = type(ev).__name__
        if name == "Status":
            self._on_status(ev)
        elif name == "DeviceEvent":
            self._on_device_event(ev)
        elif name == "LinkLost":
            self._on_link_lost(ev)
        elif name == "LinkRestored":
            self._on_link_restored(ev)

    def _on_status(self, st: Any) -> None:
        if self.done:
            return
        if getattr(st, "t", 1.0) < self._fresh_after:
            return   # sent before the device was cleared
        self.status = st
        self._last_status_t = time.monotonic()
        if st.rpm == st.rpm:  # not NaN (integer-only devices report no speed)
            self._last_rpm = st.rpm
        turns = float(st.turns)
        now = self.clock()
        stop = self.stop_turns
        if not self.motor:
            if turns >= stop and self.session.state.state == "running":
                self._record("checkpoint", turns=turns, rpm=self._rpm(st),
                             elapsed_s=self.state.winding_s)
                self._finish("planned turns reached", turns)
                return
        if self.policy.due(turns, now) and self.session.state.state == "running":
            self.session.record("checkpoint", turns=turns, rpm=self._rpm(st),
                                elapsed_s=self.state.winding_s)
            self.policy.mark(turns, now)
            self._progress(st)
        if st.faults and self.state.state == "running" and not self.waiting:
            self._fault(", ".join(sorted(st.faults)))
            return
        if self._resync and self.motor and not self.waiting \
                and self.session.state.state == "running":
            self._emit("info", "restarting the pass queue from the device's count")
            if not self._safe(self.link.stop):   # HALT empties the device queue
                return                           # not acknowledged either: next status
            self._clear_device()
            self._resync = False
            self._begin_run()
            return
        if self.motor and not self.waiting and self.session.state.state == "running":
            # on a noisy line a pass can take several tries; statuses (checkpoints) must
            # not wait behind a whole queue's worth of them, nor stale statuses queued
            # behind a slow command each start another top-up
            if time.monotonic() - getattr(st, "t", time.monotonic()) < STALE_STATUS_S:
                self._top_up(budget_s=TOP_UP_BUDGET_S)
            self._maybe_measure(turns)
            self._check_goal(st)

    def _rpm(self, st: Any) -> float:
        return float(st.rpm) if st.rpm == st.rpm else 0.0

    def _progress(self, st: Any) -> None:
        data = self.progress()
        eta = data.get("eta_s")
        bits = [f"{data['turns']:g}/{data['stop_turns']:g} turns"]
        if data.get("pass_index") is not None:
            bits.append(f"pass {data['pass_index'] + 1}/{data['passes']}")
            bits.append(f"guide {data['guide_mm']:.2f} mm")
        bits.append(f"{data['rpm']:.0f} rpm")
        if data.get("predicted_ohm") is not None:
            bits.append(f"R now ~{_ohm(data['predicted_ohm'])}")
        if eta is not None:
            bits.append(f"eta {int(eta // 60)}:{int(eta % 60):02d}")
        self._emit("progress", "  ".join(bits), **data)

    def progress(self) -> dict[str, Any]:
        """The numbers a monitor shows: turns, stop, rpm, pass, guide (mm), eta (s), ohm."""
        st = self.session.state
        turns = st.turns
        rpm = self._last_rpm
        out: dict[str, Any] = {"turns": turns, "stop_turns": st.stop_turns, "rpm": rpm,
                               "pass_index": None, "passes": None, "guide_mm": None,
                               "eta_s": None, "predicted_ohm": None, "state": st.state}
        if self.schedule is not None and getattr(self.schedule, "passes", None):
            i, pos = self.schedule.pass_at(min(turns, self.schedule.total_turns))
            out.update(pass_index=i, passes=len(self.schedule.passes), guide_mm=pos)
        if rpm > 0:
            out["eta_s"] = max(0.0, st.stop_turns - turns) / rpm * 60.0
        est = st.estimate()
        if st.curve is not None:
            k = est.ratio if est else 1.0
            out["predicted_ohm"] = k * st.curve(turns)
        return out

    def _check_goal(self, st: Any) -> None:
        goal = self._segment_goal
        if goal is None or self._want_reading in ("milestone", "final"):
            return
        idle = st.state in ("idle",) and st.queued == 0 and not self._pending
        if not idle or st.turns < goal - 0.5:
            return
        if goal < self.stop_turns - 0.5:
            # a milestone of --stop-at-resistance: measure standing still
            self._request_reading("milestone")
            return
        if self.can_measure and not self._finishing:
            self._finishing = True
            self._request_reading("final")
            return
        self._finish("stop point reached", float(st.turns))

    def _maybe_measure(self, turns: float) -> None:
        if not self.can_measure or self.stop_at_resistance or self._want_reading:
            return
        for f in self.measure_fractions:
            at = round(self.stop_turns * f)
            if turns >= at and at not in self._measured_at and turns < self.stop_turns - 1:
                self._measured_at.add(at)
                self._request_reading("periodic")
                return

    def _request_reading(self, why: str) -> None:
        if self._safe(self.link.measure):
            self._want_reading = why
            self._reading_deadline = time.monotonic() + READING_TIMEOUT_S

    def _reading_timed_out(self) -> None:
        why, self._want_reading = self._want_reading, None
        self._emit("warn", "the device did not send the requested resistance reading")
        if why == "final":
            self._finish("stop point reached", self.turns)
        elif why == "milestone":
            self._after_milestone()

    def _on_device_event(self, ev: Any) -> None:
        kind = ev.kind
        if kind == "reading" and "ohm" in ev.data:
            turns = self.turns
            c = ev.data.get("c")
            if isinstance(c, (int, float)) and self.status is not None:
                turns = float(self.status.turns) + (float(c) - self.status.count) / self._cpr()
            why = self._want_reading
            goal = self._segment_goal
            early = why in ("final", "milestone") and goal is not None and turns < goal - 0.5
            if not early:   # (an answer to an earlier request is just a reading)
                self._want_reading = None
            final = why == "final" and not early
            self._add_reading(Reading(turns, float(ev.data["ohm"]), self.ambient_c,
                                      "final" if final else ""), source="device")
            if final:
                self._finish("stop point reached", self.turns)
            elif why == "milestone" and not early:
                self._after_milestone()
        elif kind in ("stall", "estop", "limit"):
            self._fault(kind + (f" ({ev.data.get('side')})" if ev.data.get("side") else ""))
        elif kind == "pedal":
            down = ev.data.get("state", "down") == "down"
            if self.motor:
                if down:
                    self.cont()
                else:
                    self.pause("pedal")
        # "boot" is handled with LinkRestored

    def _after_milestone(self) -> None:
        est = self.session.state.estimate()
        self._milestone_i += 1
        if est is not None and est.turns_for_target:
            cap = self.session.state.planned_turns * MAX_STOP_FACTOR
            new = min(round(est.turns_for_target * self._cpr()) / self._cpr(), cap)
            if new <= self.turns:
                new = self.turns
            if abs(new - self.stop_turns) >= 0.5:
                self._record("target_changed", stop_turns=new, reason="calibration",
                             target_ohm=est.target_ohm, ratio=est.ratio)
                self._emit("stop_changed", f"stop point moved to {new:g} turns (measured/"
                           f"predicted {est.ratio:.4f})", stop_turns=new, ratio=est.ratio)
        if self.turns >= self.stop_turns - 0.5:
            self._finishing = True
            self._request_reading("final")
            return
        self._plan_segments()
        self._top_up()
        self._safe(self.link.go)

    def _add_reading(self, r: Reading, source: str = "user") -> None:
        self._record("reading", turns=r.turns, ohm=r.ohm, temp_c=r.temp_c, note=r.note,
                     source=source)
        est = self.session.state.estimate()
        text = f"reading {_ohm(r.ohm)} at {r.turns:g} turns"
        if r.temp_c is not None:
            text += f", {r.temp_c:g} C"
        if est is not None:
            text += (f"; measured/predicted {est.ratio:.4f}, final ~{_ohm(est.predicted_final_ohm)}"
                     " at 20 C")
        self._emit("reading", text, turns=r.turns, ohm=r.ohm, temp_c=r.temp_c,
                   estimate=est.to_dict() if est else None)
        if est is not None and est.turns_for_target and not self.stop_at_resistance \
                and self.state.state not in ("finished", "aborted"):
            at = round(est.turns_for_target)
            if abs(at - self.stop_turns) >= max(1.0, 0.002 * self.stop_turns):
                self._proposed_stop = float(at)
                self._emit("stop_proposed", f"the target is reached at about {at} turns "
                           f"(stop point {self.stop_turns:g}); accept to move the stop point",
                           stop_turns=float(at))

    def _fault(self, what: str) -> None:
        if self.motor:
            self._safe(self.link.stop)
        self._pending.clear()
        self._record("paused", turns=self.turns, reason=f"fault {what}")
        self.waiting = True
        self._emit("fault", f"{what}: motor stopped; clear the cause, then continue")

    def _on_link_lost(self, ev: Any) -> None:
        if self.done or self.session.state.link_down:
            return
        self._record("link_lost", turns=self.turns, reason=str(ev.reason))
        self._emit("link_lost", f"link lost ({ev.reason}): the device stops its motor; "
                   "waiting for it to come back")

    def _on_link_restored(self, ev: Any) -> None:
        if self.done:
            return
        turns = float(ev.turns)
        if not ev.rebooted:
            # the device may have wound on while the host was deaf (until its watchdog
            # tripped): plan from its own count, not the last one the host heard
            fresh = self._fresh_status(float(getattr(ev, "t", 0.0) or 0.0))
            if fresh is not None:
                turns = float(fresh.turns)
        st = self.session.state
        was_running = st.state == "running" and not self.waiting
        self._record("link_back", turns=turns, rebooted=bool(ev.rebooted),
                     device_turns=float(self.link.turns))
        if ev.rebooted:
            rpm = self._last_rpm
            gap = max(0.0, time.monotonic() - self._last_status_t) if self._last_status_t else 0
            wd = float(getattr(ev.info, "watchdog_s", 1.0) or 1.0)
            unacc = math.ceil(rpm / 60.0 * (min(gap, wd) + 0.1) + self._decel_turns(rpm)) \
                if rpm > 0 else 0
            self._record("device_rebooted", boot_id=getattr(ev.info, "boot_id", ""),
                         old_boot_id=st.boot_id, turns=turns, unaccounted_turns=unacc)
            self._safe(self.link.preload, round(turns * self._cpr()))
            self._emit("rebooted", f"the device restarted: count kept at {turns:g} "
                       f"(up to {unacc:g} turns may be unaccounted)", unaccounted_turns=unacc)
        else:
            self._emit("link_back", f"link back; count {turns:g}")
        self._pending.clear()
        if self.motor:
            self._clear_device()
        if st.state != "running":
            return
        if self.auto_continue:
            self._begin_run()
            self._emit("continued", "continuing")
        elif self.motor and was_running:
            self._record("paused", turns=self.turns, reason="link")
            self.waiting = True
            self._emit("paused", "motor stopped; continue when ready")

    def _fresh_status(self, since: float, timeout: float = 2.0) -> Any | None:
        """The first device status sent at or after ``since`` (link clock, s), or None."""
        wait_for = getattr(self.link, "wait_for", None)
        if wait_for is None:
            return None
        try:
            st = wait_for(lambda s: getattr(s, "t", since) >= since, timeout)
        except WinderError:
            return None
        self.status = st
        return st

    def _finish(self, reason: str, turns: float) -> None:
        if self.done:
            return
        self._record("finished", turns=turns, reason=reason)
        self.done = True
        self._emit("finished", f"finished: {turns:g} turns ({reason})" +
                   ("" if self.motor else "; stop winding now"), turns=turns)

    # ---- user actions (any thread) --------------------------------------------------------
    def _queue(self, *action: Any) -> None:
        self._actions.put(action)

    def pause(self, reason: str = "user") -> None:
        self._queue("pause", reason)

    def cont(self) -> None:
        self._queue("continue")

    def reading(self, ohm: float, temp_c: float | None = None, note: str = "") -> None:
        """Record a resistance reading (ohm as measured at ``temp_c`` degC ambient)."""
        self._queue("reading", ohm, temp_c, note)

    def note(self, text: str) -> None:
        self._queue("note", text)

    def wire_break(self, note: str = "") -> None:
        self._queue("wire_break", note)

    def splice(self, note: str = "") -> None:
        self._queue("splice", note)

    def accept_stop(self, turns: float | None = None) -> None:
        """Move the stop point to ``turns`` (default: the last proposal)."""
        self._queue("accept", turns)

    def correct_count(self, turns: float, reason: str = "user") -> None:
        self._queue("correct", turns, reason)

    def stop(self, reason: str = "quit") -> None:
        """Stop the motor and leave the session paused (resumable)."""
        self._queue("stop", reason)

    def abort(self, reason: str = "user") -> None:
        self._queue("abort", reason)

    def _do(self, action: tuple) -> None:
        name, *args = action
        try:
            getattr(self, f"_act_{name}")(*args)
        except WinderError as err:
            self._emit("error", str(err))

    def _act_pause(self, reason: str) -> None:
        if self.done or self.state.state != "running":
            return
        if self.motor and not self._safe(self.link.pause) \
                and getattr(self.link, "connected", True):
            # HOLD unacknowledged on a noisy line: stop outright rather than leave the
            # spindle turning under a session that says paused
            if not self._safe(self.link.stop):
                self._queue_unknown = True
        self._record("paused", turns=self.turns, reason=reason)
        self.waiting = True
        self._emit("paused", f"paused at {self.turns:g} turns ({reason})")

    def _act_continue(self) -> None:
        if self.done:
            return
        st = self.state
        if st.state == "paused" and st.reason == "wire_break":
            self._record("splice", turns=self.turns, note="")
        if self.motor:
            self._clear_device()             # restart from a clean queue at the true count
        self._record("continued", turns=self.turns)
        self._begin_run()
        self._emit("continued", f"continuing from {self.turns:g} turns")

    def _act_reading(self, ohm: float, temp_c: float | None, note: str) -> None:
        self._add_reading(Reading(self.turns, float(ohm), temp_c, note), source="user")

    def _act_note(self, text: str) -> None:
        self._record("note", text=text, turns=self.turns)
        self._emit("info", f"note at {self.turns:g} turns: {text}")

    def _act_wire_break(self, note: str) -> None:
        if self.motor:
            self._safe(self.link.stop)
        self._pending.clear()
        self._record("wire_break", turns=self.turns, note=note)
        self.waiting = True
        self._emit("paused", f"wire break at {self.turns:g} turns: splice, then continue")

    def _act_splice(self, note: str) -> None:
        self._record("splice", turns=self.turns, note=note)
        self._emit("info", "splice recorded; continue when ready")

    def _act_accept(self, turns: float | None) -> None:
        new = turns if turns is not None else self._proposed_stop
        if new is None:
            raise InputError("no new stop point has been proposed")
        est = self.state.estimate()
        self._record("target_changed", stop_turns=float(new), reason="accepted",
                     target_ohm=self.state.target_ohm, ratio=est.ratio if est else None)
        self._proposed_stop = None
        self._emit("stop_changed", f"stop point now {new:g} turns", stop_turns=float(new))
        if self.motor and not self.waiting and self.state.state == "running":
            self._safe(self.link.pause)
            self._settle()
            self._clear_device()
            self._begin_run()

    def _settled_count(self, timeout: float = 1.0) -> float:
        """The count once a status sent after now shows the spindle still (best effort)."""
        wait_for = getattr(self.link, "wait_for", None)
        if wait_for is None or not getattr(self.link, "connected", False):
            return self.turns
        t0 = time.monotonic()
        try:
            st = wait_for(lambda s: s.t >= t0 and not (s.rpm > 0), timeout)
            return float(st.turns)
        except WinderError:
            return self.turns

    def _settle(self) -> None:
        wait_for = getattr(self.link, "wait_for", None)
        if wait_for is None:
            return
        try:
            wait_for(lambda s: s.rpm == 0 or s.rpm != s.rpm, SETTLE_TIMEOUT_S)
        except WinderError:
            pass

    def _act_correct(self, turns: float, reason: str) -> None:
        self._correct(turns, reason, None)

    def _correct(self, turns: float, reason: str, ohm: float | None) -> None:
        if self.motor and self.state.state == "running" and not self.waiting \
                and self.status is not None:
            raise InputError("pause first (p), then correct the count", where="keys")
        old = self.turns
        self.link.preload(round(turns * self._cpr()))
        self._fresh_after = time.monotonic()
        self.status = None
        self._record("count_corrected", turns=float(turns), old_turns=old, reason=reason,
                     ohm=ohm)
        self.policy.mark(float(turns), self.clock())
        self._emit("info", f"count corrected {old:g} -> {turns:g} ({reason})")

    def _act_stop(self, reason: str) -> None:
        self.halt(reason)

    def _act_abort(self, reason: str) -> None:
        if self.motor:
            self._safe(self.link.stop)
        if not self.done:
            self._record("aborted", turns=self.turns, reason=reason)
            self.done = True
            self._emit("aborted", f"aborted at {self.turns:g} turns ({reason})")

    # ---- stopping (runner thread, or a signal handler's caller) ----------------------------
    def halt(self, reason: str) -> None:
        """Stop the motor now and journal a pause; the session can be resumed. Idempotent."""
        if self.motor:
            self._safe(self.link.stop)
        if not self.done and self.state.state not in ("finished", "aborted"):
            turns = self._settled_count()
            if self.state.state == "running" or self.state.reason != reason:
                self.session.record("paused", turns=turns, reason=reason)
            self.session.write_summary()
            self.done = True
            self._emit("stopped", f"stopped at {self.turns:g} turns ({reason})")


def check_stop_at_resistance(wanted: bool, target_ohm: float | None,
                             caps: frozenset[str]) -> None:
    """Refuse ``--stop-at-resistance`` without a resistance target or a measuring device."""
    if not wanted:
        return
    if target_ohm is None:
        raise InputError("--stop-at-resistance needs a coil whose target is a resistance",
                         where="--stop-at-resistance")
    if caps and "ohm" not in caps:
        raise InputError("--stop-at-resistance needs a device that measures resistance "
                         f"(this one offers {', '.join(sorted(caps))})",
                         where="--stop-at-resistance")


def _with_queued(st: Any, queued: int) -> Any:
    try:
        from dataclasses import replace

        return replace(st, queued=queued)
    except TypeError:
        return st


def _ohm(x: float) -> str:
    return f"{x / 1000:.4g} kohm" if x >= 1000 else f"{x:.4g} ohm"


# ---- segments -----------------------------------------------------------------------------
def make_segments(schedule: Any | None, machine: Any | None, from_turns: float,
                  to_turns: float, *, default_rpm: float = 300.0) -> list[Segment]:
    """The device segments from ``from_turns`` to ``to_turns`` (cumulative turns).

    Follows the schedule's passes (the current one from its guide position);
    past the schedule's end it continues the layer pattern (reversing passes at
    the last pass's pitch and speed). Guide positions are machine millimetres:
    window position plus the traverse's start flange position. The first
    ``slow_start_turns`` and the last ``slow_finish_turns`` run at the
    machine's slow speed.
    """
    if to_turns <= from_turns + 1e-9:
        return []
    offset = 0.0
    sp = getattr(machine, "spindle", None)
    tr = getattr(machine, "traverse", None)
    if tr is not None:
        offset = tr.start_flange_m * 1e3
    passes = list(getattr(schedule, "passes", None) or [])
    pieces: list[tuple[float, float, float, float, float]] = []  # a_mm, b_mm, t0, t1, rpm
    if passes:
        t0 = from_turns
        i = 0
        while i < len(passes) and t0 < to_turns - 1e-9:
            p = passes[i]
            if p.turns_end <= t0 + 1e-9:
                i += 1
                continue
            t1 = min(p.turns_end, to_turns)
            pieces.append((p.position_at(t0), p.position_at(t1), t0, t1, p.rpm))
            t0 = t1
            i += 1
        k = 0
        while t0 < to_turns - 1e-9:   # past the schedule: mirror the last two passes
            last = passes[-1] if k % 2 == 0 else passes[-2] if len(passes) > 1 else passes[-1]
            a, b = (last.end_mm, last.start_mm) if k % 2 == 0 else (last.start_mm, last.end_mm)
            n = last.turns if last.turns > 0 else 1.0
            t1 = min(t0 + n, to_turns)
            frac = (t1 - t0) / n
            pieces.append((a, a + (b - a) * frac, t0, t1, last.rpm))
            t0 = t1
            k += 1
    else:
        pieces.append((0.0, 0.0, from_turns, to_turns, default_rpm))
    slow = getattr(sp, "slow_rpm", None)
    cuts = []
    if slow:
        if from_turns < sp.slow_start_turns:
            cuts.append(float(sp.slow_start_turns))
        cuts.append(to_turns - sp.slow_finish_turns)
    out: list[Segment] = []
    for a, b, t0, t1, rpm in pieces:
        bounds = [t0] + [c for c in cuts if t0 + 1e-6 < c < t1 - 1e-6] + [t1]
        for u0, u1 in zip(bounds, bounds[1:], strict=False):
            # the link sends turns with 3 decimals: quantise the cumulative bounds so
            # the segments add up exactly to the goal on the device
            n = round(round(u1, 3) - round(u0, 3), 3)
            if n <= 0:
                continue
            fa = (u0 - t0) / (t1 - t0)
            fb = (u1 - t0) / (t1 - t0)
            r = rpm
            if slow and (u1 <= sp.slow_start_turns + 1e-6
                         or u0 >= to_turns - sp.slow_finish_turns - 1e-6):
                r = min(rpm, slow)
            out.append(Segment(offset + a + (b - a) * fa, offset + a + (b - a) * fb,
                               n, max(1.0, r), u1))
    return out
