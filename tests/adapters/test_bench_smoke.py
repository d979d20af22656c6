"""Smoke test: the adapter memory benchmark runs end to end on a tiny input."""

from __future__ import annotations

import io

import pytest

from tests.bench import bench_adapter_memory as bench


def test_bench_runs_with_tiny_input(capsys: pytest.CaptureFixture[str]) -> None:
    """The benchmark streams N generated rows through both readers and reports rates and memory."""
    assert bench.main(["--rows", "500"]) == 0
    out = capsys.readouterr().out
    assert "rows                      500" in out
    assert "adapter / baseline speed" in out and "peak RSS growth" in out


def test_generated_csv_has_the_rows_asked_for() -> None:
    """The generator yields a header and exactly N rows, read in arbitrary chunk sizes."""
    stream = io.BufferedReader(bench.GeneratedCsv(1234), buffer_size=97)
    assert stream.read().count(b"\n") == 1235
