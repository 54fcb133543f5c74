"""firmware-protocol.md: every example line carries a correct checksum and parses."""

from __future__ import annotations

import re
from pathlib import Path

from winder.link.codec import MAX_LINE, crc16, parse_device_line, parse_host_line

DOC = Path(__file__).resolve().parent.parent / "firmware-protocol.md"
LINE = re.compile(r"^([<>]) (.+ \*[0-9A-F]{4})\s*(?:\(.*\))?$")


def example_lines():
    out = []
    in_code = False
    for raw in DOC.read_text().splitlines():
        if raw.startswith("```"):
            in_code = not in_code
            continue
        m = LINE.match(raw.strip()) if in_code else None
        if m:
            out.append((m.group(1), m.group(2)))
    return out


def test_the_document_has_worked_examples_in_both_directions():
    lines = example_lines()
    assert sum(d == ">" for d, _ in lines) >= 15
    assert sum(d == "<" for d, _ in lines) >= 20


def test_every_example_checksum_is_correct_and_every_line_parses():
    for direction, text in example_lines():
        raw = text.encode("ascii")
        body, crc = raw[:-6], int(raw[-4:], 16)
        assert crc16(body) == crc, text
        assert len(raw) + 1 <= MAX_LINE
        if direction == ">":
            parse_host_line(raw)
        else:
            parse_device_line(raw)


def test_check_value_quoted_in_the_document():
    text = DOC.read_text()
    assert "0x29B1" in text and crc16(b"123456789") == 0x29B1
    assert "160 bytes including the LF" in text and MAX_LINE == 160
