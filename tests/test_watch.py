"""``spanwise watch``: a rewrite of the drawing is picked up, and Ctrl-C ends it cleanly."""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import ezdxf

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"


def _start(tmp: Path, *extra: str) -> tuple[subprocess.Popen, Path]:
    for suffix in (".dxf", ".spanwise.toml"):
        shutil.copy(SAMPLES / f"fan_motor{suffix}", tmp / f"fan_motor{suffix}")
    src = tmp / "fan_motor.dxf"
    env = dict(os.environ, PYTHONWARNINGS="ignore", PYTHONUNBUFFERED="1")
    p = subprocess.Popen([sys.executable, "-m", "layout.cli", "watch", str(src), "--debounce", "0.1",
                          "--poll", "0.05", *extra], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         text=True, env=env)
    return p, src


def _wait_for(path: Path, timeout: float = 60.0) -> None:
    end = time.monotonic() + timeout
    while not path.exists():
        assert time.monotonic() < end, f"{path} never appeared"
        time.sleep(0.05)


def test_watch_rechecks_a_rewritten_drawing(tmp):
    p, src = _start(tmp, "--runs", "2")
    out = tmp / "fan_motor.spanwise.dxf"
    _wait_for(out)
    first = out.stat().st_mtime_ns
    doc = ezdxf.readfile(src)                     # the drafter saves a change
    doc.modelspace().add_line((0, 0), (5, 5), dxfattribs={"layer": "NOTES"})
    time.sleep(0.02)
    doc.saveas(src)
    stdout, stderr = p.communicate(timeout=60)
    assert p.returncode == 0, stderr
    status = [line for line in stdout.splitlines() if "fan_motor.dxf:" in line]
    assert len(status) == 2 and all("0 error(s)" in line for line in status)
    assert out.stat().st_mtime_ns > first
    assert "NOTES" in ezdxf.readfile(out).layers or any(
        e.dxf.layer == "NOTES" for e in ezdxf.readfile(out).modelspace())


def test_a_half_written_drawing_waits_for_its_end(tmp):
    p, src = _start(tmp, "--runs", "2")
    out = tmp / "fan_motor.spanwise.dxf"
    _wait_for(out)
    data = src.read_bytes()
    src.write_bytes(data[: len(data) // 2])       # a save in progress: no end-of-file marker yet
    time.sleep(0.6)
    assert p.poll() is None                       # not checked yet: still waiting for the end
    src.write_bytes(data)
    stdout, stderr = p.communicate(timeout=60)
    assert p.returncode == 0, stderr
    assert "not checked" not in stdout and "recovered" not in stdout


def test_ctrl_c_ends_the_watch_cleanly(tmp):
    p, _ = _start(tmp)
    _wait_for(tmp / "fan_motor.spanwise.dxf")
    time.sleep(0.2)
    p.send_signal(signal.SIGINT)
    stdout, stderr = p.communicate(timeout=30)
    assert p.returncode == 0 and "stopped" in stdout
    assert "Traceback" not in stderr and not stderr.strip()
