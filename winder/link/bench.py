"""Codec parse rate against what a 115200-baud line can carry.

Run ``python -m winder.link.bench``. Reports lines per second on one core for
typical status lines (framing plus parsing, fed in 4 KiB chunks as the reader
thread does), the line rate of 115200 8N1 (10 bits per byte) for the same line
length, and their ratio. It also times receiving through a real pty with
pyserial, ``readline()`` against ``read(in_waiting or 1)`` and the framer.
"""

from __future__ import annotations

import argparse
import json
import time

from winder.link.codec import LineFramer, encode_status, parse_device_line
from winder.link.messages import StatusReport

BAUD = 115200
BITS_PER_BYTE = 10   # 8N1: start + 8 data + stop


def sample_stream(n: int) -> tuple[bytes, float]:
    """``n`` realistic status lines; returns (stream, mean line length in bytes)."""
    lines = [
        encode_status(StatusReport(5000 + 7 * i, 1400.0 + (i % 200) * 0.5,
                                   5.0 + (i % 4000) * 0.005, "run", 0, 3))
        for i in range(n)
    ]
    data = b"".join(lines)
    return data, len(data) / n


def parse_rate(n: int = 100_000, repeat: int = 3) -> dict:
    """Best-of-``repeat`` framing+parsing rate for ``n`` status lines, per CPU-second."""
    data, mean_len = sample_stream(n)
    chunks = [data[i:i + 4096] for i in range(0, len(data), 4096)]
    best = float("inf")
    for _ in range(repeat):
        fr = LineFramer()
        t0 = time.process_time()      # CPU time of this single-threaded loop: one core
        got = 0
        for c in chunks:
            for line in fr.feed(c):
                parse_device_line(line)
                got += 1
        best = min(best, time.process_time() - t0)
        assert got == n
    rate = n / best
    line_rate = BAUD / BITS_PER_BYTE / mean_len
    return {
        "lines": n, "mean_line_bytes": round(mean_len, 1),
        "parse_lines_per_s": round(rate), "line_rate_115200_per_s": round(line_rate, 1),
        "ratio": round(rate / line_rate, 1),
    }


def pty_rates(n: int = 20_000) -> dict:
    """Lines/s received through a real pty with pyserial: ``readline()`` against
    ``read(in_waiting or 1)`` plus :class:`LineFramer` (both parse every line)."""
    import os
    import threading
    import tty

    import serial

    data, _ = sample_stream(n)
    out = {}
    for how in ("readline", "framer"):
        master, slave = os.openpty()
        tty.setraw(master)
        tty.setraw(slave)
        port = serial.serial_for_url(os.ttyname(slave), baudrate=BAUD, timeout=0.5)

        def feed(fd=master):
            view = memoryview(data)
            while view:
                k = os.write(fd, view[:4096])
                view = view[k:]

        t = threading.Thread(target=feed, daemon=True)
        t0 = time.perf_counter()
        t.start()
        got = 0
        if how == "readline":
            while got < n:
                line = port.readline()
                if not line:
                    break
                parse_device_line(line.rstrip(b"\r\n"))
                got += 1
        else:
            fr = LineFramer()
            while got < n:
                chunk = port.read(port.in_waiting or 1)
                if not chunk:
                    break
                for line in fr.feed(chunk):
                    parse_device_line(line)
                    got += 1
        dt = time.perf_counter() - t0
        t.join(5)
        port.close()
        os.close(master)
        os.close(slave)
        out[f"pty_{how}_lines_per_s"] = round(got / dt)
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("-n", type=int, default=100_000)
    ap.add_argument("--json", action="store_true")
    a = ap.parse_args()
    r = parse_rate(a.n) | pty_rates(max(1000, a.n // 5))
    if a.json:
        print(json.dumps(r))
    else:
        print(f"status line {r['mean_line_bytes']} bytes; 115200 baud carries "
              f"{r['line_rate_115200_per_s']} lines/s")
        print(f"codec parses {r['parse_lines_per_s']} lines/s on one core "
              f"= {r['ratio']} x line rate")
        print(f"through a pty with pyserial: readline() {r['pty_readline_lines_per_s']} lines/s, "
              f"read(in_waiting or 1) + framer {r['pty_framer_lines_per_s']} lines/s")


if __name__ == "__main__":
    main()
