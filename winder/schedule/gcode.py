"""G-code export (ISO 6983 / RS-274 words only) for general-purpose CNC controllers.

For a controller that drives a linear axis carrying the wire guide and a rotary
axis turning the bobbin. Words used: ``G0`` (rapid move), ``G1`` (feed move),
``F`` (feed rate), the axis letters ``X`` and ``A``, and in the one-line
preamble ``G21`` (millimetres), ``G90`` (absolute positions), ``G94`` (feed per
minute) and ``M2`` (end of program). Comments are in parentheses.

Axis mapping and units:

* ``X`` - the wire guide, millimetres along the window from the start flange
  (set the work zero of X with the guide centred on the wire at the start
  flange's inner face).
* ``A`` - the spindle, degrees, cumulative: 360 per turn, so a 10,000-turn coil
  ends at A3600000. Set A0 where the wire is anchored.
* ``F`` - on a move of X and A together, the guide's feed in mm/min (RS-274:
  the feed applies to the linear axes and the rotary axis is coordinated to
  finish with them), i.e. pitch (mm/turn) x spindle speed (rpm).

Each pass is one ``G1`` move (split where the slow start or slow finish
begins or ends, with a lower ``F``). The controller's own acceleration limits
handle the reversals; check them against the schedule's reversal speeds.
Positions are rounded to 0.1 um (X) and 0.001 degree (A) from the exact
cumulative values, so nothing drifts.
"""

from __future__ import annotations

from winder.schedule.passes import Schedule


def _num(x: float, digits: int) -> str:
    text = f"{x:.{digits}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def to_gcode(schedule: Schedule) -> str:
    """The schedule as an RS-274 program (text, one block per line, newline-terminated)."""
    sp = schedule.machine.spindle
    total = schedule.total_turns
    slow_end = min(float(sp.slow_start_turns), total)
    fin = max(total - sp.slow_finish_turns, 0.0)
    lines = [
        f"(winder schedule: {_clean(schedule.coil_name)}, {schedule.style}, "
        f"{len(schedule.passes)} passes, {total:g} turns)",
        "(X = wire guide, mm from the start flange; A = spindle, degrees, 360 per turn)",
        "(F = guide feed, mm/min, on coordinated X-A moves)",
        "G21 G90 G94",
    ]
    if schedule.passes:
        lines.append(f"G0 X{_num(schedule.passes[0].start_mm, 4)} A0")
    x = schedule.passes[0].start_mm if schedule.passes else 0.0
    for p in schedule.passes:
        if abs(p.start_mm - x) > 5e-5:
            lines.append(f"G0 X{_num(p.start_mm, 4)}")
        t0 = p.turns_start
        cuts = sorted({t0, p.turns_end, *(c for c in (slow_end, fin) if t0 < c < p.turns_end)})
        for a, b in zip(cuts, cuts[1:], strict=False):
            mid = 0.5 * (a + b)
            rpm = p.rpm
            if mid < slow_end or mid > fin:
                rpm = min(rpm, sp.slow_rpm)
            xb = p.position_at(b) if b < p.turns_end else p.end_mm
            feed = p.pitch_mm * rpm
            lines.append(f"G1 X{_num(xb, 4)} A{_num(b * 360.0, 3)} F{_num(feed, 1)}")
        x = p.end_mm
    lines.append("M2")
    return "\n".join(lines) + "\n"


def _clean(text: str) -> str:
    """Comment text without parentheses (they would end the comment)."""
    return text.replace("(", "[").replace(")", "]") or "coil"
