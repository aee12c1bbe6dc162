"""What users expect of a command line: standard output, umask, refusals, folders, pipes,
version, exit status; and the console's numbers against hand values."""

from __future__ import annotations

import json
import math
import os
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from test_findings import run_cli
from test_resonance import _drawing as resonant_drawing

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"


def _sample(tmp: Path, name: str = "fan_motor") -> Path:
    for suffix in (".dxf", ".spanwise.toml"):
        shutil.copy(SAMPLES / f"{name}{suffix}", tmp / f"{name}{suffix}")
    return tmp / f"{name}.dxf"


def test_json_to_standard_output_and_nothing_else(tmp):
    r = run_cli("check", _sample(tmp), "--json", "-")
    assert r.returncode == 0, r.stderr
    rep = json.loads(r.stdout)
    assert rep["schema"] == "spanwise-report/1"
    assert rep["spec"]["path"].endswith("fan_motor.spanwise.toml") and len(rep["spec"]["sha256"]) == 64
    assert not list(tmp.glob("*.spanwise.dxf"))                # --json alone writes no drawing


def test_outputs_get_the_users_umask(tmp):
    src = _sample(tmp)
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    cmd = [sys.executable, "-m", "layout.cli", "check", str(src), "--json", str(tmp / "r.json"),
           "--out", str(tmp / "a.dxf"), "-q"]
    r = subprocess.run(cmd, env=env, capture_output=True, text=True, preexec_fn=lambda: os.umask(0o027))
    assert r.returncode == 0, r.stderr
    for name in ("r.json", "a.dxf"):
        assert stat.S_IMODE((tmp / name).stat().st_mode) == 0o640      # 0666 & ~0027
    assert not [p for p in tmp.iterdir() if p.name.endswith(".tmp")]


def test_force_never_overwrites_the_drawing_or_the_spec(tmp):
    src = _sample(tmp)
    spec = tmp / "fan_motor.spanwise.toml"
    before = (src.read_bytes(), spec.read_bytes())
    for args in (("--out", src), ("--json", spec), ("--html", spec), ("--overlay", src)):
        r = run_cli("check", src, *args, "--force")
        assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1, r.stderr
    assert (src.read_bytes(), spec.read_bytes()) == before


def test_a_folder_is_one_clear_fatal_line(tmp):
    r = run_cli("check", tmp)
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "folder" in r.stderr and "internal" not in r.stderr


def test_a_closed_pipe_ends_quietly(tmp):
    src = _sample(tmp, "mixer_two_stage")
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    p = subprocess.Popen([sys.executable, "-m", "layout.cli", "check", str(src), "--read-only"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    p.stdout.close()                                   # the reader goes away before a line is written
    err = p.stderr.read().decode()
    assert p.wait(timeout=60) == 0
    assert "Traceback" not in err and "internal error" not in err and "Broken" not in err


def test_version():
    r = run_cli("--version")
    assert r.returncode == 0 and r.stdout.startswith("spanwise ")


def test_fail_on_warning_exits_1_on_a_drawing_with_only_a_warning(tmp):
    path = resonant_drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    rep = json.loads(run_cli("check", path, "--json", "-").stdout)
    assert {f["severity"] for f in rep["findings"]} == {"warning"}      # the resonance alone
    assert run_cli("check", path, "--read-only").returncode == 0
    assert run_cli("check", path, "--read-only", "--fail-on", "warning").returncode == 1


def _row(text: str, first: str) -> list[str]:
    return next(line.split() for line in text.splitlines() if line.split()[:1] == [first])


def test_console_leads_with_findings_and_shows_p_and_t_by_hand(tmp):
    path = resonant_drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    r = run_cli("check", path, "--read-only")
    lines = r.stdout.splitlines()
    assert lines[1].startswith("findings:") and "resonance" in lines[2]
    assert "P N" in r.stdout and "T N" in r.stdout and "signs:" in r.stdout
    # hand values: constant tensioning, T0 = 200 N; B takes 10 N*m at r = 0.1 m, so the
    # tension steps by 10 / 0.1 = 100 N; the mean of the two spans stays at T0, hence
    # P(B-A, tight, arriving at the driver) = 250 N and P(A-B) = 150 N. At 1000 rpm on
    # r = 0.05 m, v = 2 pi 0.05 1000 / 60 = 5.23599 m/s and m v^2 = 0.1 * 27.4156 = 2.742 N.
    v = 2 * math.pi * 0.05 * 1000 / 60
    tight, slack = _row(r.stdout, "B-A"), _row(r.stdout, "A-B")
    assert float(tight[2]) == pytest.approx(250.0, abs=0.05) and float(slack[2]) == pytest.approx(150.0, abs=0.05)
    assert float(tight[3]) == pytest.approx(250 + 0.1 * v * v, abs=0.05)
    # static pluck frequency at rest, f = sqrt(T/m) / (2 L) (taut string, Mersenne's law):
    # L = sqrt(1^2 - 0.05^2) = 0.998749 m, sqrt(200 / 0.1) = 44.7214 m/s, f = 22.389 Hz
    assert float(tight[5]) == pytest.approx(22.4, abs=0.05)


def test_the_console_names_the_spec_it_read(tmp):
    src = _sample(tmp)
    assert "spec " in run_cli("check", src, "--read-only").stdout.splitlines()[0]
    (tmp / "fan_motor.spanwise.toml").unlink()
    r = run_cli("check", src, "--read-only")
    assert "no spec file found" in r.stdout.splitlines()[0]
