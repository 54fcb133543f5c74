"""Load: headless monitoring of a 3,000 rpm job with 50 status lines per simulated second.

Correctness only (the figures are printed by ``python -m winder.session.load``): no count
is missed (the final count is the device's and the coil's), the journal replays to it,
the host's memory does not grow over the second half of the run, and the journal holds
no more checkpoints than the policy allows (one per second or per 100 turns), so its
growth per hour of winding is bounded by design.
"""

from __future__ import annotations

from winder.session.load import RPM, run_load


def test_monitoring_3000_rpm_at_50_status_lines_per_second(tmp_path):
    minutes, speedup = 6.0, 30.0
    r = run_load(minutes, speedup, work=tmp_path)
    assert r.host_rc == 0 and "Traceback" not in r.host_stderr, r.host_stderr
    assert r.state == "finished"
    assert r.turns_wound == RPM * minutes == r.device_count == r.replayed_turns
    assert 0 <= r.coil_turns - r.turns_wound < 1
    # 50 lines per simulated second while turning (the run also ramps and reverses)
    assert r.statuses_sent >= 50 * minutes * 60
    assert r.checkpoints <= r.checkpoint_bound
    # bounded memory: no growth from half-way to the end beyond allocator noise (8 MiB)
    assert r.rss_half_kb is not None and r.rss_end_kb is not None
    assert r.rss_end_kb - r.rss_half_kb < 8 * 1024
