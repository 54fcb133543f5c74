"""G-code export: RS-274 words only, checked line by line on a two-layer coil."""

from __future__ import annotations

import re

import schedule_support as sup

from winder.schedule import build_schedule
from winder.schedule.gcode import to_gcode
from winder.schedule.machine import Machine, Spindle

MACHINE = Machine(spindle=Spindle(max_rpm=600.0, accel_rpm_s=600.0, slow_rpm=120.0,
                                  slow_start_turns=2, slow_finish_turns=3))


def test_two_layer_coil_line_by_line():
    # 18 turns of 1 mm wire in a 0.5..9.5 mm usable window: two 9-turn layers at 1 mm pitch.
    # Slow start covers turns 0-2, slow finish turns 15-18 at 120 rpm; cruise 600 rpm.
    # F (guide feed) = pitch x rpm: 1 mm x 120 = 120 mm/min, 1 mm x 600 = 600 mm/min.
    # A = turns x 360 degrees; X after t turns of an outward pass = 0.5 + t mm.
    s = build_schedule(sup.plan(18, name="two-layer"), MACHINE)
    assert to_gcode(s).splitlines() == [
        "(winder schedule: two-layer, layer, 2 passes, 18 turns)",
        "(X = wire guide, mm from the start flange; A = spindle, degrees, 360 per turn)",
        "(F = guide feed, mm/min, on coordinated X-A moves)",
        "G21 G90 G94",
        "G0 X0.5 A0",
        "G1 X2.5 A720 F120",        # turns 0-2, slow start
        "G1 X9.5 A3240 F600",       # turns 2-9, end of layer 0
        "G1 X3.5 A5400 F600",       # turns 9-15, homeward
        "G1 X0.5 A6480 F120",       # turns 15-18, slow finish
        "M2",
    ]


def test_orthocyclic_offset_is_a_guide_only_move():
    s = build_schedule(sup.plan(17, kind="orthocyclic"), MACHINE)
    lines = to_gcode(s).splitlines()
    # Layer 1 (8 turns) starts half a pitch in from the far end: 9.0 mm, spindle still.
    i = lines.index("G0 X9")
    assert lines[i - 1].startswith("G1 X9.5 A3240 ")
    assert lines[i + 1].startswith("G1 X4 A5040 ")     # 9 - 5 turns x 1 mm: slow finish at 14


WORD = re.compile(r"^(G0|G1|G21|G90|G94|M2|[XAF]-?\d+(\.\d+)?)$")


def test_only_standard_words_and_exact_end_positions():
    s = build_schedule(sup.plan(5000, kind="scatter", od_mm=0.07, size="0.063 mm", seed=9))
    text = to_gcode(s)
    lo, hi = s.window_mm
    last_a = None
    for line in text.splitlines():
        if line.startswith("("):
            assert line.endswith(")") and line.count("(") == 1
            continue
        for word in line.split():
            assert WORD.match(word), (line, word)
            if word[0] == "X":
                assert lo - 1e-4 <= float(word[1:]) <= hi + 1e-4
            if word[0] == "A":
                a = float(word[1:])
                assert last_a is None or a >= last_a
                last_a = a
    assert last_a == 5000 * 360
    assert text.endswith("M2\n")
