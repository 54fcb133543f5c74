"""Session store: data dir, readable ids, path safety, atomic summary, lock; state rebuild."""

from __future__ import annotations

import datetime as dt
import os

import pytest

from winder.errors import InputError
from winder.session import store
from winder.session.journal import Journal, replay
from winder.session.state import effective_state, rebuild


def test_data_dir_env_override(tmp_path, monkeypatch):
    monkeypatch.setenv("WINDER_DATA_DIR", str(tmp_path / "d"))
    assert store.sessions_dir() == tmp_path / "d" / "sessions"


def test_data_dir_defaults_to_platformdirs(monkeypatch):
    import platformdirs

    monkeypatch.delenv("WINDER_DATA_DIR", raising=False)
    assert store.data_dir() == __import__("pathlib").Path(platformdirs.user_data_dir("winder"))


def test_readable_ids_with_counter(tmp_path):
    day = dt.date(2026, 12, 1)
    a = store.new_session_dir("Driver 8 ohm (sustainer)", root=tmp_path, today=day)
    b = store.new_session_dir("Driver 8 ohm (sustainer)", root=tmp_path, today=day)
    assert a[0] == "driver-8-ohm-sustainer-20261201-001"
    assert b[0] == "driver-8-ohm-sustainer-20261201-002"
    assert a[1].is_dir() and a[1].parent == tmp_path


@pytest.mark.parametrize("name", ["../../etc", "/etc/passwd", "..", "a/../../b", "C:\\x",
                                  "\x00", "", "....", "~root", "é" * 300])
def test_coil_name_cannot_escape(tmp_path, name):
    root = tmp_path / "sessions"
    sid, path = store.new_session_dir(name, root=root)
    assert path.resolve().parent == root.resolve()
    assert "/" not in sid and ".." not in sid and len(sid) < 60
    assert list(tmp_path.iterdir()) == [root]


def test_resolve_refuses_escaping_ids(tmp_path, monkeypatch):
    monkeypatch.setenv("WINDER_DATA_DIR", str(tmp_path / "d"))
    outside = tmp_path / "outside"
    outside.mkdir()
    for ref in ("../outside", "../../x", "a/b"):
        with pytest.raises(InputError):
            store.resolve_session(ref)


def test_resolve_by_path_id_and_prefix(tmp_path, monkeypatch):
    monkeypatch.setenv("WINDER_DATA_DIR", str(tmp_path / "d"))
    sid, path = store.new_session_dir("neck coil", today=dt.date(2026, 1, 2))
    Journal.create(path / store.JOURNAL_FILE, {"session": sid}).close()
    assert store.resolve_session(path) == path
    assert store.resolve_session(sid) == path
    assert store.resolve_session("neck-coil-2026") == path
    with pytest.raises(InputError, match="no session"):
        store.resolve_session("bridge")


def test_explicit_session_dir_must_be_empty(tmp_path):
    d = tmp_path / "mine"
    assert store.use_session_dir(d)[1] == d and d.is_dir()
    (d / "x").write_text("1")
    with pytest.raises(InputError, match="not empty"):
        store.use_session_dir(d)


def test_atomic_write_replaces_and_survives_a_failed_write(tmp_path, monkeypatch):
    p = tmp_path / "summary.json"
    store.write_json_atomic(p, {"turns": 1})
    assert store.read_json(p) == {"turns": 1}

    def boom(*a):
        raise OSError("disk full")

    monkeypatch.setattr(store.os, "replace", boom)
    with pytest.raises(OSError):
        store.write_json_atomic(p, {"turns": 2})
    assert store.read_json(p) == {"turns": 1}            # old content intact
    assert [f.name for f in tmp_path.iterdir()] == ["summary.json"]   # no temp left


def test_atomic_write_fsyncs_before_replace(tmp_path, monkeypatch):
    order = []
    real_fsync, real_replace = os.fsync, os.replace
    monkeypatch.setattr(store.os, "fsync", lambda fd: (order.append("fsync"), real_fsync(fd)))
    monkeypatch.setattr(store.os, "replace", lambda a, b: (order.append("replace"),
                                                          real_replace(a, b)))
    store.write_json_atomic(tmp_path / "s.json", {})
    assert order.index("fsync") < order.index("replace")


