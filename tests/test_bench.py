"""Smoke test of the performance benchmark: ``--quick`` runs and produces every row.

No timing is asserted here (figures belong in the benchmark's table, not in CI);
the test checks that every row is measured, or says precisely which module is
missing, and that nothing in the benchmark crashed.
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from tests.conftest import ROOT, cli_env
from winder.bench import ROWS, Row, format_table, missing
from winder.bench.link_rows import BAUD, BITS_PER_BYTE, line_rate, status_lines


@pytest.fixture(scope="module")
def quick(tmp_path_factory) -> dict:
    data = tmp_path_factory.mktemp("bench-data")
    proc = subprocess.run([sys.executable, "-m", "winder.bench", "--quick", "--json", "--quiet"],
                          capture_output=True, text=True, timeout=180, cwd=ROOT,
                          env=cli_env(data))
    assert proc.returncode == 0, proc.stderr[-2000:]
    return json.loads(proc.stdout)


def test_quick_run_produces_every_row(quick):
    assert [r["key"] for r in quick["rows"]] == list(ROWS)
    for r in quick["rows"]:
        fig = r["figure"]
        assert not fig.startswith("failed"), f"{r['key']}: {fig}"
        if fig.startswith("not available: "):
            assert fig.endswith(" missing") and r["verdict"] == "n/a", r
            continue
        assert r["value"] is not None and r["unit"], r
        assert r["verdict"] in ("pass", "short"), r      # every row has a budget
        assert r["budget"] != "-", r


def test_quick_run_names_the_machine(quick):
    assert "cores available" in quick["machine"] and "Python" in quick["machine"]


def test_missing_module_is_named():
    assert missing("winder.no_such_part") == "not available: winder.no_such_part missing"
    assert missing("winder.planner") is None


def test_table_has_every_row_and_its_verdict():
    rows = [Row(k, f"title {k}", f"{i} ms", "<= 5 ms", "pass" if i < 5 else "short")
            for i, k in enumerate(ROWS)]
    text = format_table(rows)
    md = format_table(rows, markdown=True)
    for r in rows:
        assert r.title in text and r.title in md
    assert text.count("short") == len(ROWS) - 5
    assert md.splitlines()[1].count("---") == 4


def test_line_rate_is_the_8n1_byte_rate_over_the_status_line_length():
    # UART 8N1 framing: 1 start + 8 data + 1 stop bit = 10 bits per byte
    # (common practice, no source), so 115200 baud carries 11,520 bytes/s.
    assert BAUD / BITS_PER_BYTE == 11_520
    lines = status_lines(50)
    rate, mean = line_rate(lines)
    assert mean == sum(map(len, lines)) / 50
    assert rate == pytest.approx(11_520 / mean)
    assert all(x.startswith(b"ST c=") and x.endswith(b"\n") for x in lines)
