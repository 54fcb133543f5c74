"""History: every session under the sessions directory, filters, matched pairs.

A session's row comes from its ``summary.json`` when that is current (same
journal size), else from a replay of the journal (the journal is the truth).

Matched pairs: coils whose final resistance (measured at the final count,
20 C) agree within a tolerance, in percent of their mean. Pairs are chosen
greedily from the closest difference up, each coil in at most one pair
(the maker wants distinct sets); ``all_pairs`` lists every qualifying pair.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from winder.errors import InputError
from winder.session import store

ROW_KEYS = ("session", "coil", "state", "started", "turns_wound", "planned_turns",
            "final_measured_ohm_20c", "predicted_final_ohm", "final_error_percent",
            "interruptions", "path")


def session_report(path: Path) -> dict[str, Any]:
    """The report of one session (cached summary if current, else replayed)."""
    summ = store.read_json(path / store.SUMMARY_FILE)
    jsize = (path / store.JOURNAL_FILE).stat().st_size
    if isinstance(summ, dict) and summ.get("journal_bytes") == jsize \
            and summ.get("state") not in ("running",):
        return summ
    from winder.session.report import build_report
    from winder.session.session import Session

    return build_report(Session.open(path))


def row(rep: dict[str, Any]) -> dict[str, Any]:
    out = {k: rep.get(k) for k in ROW_KEYS}
    out["interruptions"] = len(rep.get("interruptions") or [])
    return out


@dataclass
class Filters:
    coil: str | None = None          # substring of the coil name, case-insensitive
    state: str | None = None
    since: _dt.date | None = None
    until: _dt.date | None = None

    def match(self, rep: dict[str, Any]) -> bool:
        if self.coil and self.coil.lower() not in str(rep.get("coil", "")).lower():
            return False
        if self.state and rep.get("state") != self.state:
            return False
        started = rep.get("started")
        if (self.since or self.until) and started:
            day = _dt.datetime.fromisoformat(started).date()
            if self.since and day < self.since:
                return False
            if self.until and day > self.until:
                return False
        return True


def parse_date(text: str, option: str) -> _dt.date:
    try:
        return _dt.date.fromisoformat(text)
    except ValueError:
        raise InputError(f"expected a date like 2026-12-01, got {text!r}", where=option) from None


def collect(filters: Filters | None = None, root: Path | None = None) -> list[dict[str, Any]]:
    """Reports of all sessions matching ``filters``, oldest first. Unreadable ones are
    listed with state ``unreadable`` and the error in ``error``."""
    out = []
    for path in store.list_sessions(root):
        try:
            rep = session_report(path)
        except InputError as err:
            rep = {"session": path.name, "coil": "", "state": "unreadable", "path": str(path),
                   "error": str(err), "started": None, "interruptions": []}
        if filters is None or filters.match(rep):
            out.append(rep)
    out.sort(key=lambda r: (r.get("started") or "", r.get("session") or ""))
    return out


def matched_pairs(reports: list[dict[str, Any]], tolerance_percent: float, *,
                  same_coil: bool = False, all_pairs: bool = False) -> list[dict[str, Any]]:
    """Pairs of finished coils whose measured 20 C resistance agrees within tolerance."""
    cands = [r for r in reports if r.get("state") == "finished"
             and r.get("final_measured_ohm_20c")]
    pairs = []
    for i, a in enumerate(cands):
        for b in cands[i + 1:]:
            if same_coil and a.get("coil") != b.get("coil"):
                continue
            ra, rb = a["final_measured_ohm_20c"], b["final_measured_ohm_20c"]
            diff = abs(ra - rb) / (0.5 * (ra + rb)) * 100.0
            if diff <= tolerance_percent:
                pairs.append({"a": a["session"], "b": b["session"], "a_ohm": ra, "b_ohm": rb,
                              "a_coil": a.get("coil"), "b_coil": b.get("coil"),
                              "difference_percent": diff})
    pairs.sort(key=lambda p: (p["difference_percent"], p["a"], p["b"]))
    if all_pairs:
        return pairs
    used: set[str] = set()
    chosen = []
    for p in pairs:
        if p["a"] in used or p["b"] in used:
            continue
        used.update((p["a"], p["b"]))
        chosen.append(p)
    return chosen