def test_lock_exclusive_and_seen_from_outside(tmp_path):
    lock = store.SessionLock(tmp_path)
    assert not store.SessionLock.held_elsewhere(tmp_path)
    lock.acquire()
    assert store.SessionLock.held_elsewhere(tmp_path)
    with pytest.raises(InputError, match="another winder"):
        store.SessionLock(tmp_path).acquire()
    lock.release()
    assert not store.SessionLock.held_elsewhere(tmp_path)


def _journal(tmp_path):
    p = tmp_path / store.JOURNAL_FILE
    j = Journal.create(p, {"session": "s", "coil": "c", "planned_turns": 1000,
                           "target": {"kind": "turns", "value": 1000},
                           "device": {"boot_id": "b1"},
                           "curve": [[0, 0.0], [1000, 100.0]]})
    return p, j


def test_state_rebuild_crash_reboot_and_readings(tmp_path):
    p, j = _journal(tmp_path)
    j.append("checkpoint", turns=100.0, rpm=600.0, elapsed_s=10.0, t=1000.0)
    j.append("reading", turns=100.0, ohm=10.5, temp_c=20.0, note="", t=1001.0)
    j.append("checkpoint", turns=300.0, rpm=600.0, elapsed_s=30.0, t=1021.0)
    # the host dies here; 40 turns are made before the device reboots
    j.append("resumed", turns=0.0, device_turns=0.0, boot_id="b2", same_boot=False, t=1100.0)
    j.append("device_rebooted", boot_id="b2", old_boot_id="b1", turns=300.0,
             unaccounted_turns=None, t=1100.5)
    j.append("count_corrected", turns=340.0, old_turns=300.0, reason="reading", ohm=35.7,
             t=1101.0)
    j.append("target_changed", stop_turns=950.0, reason="calibration", target_ohm=None,
             ratio=1.05, t=1102.0)
    j.close()
    st = rebuild(replay(p).events)
    assert st.turns == 340.0 and st.stop_turns == 950.0
    assert st.state == "running"
    assert st.boot_ids == ["b1", "b2"] and st.boot_id == "b2"
    kinds = [i["kind"] for i in st.interruptions]
    assert kinds == ["host_lost", "device_rebooted"]
    assert st.interruptions[0]["turns"] == 300.0
    assert st.interruptions[0]["duration_s"] == pytest.approx(79.0)
    assert st.readings[0]["ohm"] == 10.5
    est = st.estimate()
    assert est.ratio == pytest.approx(1.05)
    assert est.predicted_final_ohm == pytest.approx(1.05 * 95.0)
    assert effective_state(st, tmp_path) == "interrupted"   # no host holds the lock


def test_state_pause_link_loss_and_finish(tmp_path):
    p, j = _journal(tmp_path)
    j.append("checkpoint", turns=10.0, rpm=60.0, elapsed_s=1.0, t=100.0)
    j.append("link_lost", turns=10.0, reason="silence", t=101.0)
    j.append("link_back", turns=12.0, rebooted=False, device_turns=12.0, t=104.0)
    j.append("paused", turns=12.0, reason="signal SIGTERM", t=105.0)
    j.append("resumed", turns=12.0, device_turns=12.0, boot_id="b1", same_boot=True,
             state="paused", t=200.0)
    j.append("continued", turns=12.0, t=201.0)
    j.append("wire_break", turns=20.0, note="", t=210.0)
    j.append("splice", turns=20.0, note="soldered", t=260.0)
    j.append("continued", turns=20.0, t=261.0)
    j.append("finished", turns=1000.0, reason="planned turns", t=300.0)
    j.close()
    st = rebuild(replay(p).events)
    assert st.state == "finished" and st.turns == 1000.0 and st.splices == 1
    kinds = [i["kind"] for i in st.interruptions]
    assert kinds == ["link_lost", "host_stopped", "wire_break"]
    assert st.interruptions[0]["duration_s"] == pytest.approx(3.0)
    assert st.interruptions[1]["duration_s"] == pytest.approx(95.0)
    assert all(i["t_end"] is not None for i in st.interruptions)
    assert effective_state(st, tmp_path) == "finished"
