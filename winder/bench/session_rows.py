"""Row for the session: replay of a 100,000-event journal (budget under 1 s).

The journal is written once per run (fsync off, it is only a fixture) with the
mix a long wind leaves: a ``started`` event with the plan's resistance curve,
mostly checkpoints, a reading every 500 events, a pause and a continue every
5,000, a note every 2,000, a link loss and return every 20,000. The figure is
``Session.open`` (replay of the file plus rebuild of the state), what
``winder resume`` and ``winder report`` pay before they can show anything;
CPU seconds of this process (medians); the note gives ``replay`` alone and the
floor JSON Lines sets (the file decoded at once, ``json.loads`` of every line,
nothing else).
"""

from __future__ import annotations

import json
import statistics
import tempfile
import time
from pathlib import Path

from winder.bench import Row, missing, verdict
from winder.bench.measure import fmt_time, timed

REPLAY_S = 1.0  # issue budget


def write_journal(root: Path, events: int) -> Path:
    """A session directory under ``root`` whose journal holds ``events`` events."""
    from winder.profile import examples_dir
    from winder.schedule import DEFAULT_MACHINE
    from winder.session.prepare import prepare, started_fields
    from winder.session.session import Session

    prep = prepare(examples_dir() / "coils" / "sense-6k2.yaml", DEFAULT_MACHINE)
    device = {"url": "/dev/null", "protocol": 1, "boot_id": "0badc0de", "capabilities": [],
              "counts_per_rev": 1}
    sess = Session.create(coil_name=prep.coil.name, coil_yaml=prep.coil_yaml,
                          plan=prep.plan.to_dict(), schedule=prep.schedule.to_dict(),
                          started=started_fields(prep, device), root=root, fsync=False)
    j = sess.journal
    assert j is not None
    t = time.time() - events * 0.1
    turns = 0.0
    for i in range(1, events):
        t += 0.1
        turns += 1.7
        if i % 20_000 == 0:
            j.append("link_lost", t=t, turns=turns, reason="read failed")
        elif i % 20_000 == 1:
            j.append("link_back", t=t, turns=turns, rebooted=False, device_turns=turns)
        elif i % 5_000 == 0:
            j.append("paused", t=t, turns=turns, reason="user")
        elif i % 5_000 == 1:
            j.append("continued", t=t, turns=turns)
        elif i % 2_000 == 0:
            j.append("note", t=t, text=f"layer check {i}", turns=turns)
        elif i % 500 == 0:
            j.append("reading", t=t, turns=turns, ohm=turns * 0.61, temp_c=22.5, note="",
                     source="device")
        else:
            j.append("checkpoint", t=t, turns=turns, rpm=1437.5, elapsed_s=i * 0.1)
    path = sess.path
    sess.close()
    return path


def _loads_every_line(file: Path) -> None:
    """The floor: decode the file once, ``json.loads`` each line, keep nothing."""
    loads = json.loads
    for line in file.read_bytes().decode().splitlines():
        loads(line)


def replay_row(quick: bool) -> Row:
    gone = missing("winder.session.journal", "winder.session.session", "winder.session.prepare")
    if gone:
        return Row("replay", "", gone, verdict="n/a")
    from winder.session.journal import replay
    from winder.session.session import Session
    from winder.session.store import JOURNAL_FILE

    n = 2_000 if quick else 100_000
    with tempfile.TemporaryDirectory(prefix="winder-bench-") as tmp:
        path = write_journal(Path(tmp), n)
        file = path / JOURNAL_FILE
        size = file.stat().st_size
        opens, replays, floors, walls = [], [], [], []
        for _ in range(2 if quick else 3):
            cpu, wall, s = timed(lambda: Session.open(path))
            opens.append(cpu)
            walls.append(wall)
            assert s.state.events == n, (s.state.events, n)
            s.close()
            replays.append(timed(lambda: replay(file))[0])
            floors.append(timed(lambda: _loads_every_line(file))[0])
    med = statistics.median(opens)
    floor = statistics.median(floors)
    scaled = "" if n == 100_000 else f" (quick: {n} events)"
    return Row("replay", "", f"{fmt_time(med)} for {n:,} events{scaled} = {med / floor:.1f} x "
               "json.loads alone", f"< {fmt_time(REPLAY_S)}", verdict(med < REPLAY_S),
               note=f"journal {size / 1e6:.1f} MB; replay alone "
                    f"{fmt_time(statistics.median(replays))}, state rebuild the rest; the "
                    f"floor, json.loads of every line, {fmt_time(floor)}",
               value=med, unit="s", extra={"events": n, "bytes": size, "floor_s": floor,
                                           "wall_s": statistics.median(walls),
                                           "replay_s": statistics.median(replays)})
