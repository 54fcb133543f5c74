"""The fault campaign against the simulated winder (winder.session.campaign).

CI runs a bounded campaign (8 seeded runs of the 2,000-turn job, three at a time; seeds
29-36 are a window whose fault mixes include every kind, whole-run corruption too);
``WINDER_SOAK=1`` runs the soak (50 runs, or ``WINDER_SOAK_RUNS``). Every run must pass
its checks (see the campaign module: exact count or a stated loss after reboots, the
journal replays, no traceback, the motor stopped within the watchdog window after each
host kill), and no turn may be lost where the device survived.
"""

from __future__ import annotations

import os
import sys

from winder.session.campaign import KINDS, default_runs, format_table, run_campaign, summary


def test_fault_campaign():
    runs = int(os.environ.get("WINDER_SOAK_RUNS", default_runs()))
    soak = os.environ.get("WINDER_SOAK") == "1"
    seed = int(os.environ.get("WINDER_CAMPAIGN_SEED", "1" if soak else "29"))
    results = run_campaign(runs, seed=seed, jobs=3)
    table = format_table(results)
    print("\n" + table, file=sys.stderr)
    s = summary(results)
    assert s["runs"] == runs
    assert s["faults_total"] >= 2 * runs
    if runs >= 8:
        assert all(s["faults"][k] for k in KINDS), s["faults"]
    assert s["turns_lost_device_survived"] == 0
    assert s["failed"] == 0, table
