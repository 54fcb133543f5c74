"""Link faults the fault campaign found, pinned down on the simulator's pty.

* a device restart whose HELLO is lost on a noisy line: the host sees the count fall
  to 0 with no HELLO; it must find the reboot (new handshake, boot id) and keep its
  count, not follow the device back to 0;
* the handshake on a line with 1 % corrupted bytes opens reliably.
"""

from __future__ import annotations

import queue
import time

import pytest

from winder.link import WinderLink
from winder.link.simproc import start_sim


@pytest.fixture
def sim():
    s = start_sim(speedup=20, extra=["--seed", "3"])
    yield s
    s.close()


def _drain(q: queue.Queue) -> list:
    out = []
    while True:
        try:
            out.append(q.get_nowait())
        except queue.Empty:
            return out


def test_a_reboot_whose_hello_is_lost_is_found_and_the_count_kept(sim):
    events: queue.Queue = queue.Queue()
    link = WinderLink(sim.device, events=events)
    link.open()
    try:
        link.zero()
        link.queue_pass(1.0, 9.0, 400, 1500)
        link.go()
        link.wait_for(lambda s: s.turns >= 200, 10.0)
        link.pause()
        held = link.wait_for(lambda s: s.rpm == 0, 5.0).turns
        assert held >= 200
        sim.control("corrupt 1")            # every byte garbled: the HELLO is lost
        sim.control("reboot")
        time.sleep(0.5)                     # shorter than the 1 s silence limit
        sim.control("corrupt 0")            # statuses from the new boot: count 0
        deadline = time.monotonic() + 10
        kinds = []
        while time.monotonic() < deadline:
            kinds += [type(e).__name__ for e in _drain(events)]
            if "LinkRestored" in kinds and link.connected:
                break
            time.sleep(0.05)
        restored = [e for e in _drain(events) if type(e).__name__ == "LinkRestored"]
        assert "LinkLost" in kinds and "LinkRestored" in kinds, kinds
        assert link.info.boot_id == sim.truth()["boot_id"]
        # the host kept its count across the restart (the device now counts from 0)
        assert link.turns == pytest.approx(held, abs=1e-9)
        assert min(e.turns for e in restored) >= held if restored else True
        time.sleep(0.4)
        assert link.turns == pytest.approx(held, abs=1e-9)
    finally:
        link.close()


def test_handshake_through_one_percent_corrupted_bytes(sim):
    sim.control("corrupt 0.01")
    opened = 0
    for _ in range(5):
        link = WinderLink(sim.device)
        try:
            link.open()
            opened += 1
        finally:
            link.close()
    assert opened == 5
