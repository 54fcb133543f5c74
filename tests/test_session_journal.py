"""Journal: append-only JSON Lines, fsync per line, torn last line, format versions."""

from __future__ import annotations

import json
import os

import pytest

from winder.errors import InputError
from winder.session import journal as jr
from winder.session.journal import CheckpointPolicy, Journal, replay


def _write_some(path, n=5):
    j = Journal.create(path, {"session": "s-1", "coil": "c", "planned_turns": 100})
    for i in range(n):
        j.append("checkpoint", turns=float(10 * i), rpm=300.0, elapsed_s=float(i))
    j.close()


def test_create_append_replay_round_trip(tmp_path):
    p = tmp_path / "journal.jsonl"
    _write_some(p)
    lines = p.read_bytes().split(b"\n")
    assert lines[-1] == b""                       # every line ends with a newline
    first = json.loads(lines[0])
    assert first["kind"] == "started" and first["format"] == jr.FORMAT_VERSION
    rep = replay(p)
    assert [e["seq"] for e in rep.events] == list(range(6))
    assert rep.torn is None
    assert rep.events[-1]["turns"] == 40.0


def test_every_append_is_fsynced(tmp_path, monkeypatch):
    calls = []
    real = os.fsync
    monkeypatch.setattr(jr.os, "fsync", lambda fd: (calls.append(fd), real(fd)))
    p = tmp_path / "journal.jsonl"
    j = Journal.create(p, {"session": "s"})
    n0 = len(calls)
    j.append("note", text="hello", turns=0)
    j.append("checkpoint", turns=1.0, rpm=1.0, elapsed_s=1.0)
    assert len(calls) - n0 == 2
    j.close()


def test_unknown_kind_refused(tmp_path):
    j = Journal.create(tmp_path / "j.jsonl", {"session": "s"})
    with pytest.raises(ValueError):
        j.append("teleported")
    j.close()


@pytest.mark.parametrize("fragment", [
    b'{"seq":6,"t":1.0,"kind":"checkp', b'{"seq":6}', b"\x00\x00"])
def test_torn_last_line_is_reported_not_rewritten(tmp_path, fragment):
    p = tmp_path / "journal.jsonl"
    _write_some(p)
    with open(p, "ab") as fh:
        fh.write(fragment)
    before = p.read_bytes()
    rep = replay(p)
    assert len(rep.events) == 6
    assert rep.torn is not None and rep.torn.line == 7 and rep.torn.size == len(fragment)
    assert "torn" in rep.torn.describe()
    assert p.read_bytes() == before               # replay never touches the file


def test_complete_json_without_newline_counts_as_torn(tmp_path):
    p = tmp_path / "journal.jsonl"
    _write_some(p)
    with open(p, "ab") as fh:
        fh.write(b'{"seq":6,"t":1.0,"kind":"note","text":"x"}')
    rep = replay(p)
    assert len(rep.events) == 6 and rep.torn is not None


def test_append_after_torn_line_keeps_fragment_and_acknowledges_it(tmp_path):
    p = tmp_path / "journal.jsonl"
    _write_some(p)
    with open(p, "ab") as fh:
        fh.write(b'{"seq":6,"t":1.0,"ki')
    j = Journal.open_append(p)
    j.append("resumed", turns=40.0, device_turns=42.0, boot_id="b", same_boot=True)
    j.close()
    raw = p.read_bytes()
    assert b'{"seq":6,"t":1.0,"ki\n' in raw         # fragment kept, only terminated
    rep = replay(p)
    assert rep.torn is None
    assert [f.acknowledged for f in rep.fragments] == [True]
    kinds = [e["kind"] for e in rep.events]
    assert kinds[-2:] == ["torn_line", "resumed"]
    assert [e["seq"] for e in rep.events] == list(range(8))


