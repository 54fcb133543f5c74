"""The host side of the ingest row: ``python -m winder.bench.ingest_host DEVICE``.

Opens DEVICE with :class:`~winder.link.driver.WinderLink`, makes a real session
(the shipped 6.2 kohm sensing coil, prepared as ``winder wind`` prepares it)
under ``WINDER_DATA_DIR``, starts the session :class:`~winder.session.runner.Runner`
and polls it, so every status line goes through the driver (framer, CRC, parse,
turn tracking, event queue) and the runner (state, checkpoint policy, fsync'ed
journal writes, periodic summary). Prints ``ready`` once running; on ``stop``
(or end of input) prints one JSON line: lines read, host CPU seconds and wall
seconds between the two, checkpoints written, events dropped.
"""

from __future__ import annotations

import json
import queue
import sys
import threading
import time


def main(argv: list[str]) -> int:
    from winder.link.driver import WinderLink
    from winder.profile import examples_dir
    from winder.session.prepare import machine_for, prepare, started_fields
    from winder.session.runner import Runner
    from winder.session.session import Session

    device = argv[0]
    events: queue.Queue = queue.Queue(maxsize=10000)
    injected = [0]

    def tap(ev: object) -> None:             # link thread: count the flood's lines only
        # (the flood says 1500 rpm; the idle simulator's own status lines say 0)
        if type(ev).__name__ == "Status" and getattr(ev, "rpm", 0) == 1500.0:
            injected[0] += 1

    link = WinderLink(device, events=events, on_event=tap)
    link.open()
    sess = None
    try:
        info = link.info
        machine = machine_for(None, info.capabilities, info.counts_per_rev)
        prep = prepare(examples_dir() / "coils" / "sense-6k2.yaml", machine)
        sess = Session.create(coil_name=prep.coil.name, coil_yaml=prep.coil_yaml,
                              plan=prep.plan.to_dict(), schedule=prep.schedule.to_dict(),
                              started=started_fields(prep, info.to_dict()))
        runner = Runner(sess, link, schedule=prep.schedule, machine=machine, events=events)
        runner.start()
        stop = threading.Event()

        def wait_stop() -> None:
            for line in sys.stdin:
                if line.strip() == "stop":
                    break
            stop.set()

        threading.Thread(target=wait_stop, daemon=True).start()
        lines0 = link.stats.lines_ok
        events0 = sess.state.events
        cpu0, wall0 = time.process_time(), time.perf_counter()
        print("ready", flush=True)
        while not stop.is_set() and runner.poll(0.05):
            pass
        cpu, wall = time.process_time() - cpu0, time.perf_counter() - wall0
        out = {"lines": link.stats.lines_ok - lines0, "cpu_s": cpu, "wall_s": wall,
               "status_injected_seen": injected[0],
               "checkpoints": sess.state.events - events0,
               "dropped_events": link.dropped_events, "bad_crc": link.stats.bad_crc,
               "turns": runner.turns}
        runner.stop("benchmark over")
        runner.poll(0.1)
    finally:
        link.close()
        if sess is not None:
            sess.close()
    print(json.dumps(out), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
