"""The link codec: CRC vectors, round trips, framing, and hostile input."""

from __future__ import annotations

import binascii

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from winder.errors import WinderError
from winder.link.codec import (
    MAX_LINE,
    LineFramer,
    crc16,
    encode_command,
    encode_device,
    encode_hello,
    encode_status,
    parse_device_line,
    parse_host_line,
)
from winder.link.counting import TurnTracker
from winder.link.errors import FrameError, LinkError
from winder.link.messages import (
    Ack,
    EventReport,
    Hello,
    Nak,
    PlainCount,
    StatusReport,
    faults_from_bits,
    faults_to_bits,
)

# Check values from the "Catalogue of parametrised CRC algorithms" (G. Cook, reveng),
# check string b"123456789" (values quoted from memory of that catalogue):
#   CRC-16/IBM-3740, alias CRC-16/CCITT-FALSE: poly 0x1021 init 0xFFFF, no reflection,
#   xorout 0 -> check 0x29B1
#   CRC-16/XMODEM: poly 0x1021 init 0x0000 -> check 0x31C3
#   CRC-16/GENIBUS: as IBM-3740 with xorout 0xFFFF -> check 0xD64E


def test_crc16_ccitt_false_check_value():
    assert crc16(b"123456789") == 0x29B1


def test_crc_hqx_is_the_catalogue_algorithm():
    assert binascii.crc_hqx(b"123456789", 0) == 0x31C3            # CRC-16/XMODEM
    assert crc16(b"123456789") ^ 0xFFFF == 0xD64E                # CRC-16/GENIBUS
    assert crc16(b"") == 0xFFFF                                  # init value, no data


def test_worked_example_lines_from_the_protocol_document():
    # the exact lines printed in firmware-protocol.md
    assert encode_command(1, "HI") == b"1 HI *%04X\n" % crc16(b"1 HI")
    assert encode_command(0, "BEAT") == b"0 BEAT *%04X\n" % crc16(b"0 BEAT")
    st_line = b"ST c=1234 rpm=1500 g=12.5 s=run f=0 q=3"
    assert encode_status(StatusReport(1234, 1500.0, 12.5, "run", 0, 3)) == (
        st_line + b" *%04X\n" % crc16(st_line))


def test_single_bit_errors_are_all_detected():
    line = encode_status(StatusReport(98765, 1432.5, 33.25, "run", 0, 2))[:-1]
    for i in range(len(line) - 5):        # every bit of the body
        for bit in range(8):
            bad = bytearray(line)
            bad[i] ^= 1 << bit
            with pytest.raises(FrameError):
                parse_device_line(bytes(bad))


def test_device_messages_round_trip():
    h = Hello(1, "00c0ffee", 4, frozenset({"count", "spindle", "traverse"}), 2**16, 1000,
              16, "fw-2", "idle")
    assert parse_device_line(encode_hello(h)[:-1]) == h
    s = StatusReport(2**32 - 1, 2999.9, 59.999, "hold", 0x5, 16)
    assert parse_device_line(encode_status(s)[:-1]) == s
    assert parse_device_line(encode_device("ACK", 17)[:-1]) == Ack(17)
    assert parse_device_line(encode_device("NAK", 17, "FUL")[:-1]) == Nak(17, "FUL")
    ev = parse_device_line(encode_device("EV", "reading", ohm=7012.5, c=8000)[:-1])
    assert ev == EventReport("reading", {"ohm": 7012.5, "c": 8000.0})


def test_counter_without_guide_has_no_g_field():
    s = StatusReport(10, 60.0, None, "idle", 0, 0)
    assert b" g=" not in encode_status(s)
    assert parse_device_line(encode_status(s)[:-1]) == s


def test_plain_integer_lines_only_when_allowed():
    assert parse_device_line(b"12345", allow_plain=True) == PlainCount(12345)
    assert parse_device_line(b"  -3 ", allow_plain=True) == PlainCount(-3)
    with pytest.raises(FrameError):
        parse_device_line(b"12345")
    with pytest.raises(FrameError):
        parse_device_line(b"12a45", allow_plain=True)


def test_fault_bits():
    assert faults_from_bits(0x5) == {"watchdog", "estop"}
    assert faults_to_bits({"stall", "limit"}) == 0x0A


tokens = st.text(alphabet=st.characters(min_codepoint=33, max_codepoint=126,
                                        blacklist_characters="*"), min_size=1, max_size=10)


@given(seq=st.integers(0, 65535), verb=st.sampled_from(["HI", "PASS", "ZERO", "XYZ"]),
       args=st.lists(tokens, max_size=5))
def test_host_command_round_trip(seq, verb, args):
    line = encode_command(seq, verb, *args)
    assert line.endswith(b"\n") and len(line) <= MAX_LINE
    cmd = parse_host_line(line[:-1])
    assert (cmd.seq, cmd.verb, cmd.args) == (seq, verb, tuple(args))


@given(count=st.integers(0, 2**32 - 1), rpm=st.floats(0, 3000),
       guide=st.one_of(st.none(), st.floats(0, 999)),
       state=st.sampled_from(["idle", "run", "hold", "fault", "estop"]),
       bits=st.integers(0, 15), q=st.integers(0, 65535))
