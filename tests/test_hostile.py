"""Hostile and damaged drawings: each gets one clear line or the right finding, quickly.

Cases found by attacking the reader; each is kept here with what it must give."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest


def _check(path: Path, *args: str) -> subprocess.CompletedProcess:
    """The command line on ``path``; a run past 30 s is a hang (``TimeoutExpired`` fails the test)."""
    return subprocess.run([sys.executable, "-m", "layout.cli", "check", str(path), "--read-only", *args],
                          capture_output=True, text=True, timeout=30)


@pytest.mark.parametrize("filler", [b"\n" * 8000, b" \n" * 4000, b"\t\r\n" * 3000])
def test_a_header_without_its_endsec_is_read_in_linear_time(tmp_path, filler):
    # a line-anchored header search: before, a lazy match between multi-line whitespace runs
    # took 2.2 s on 2000 newlines and grew with their cube (8 KB: about 150 s)
    from layout.read import _raw_header

    data = b"0\nSECTION\n2\nHEADER\n9\n$ACADVER\n1\nAC1015\n" + filler
    assert _raw_header(data, False) == ("AC1015", None)
    path = tmp_path / "header.dxf"
    path.write_bytes(data)
    r = _check(path)
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1 and "Traceback" not in r.stderr