def test_damage_in_the_middle_is_an_error(tmp_path):
    p = tmp_path / "journal.jsonl"
    _write_some(p)
    data = p.read_bytes().split(b"\n")
    data[2] = b"garbage"
    p.write_bytes(b"\n".join(data))
    with pytest.raises(InputError, match="line 3"):
        replay(p)


def test_newer_format_refused_with_one_line_message(tmp_path):
    p = tmp_path / "journal.jsonl"
    p.write_text(json.dumps({"seq": 0, "t": 1.0, "kind": "started", "format": 99}) + "\n")
    with pytest.raises(InputError) as exc:
        replay(p)
    msg = str(exc.value)
    assert "format 99 is newer" in msg and "upgrade" in msg and "\n" not in msg


def test_first_line_must_be_started(tmp_path):
    p = tmp_path / "journal.jsonl"
    p.write_text(json.dumps({"seq": 0, "t": 1.0, "kind": "note"}) + "\n")
    with pytest.raises(InputError, match="started"):
        replay(p)


def test_overlong_line_refused_when_reading(tmp_path):
    p = tmp_path / "journal.jsonl"
    _write_some(p, 1)
    with open(p, "ab") as fh:
        fh.write(b'{"kind":"note","text":"' + b"x" * (jr.MAX_LINE_BYTES + 10) + b'"}\n')
    with pytest.raises(InputError, match="longer than"):
        replay(p)


def test_overlong_event_refused_when_writing(tmp_path):
    j = Journal.create(tmp_path / "j.jsonl", {"session": "s"})
    with pytest.raises(ValueError):
        j.append("note", text="x" * jr.MAX_LINE_BYTES)
    j.close()


def test_checkpoint_policy_interval_and_turns():
    pol = CheckpointPolicy(interval_s=1.0, every_turns=100, min_gap_s=0.1)
    assert pol.due(0.0, 0.0)
    pol.mark(0.0, 0.0)
    assert not pol.due(0.0, 5.0)            # count unchanged: nothing to record
    assert not pol.due(50.0, 0.5)           # neither a second nor 100 turns
    assert pol.due(50.0, 1.0)               # a second has passed
    assert pol.due(100.0, 0.5)              # 100 turns have passed
    assert not pol.due(500.0, 0.05)         # but never closer than min_gap


def _big(path, n):
    j = Journal.create(path, {"session": "s"}, fsync=False)
    for i in range(n):
        j.append("checkpoint", turns=float(i), rpm=1.0, elapsed_s=0.0, t=1.0 + i)
    j.close()


def test_multi_chunk_replay_matches_line_by_line(tmp_path, monkeypatch):
    monkeypatch.setattr(jr, "CHUNK_BYTES", 4096)     # many chunks, lines split across them
    p = tmp_path / "journal.jsonl"
    _big(p, 2000)
    rep = replay(p)
    assert [e["seq"] for e in rep.events] == list(range(2001))
    assert rep.events[-1]["turns"] == 1999.0


def test_acknowledged_fragment_and_damage_across_chunks(tmp_path, monkeypatch):
    monkeypatch.setattr(jr, "CHUNK_BYTES", 4096)
    p = tmp_path / "journal.jsonl"
    _big(p, 300)
    with open(p, "ab") as fh:
        fh.write(b'{"seq":301,"t":1.0,"ki')
    j = Journal.open_append(p)
    for i in range(300):
        j.append("checkpoint", turns=float(1000 + i), rpm=1.0, elapsed_s=0.0)
    j.close()
    rep = replay(p)
    assert rep.torn is None and len(rep.fragments) == 1 and rep.fragments[0].line == 302
    assert rep.events[-1]["turns"] == 1299.0 and len(rep.events) == 301 + 1 + 300
    lines = p.read_bytes().split(b"\n")
    lines[500] = b'{"seq":1,"kind":"note"},{"seq":2,"kind":"note"}'   # two JSON values
    p.write_bytes(b"\n".join(lines))
    with pytest.raises(InputError, match="line 501"):
        replay(p)