def test_status_round_trip(count, rpm, guide, state, bits, q):
    line = encode_status(StatusReport(count, rpm, guide, state, bits, q))
    got = parse_device_line(line[:-1])
    assert got.count == count and got.state == state and got.fault_bits == bits
    assert got.queued == q
    assert got.rpm == pytest.approx(rpm, abs=0.051)
    if guide is None:
        assert got.guide_mm is None
    else:
        assert got.guide_mm == pytest.approx(guide, abs=0.00051)


@settings(max_examples=400)
@given(st.binary(max_size=300))
def test_random_bytes_raise_only_our_errors(data):
    for fn in (parse_host_line, parse_device_line,
               lambda b: parse_device_line(b, allow_plain=True)):
        try:
            fn(data)
        except LinkError as err:
            assert isinstance(err, WinderError)
            assert "\n" not in str(err)


@settings(max_examples=200)
@given(st.binary(max_size=60), st.integers(0, 200))
def test_random_mutation_of_valid_lines(noise, where):
    line = bytearray(encode_status(StatusReport(4242, 1200.0, 10.0, "run", 0, 1))[:-1])
    pos = where % (len(line) + 1)
    line[pos:pos] = noise
    try:
        parse_device_line(bytes(line))
    except FrameError:
        pass


@settings(max_examples=100)
@given(st.lists(st.integers(0, 2**32 - 1), min_size=1, max_size=20), st.data())
def test_framer_reassembles_any_chunking(counts, data):
    stream = b"".join(encode_status(StatusReport(c, 0.0, None, "idle", 0, 0)) for c in counts)
    cuts = sorted(data.draw(st.lists(st.integers(0, len(stream)), max_size=10)))
    fr = LineFramer()
    lines = []
    prev = 0
    for c in [*cuts, len(stream)]:
        lines += fr.feed(stream[prev:c])
        prev = c
    assert [parse_device_line(x).count for x in lines] == counts


def test_framer_drops_overlong_lines_and_resynchronises():
    fr = LineFramer(max_line=32)
    good = encode_device("ACK", 5)
    out = fr.feed(b"x" * 100)
    out += fr.feed(b"y" * 100 + b"\n" + good)
    assert out == [good[:-1]]
    assert fr.overlong == 1
    assert fr.feed(b"\r\n\n") == []            # empty lines and bare CR dropped


def test_torn_line_is_rejected_not_merged():
    a = encode_status(StatusReport(100, 0.0, None, "idle", 0, 0))
    b = encode_status(StatusReport(200, 0.0, None, "idle", 0, 0))
    fr = LineFramer()
    lines = fr.feed(a[:20] + b)                # first line lost its tail and its LF
    assert len(lines) == 1
    with pytest.raises(FrameError):
        parse_device_line(lines[0])


def test_encode_rejects_unsafe_tokens():
    for bad in ("two words", "star*", "", "caf\u00e9"):
        with pytest.raises(FrameError):
            encode_command(1, "PASS", bad)
    with pytest.raises(FrameError):
        encode_command(70000, "HI")


def test_tracker_unwraps_counter():
    t = TurnTracker(counts_per_rev=4, wrap=256)
    for raw in (250, 254, 2, 10, 130, 250, 3):     # wraps forward twice
        t.update(raw)
    assert t.total == 250 + 4 + 4 + 8 + 120 + 120 + 9
    t.update(250)                              # a step of more than wrap/2 reads as backward
    assert t.total == 515 - 9
    assert t.turns == t.total / 4


def test_tracker_small_backward_steps_and_reboot_offset():
    t = TurnTracker(1, 2**32)
    t.update(1000)
    t.update(998)                              # a quadrature counter backing off
    assert t.total == 998
    t.rebooted(1, 2**32)                       # device restarted at 0
    t.update(5)
    assert t.total == 1003
    assert t.offset == 998
    t.set(0, 0)                                # host zero
    t.update(2)
    assert t.total == 2


kv_tokens = st.one_of(
    tokens,
    st.builds(lambda k, v: f"{k}={v}",
              st.sampled_from(["c", "rpm", "g", "s", "f", "q", "proto", "boot", "cpr", "caps",
                               "bits", "wdog_ms", "qmax", "fw", "ohm"]),
              st.one_of(tokens, st.integers(-10, 2**70).map(str),
                        st.floats(allow_nan=True, allow_infinity=True).map(str))),
)


@settings(max_examples=150)
@given(kind=st.sampled_from(["ST", "ACK", "NAK", "EV", "HELLO", "??"]),
       rest=st.lists(kv_tokens, max_size=12))
def test_sealed_garbage_past_the_crc_raises_only_frame_errors(kind, rest):
    body = " ".join([kind, *rest]).encode()
    line = body + b" *%04X" % crc16(body)
    try:
        msg = parse_device_line(line)
    except FrameError:
        return
    assert msg is not None


def _crc_bitwise(data: bytes) -> int:
    """The bit-at-a-time loop printed in firmware-protocol.md, transcribed."""
    crc = 0xFFFF
    for b in data:
        crc ^= b << 8
        for _ in range(8):
            crc = ((crc << 1) ^ 0x1021) & 0xFFFF if crc & 0x8000 else (crc << 1) & 0xFFFF
    return crc


@given(st.binary(max_size=200))
def test_documented_firmware_crc_loop_matches_crc_hqx(data):
    assert _crc_bitwise(data) == crc16(data)
