"""Hypothesis fuzzing of journal replay (truncation, corruption) and the link codec.

Journal: a real journal (written by :class:`Journal`) cut at any byte or with bytes
replaced replays to a prefix of its events (a torn last line reported) or gives a
one-line :class:`InputError`; folding the events never raises anything else.
Codec: any byte stream through :class:`LineFramer` and the parsers yields messages or
:class:`FrameError`; a valid line with a byte changed is never accepted as a message
(CRC-16/CCITT-FALSE detects every error burst of 16 bits or less: Koopman and
Chakravarty, "Cyclic Redundancy Code (CRC) Polynomial Selection for Embedded
Networks", DSN 2004, on burst detection of degree-16 polynomials with a +1 term).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from winder.errors import InputError
from winder.link.codec import (
    MAX_LINE,
    LineFramer,
    encode_command,
    encode_device,
    encode_status,
    parse_device_line,
    parse_host_line,
)
from winder.link.errors import FrameError
from winder.link.messages import StatusReport
from winder.session.journal import Journal, replay
from winder.session.state import rebuild

FUZZ = settings(max_examples=200, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


def write_journal(path: Path) -> list[dict]:
    """A journal as a session writes it: started, checkpoints, readings, faults, finish."""
    started = {"session": "fuzz-20260101-001", "coil": "fuzz coil", "planned_turns": 500.0,
               "stop_turns": 500.0, "target": {"turns": 500},
               "curve": [[0.0, 0.0], [250.0, 10.0], [650.0, 26.0]],
               "machine": {"name": "m", "kind": "spindle+traverse"},
               "device": {"boot_id": "a1b2c3d4", "url": "/dev/null"}}
    with Journal.create(path, started, fsync=False) as j:
        for i in range(1, 6):
            j.append("checkpoint", turns=float(i * 50), rpm=1500.0, elapsed_s=float(i))
        j.append("reading", turns=250.0, ohm=10.1, temp_c=22.5, note="", source="device")
        j.append("link_lost", turns=260.0, reason="no valid line for 1.0 s")
        j.append("link_back", turns=270.0, rebooted=True, device_turns=270.0)
        j.append("device_rebooted", boot_id="e5f6a7b8", old_boot_id="a1b2c3d4", turns=270.0,
                 unaccounted_turns=31)
        j.append("paused", turns=300.0, reason="user")
        j.append("continued", turns=300.0)
        j.append("note", text="splice ok \u00b5", turns=300.0)
        j.append("count_corrected", turns=305.0, old_turns=300.0, reason="user", ohm=None)
        j.append("resumed", turns=305.0, device_turns=305.0, boot_id="e5f6a7b8",
                 same_boot=True, journal_turns=305.0, state="paused")
        j.append("continued", turns=305.0)
        j.append("finished", turns=500.0, reason="stop point reached")
    return [json.loads(x) for x in path.read_text().splitlines()]


@pytest.fixture(scope="module")
def journal_bytes(tmp_path_factory) -> tuple[bytes, list[dict]]:
    p = tmp_path_factory.mktemp("j") / "journal.jsonl"
    events = write_journal(p)
    return p.read_bytes(), events


def replay_and_fold(path: Path):
    try:
        rep = replay(path)
    except InputError as err:
        assert "\n" not in str(err) and err.where
        return None
    try:
        rebuild(rep.events)
    except InputError as err:
        assert "\n" not in str(err)
    return rep


def test_the_whole_journal_folds_to_its_end(tmp_path, journal_bytes):
    data, events = journal_bytes
    p = tmp_path / "journal.jsonl"
    p.write_bytes(data)
    st = rebuild(replay(p).events)
    assert st.state == "finished" and st.turns == 500.0
    assert st.boot_ids == ["a1b2c3d4", "e5f6a7b8"]


@FUZZ
@given(cut=st.integers(min_value=0, max_value=10**6))
def test_truncated_anywhere_replays_the_complete_prefix(tmp_path, journal_bytes, cut):
    data, events = journal_bytes
    cut %= len(data) + 1
    p = tmp_path / "journal.jsonl"
    p.write_bytes(data[:cut])
    rep = replay_and_fold(p)
    whole = data[:cut].count(b"\n")
    if rep is None:   # nothing complete: not even the started line
        assert whole == 0
        return
    assert rep.events == events[:whole]
    partial = cut > 0 and not data[:cut].endswith(b"\n")
    assert (rep.torn is not None) == partial
    if partial:
        assert rep.torn.line == whole + 1


@FUZZ
@given(hits=st.lists(st.tuples(st.integers(min_value=0, max_value=10**6),
                               st.integers(min_value=0, max_value=255)),
                     min_size=1, max_size=6),
       cut=st.none() | st.integers(min_value=0, max_value=10**6))
def test_corrupted_bytes_replay_or_give_a_one_line_error(tmp_path, journal_bytes, hits, cut):
    data, events = journal_bytes
    b = bytearray(data)
    for pos, val in hits:
        b[pos % len(b)] = val
    if cut is not None:
        b = b[: cut % (len(b) + 1)]
    p = tmp_path / "journal.jsonl"
    p.write_bytes(bytes(b))
    replay_and_fold(p)


@FUZZ
@given(field=st.sampled_from(["turns", "t", "ohm", "rpm", "temp_c", "unaccounted_turns",
                              "device_turns", "boot_id", "reason", "seq", "kind", "format"]),
       value=st.one_of(st.none(), st.booleans(), st.text(max_size=5), st.integers(),
                       st.floats(allow_nan=False), st.lists(st.integers(), max_size=2),
                       st.dictionaries(st.text(max_size=2), st.integers(), max_size=1)),
       line=st.integers(min_value=0, max_value=100))
def test_wrong_field_types_fold_or_give_a_one_line_error(tmp_path, journal_bytes, field, value,
                                                         line):
    """Valid JSON with a field of the wrong type (bit rot that still parses)."""
    data, events = journal_bytes
    evs = [dict(e) for e in events]
    e = evs[line % len(evs)]
    if field in e or line % 3 == 0:
        e[field] = value
    p = tmp_path / "journal.jsonl"
    p.write_text("".join(json.dumps(x) + "\n" for x in evs))
    replay_and_fold(p)


def test_a_session_with_a_damaged_journal_reports_in_one_line(run_cli, tmp_path, journal_bytes):
    data, _ = journal_bytes
    sdir = tmp_path / "sess"
    sdir.mkdir()
    lines = data.split(b"\n")
    lines[3] = lines[3].replace(b"{", b"[", 1)       # a middle line that is not JSON
    (sdir / "journal.jsonl").write_bytes(b"\n".join(lines))
    r = run_cli("report", sdir)
    assert r.returncode == 2, r.stderr
    assert "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1
    assert "journal" in r.stderr


# ---- codec ----------------------------------------------------------------------------------

def valid_lines() -> list[bytes]:
    return [
        encode_status(StatusReport(1234, 1500.0, 12.5, "run", 0, 3)),
        encode_status(StatusReport(0, 0.0, None, "idle", 1, 0)),
        encode_device("ACK", 17), encode_device("NAK", 18, "FUL"),
        encode_device("EV", "reading", ohm=812.4, c=1200),
        encode_command(5, "PASS", 0.5, 11.5, 40, 1200), encode_command(0, "BEAT"),
        encode_command(9, "LOAD", 1500), encode_command(1, "HI"),
    ]


@FUZZ
@given(chunks=st.lists(st.binary(max_size=300), max_size=20))
def test_any_byte_stream_frames_and_parses_without_escaping(chunks):
    f = LineFramer()
    for c in chunks:
        for line in f.feed(c):
            assert 0 < len(line) < MAX_LINE and b"\n" not in line
            for parser in (parse_device_line, parse_host_line):
                try:
                    parser(line)
                except FrameError:
                    pass
            try:
                parse_device_line(line, allow_plain=True)
            except FrameError:
                pass


@FUZZ
@given(which=st.integers(min_value=0, max_value=100), pos=st.integers(min_value=0),
       val=st.integers(min_value=0, max_value=255))
def test_a_changed_byte_is_never_accepted(which, pos, val):
    lines = valid_lines()
    line = lines[which % len(lines)].rstrip(b"\n")
    i = pos % len(line)
    if line[i] == val:
        return
    bad = line[:i] + bytes([val]) + line[i + 1:]
    host = which % len(lines) >= 5
    parser = parse_host_line if host else parse_device_line
    original = parser(line)
    try:
        got = parser(bad)
    except FrameError:
        return
    # a change can only be accepted if it does not change the meaning (e.g. the checksum's
    # hex digits in another case) -- never a different message
    assert got == original, (bad, got)


@FUZZ
@given(split=st.lists(st.integers(min_value=1, max_value=40), max_size=30),
       noise=st.binary(max_size=200))
def test_valid_lines_survive_any_chunking_after_noise(split, noise):
    f = LineFramer()
    stream = noise + b"\n" + b"".join(valid_lines())
    out: list[bytes] = []
    i = 0
    for n in split:
        out += f.feed(stream[i:i + n])
        i += n
    out += f.feed(stream[i:])
    good = [x.rstrip(b"\n") for x in valid_lines()]
    assert out[-len(good):] == good


def test_an_endless_line_is_bounded():
    f = LineFramer()
    for _ in range(1000):
        assert f.feed(b"A" * 1000) == []
    assert len(f._buf) < MAX_LINE
    assert f.feed(b"\n" + valid_lines()[0]) == [valid_lines()[0].rstrip(b"\n")]


def test_a_field_of_the_wrong_type_reports_in_one_line(run_cli, tmp_path, journal_bytes):
    data, _ = journal_bytes
    sdir = tmp_path / "sess"
    sdir.mkdir()
    lines = data.split(b"\n")
    lines[2] = lines[2].replace(b'"rpm":1500.0', b'"rpm":[1500]')   # still JSON
    assert b'"rpm":[1500]' in lines[2]
    (sdir / "journal.jsonl").write_bytes(b"\n".join(lines))
    r = run_cli("report", sdir)
    assert r.returncode == 2, r.stdout + r.stderr
    assert "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1
    assert "journal line 3" in r.stderr
