"""Hostile and damaged drawings: each gets one clear line or the right finding, quickly.

Cases found by attacking the reader; each is kept here with what it must give."""

from __future__ import annotations

import json
import math
import random
import subprocess
import sys
from pathlib import Path

import pytest


def _check(path: Path, *args: str) -> subprocess.CompletedProcess:
    """The command line on ``path``; a run past 30 s is a hang (``TimeoutExpired`` fails the test)."""
    return subprocess.run([sys.executable, "-m", "layout.cli", "check", str(path), "--read-only", *args],
                          capture_output=True, text=True, timeout=30)


@pytest.mark.parametrize("filler", [b"\n" * 8000, b" \n" * 4000, b"\t\r\n" * 3000],
                         ids=["newlines", "blank-lines", "tab-crlf"])
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


def _r2010(tmp_path: Path, name: str, build) -> Path:
    import ezdxf

    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 4
    build(doc.modelspace())
    path = tmp_path / name
    doc.saveas(path)
    return path


def test_ten_thousand_concentric_circles_are_no_belt_and_no_pile_of_pairs(tmp_path):
    # the duplicate search is in (x, y, r): concentric circles of other radii never pair up
    # (a search in (x, y) alone gave 10**8 candidate pairs and 7.9 GB)
    path = _r2010(tmp_path, "rings.dxf", lambda msp: [msp.add_circle((0, 0), 1.0 + 0.01 * k) for k in range(10_000)])
    r = _check(path)
    assert r.returncode == 2 and "holds no belt loop" in r.stderr and len(r.stderr.strip().splitlines()) == 1


def test_short_lines_with_one_end_far_out_cluster_each_within_its_own_tolerance(tmp_path):
    # one end at 1e12 has a join tolerance of 1e-9 * 1e12 = 1000 units; searching every end
    # that far paired all 10 000 short lines with each other (6.2 GB, then out of memory)
    def build(msp):
        for k in range(10_000):
            x = (k % 100) * 3.0
            y = (k // 100) * 3.0
            msp.add_line((x, y), (x + 1.0, y))
        msp.add_line((0.0, 500.0), (1e12, 500.0))
        msp.add_circle((0.0, 1000.0), 10.0)

    r = _check(_r2010(tmp_path, "far.dxf", build))
    assert r.returncode == 2 and "holds no belt loop" in r.stderr and len(r.stderr.strip().splitlines()) == 1


def _star(msp, n: int, jitter: float) -> None:
    """``n`` lines from one point (each start moved up to ``jitter`` off it), beside nothing."""
    rng = random.Random(5)
    for k in range(n):
        a = 2 * math.pi * k / n
        hub = (1000 + rng.uniform(-jitter, jitter), 1000 + rng.uniform(-jitter, jitter))
        msp.add_line(hub, (1000 + 100 * math.cos(a), 1000 + 100 * math.sin(a)))


def test_ten_thousand_lines_meeting_at_one_point_cost_one_search_and_the_drive_is_found(tmp_path):
    # the ends drawn at one point are taken together: searching each end's neighbours listed
    # 10**8 pairs (38 s and 9.8 GB); the two-pulley drive beside the star is still one loop
    from layout.draw import add_belt_path

    def build(msp):
        msp.add_circle((0, 0), 50)
        msp.add_circle((300, 0), 50)
        add_belt_path(msp, [(0, 0), (300, 0)], [50, 50], [1, 1], form="lines")
        _star(msp, 10_000, 0.0)

    r = _check(_r2010(tmp_path, "star.dxf", build), "--json", "-")
    assert r.returncode in (0, 1), r.stderr
    loops = json.loads(r.stdout)["loops"]
    assert len(loops) == 1 and len(loops[0]["pulleys"]) == 2


def test_line_ends_crowded_within_a_hair_are_refused_naming_the_limit(tmp_path):
    # 10 000 distinct ends within 1e-3 of one point: 5 * 10**7 pairs within the join
    # tolerance (0.05 for the r = 50 circles), counted before any is listed
    def build(msp):
        msp.add_circle((0, 0), 50)
        msp.add_circle((300, 0), 50)
        _star(msp, 10_000, 1e-3)

    r = _check(_r2010(tmp_path, "crowded.dxf", build))
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1
    assert "MAX_NEAR_END_PAIRS" in r.stderr and "pairs of line ends" in r.stderr and "join" in r.stderr


def test_a_pipe_or_a_device_as_the_drawing_or_the_spec_is_one_line(tmp_path):
    import os

    fifo = tmp_path / "drawing.dxf"
    os.mkfifo(fifo)
    r = _check(fifo)                              # before: blocked forever reading the pipe
    assert r.returncode == 2 and "not a regular file" in r.stderr and len(r.stderr.strip().splitlines()) == 1
    r = _check(Path("/dev/zero"))                 # before: read until memory ran out
    assert r.returncode == 2 and "not a regular file" in r.stderr
    good = _r2010(tmp_path, "plate.dxf", lambda msp: msp.add_circle((0, 0), 5))
    r = _check(good, "--spec", str(tmp_path))
    assert r.returncode == 2 and "not a regular file" in r.stderr


def test_an_existing_json_target_is_judged_by_its_head(tmp_path):
    from layout.runner import _is_our_json

    ours = tmp_path / "ours.json"
    ours.write_text('{\n  "schema": "spanwise-report/1",\n  "loops": []\n}\n')
    big = tmp_path / "big.json"
    with big.open("wb") as fh:                    # 64 MiB of someone else's JSON, never loaded whole
        fh.write(b'{"data": "' + b"x" * (64 << 20) + b'"}')
    assert _is_our_json(ours) and not _is_our_json(big)
