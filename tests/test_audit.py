"""Auditing a drawing library on this machine: statuses, parallel agreement, the cache,
time limits, killed children, progress, and the library left untouched."""

from __future__ import annotations

import hashlib
import json
import os
import pty
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from layout.audit import AuditOptions, audit, audit_exit
from library import make_library

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def _digest(root: Path) -> dict[str, str]:
    return {p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(root.rglob("*")) if p.is_file()}


def _strip(rows: list[dict]) -> list[dict]:
    return [{k: v for k, v in r.items() if k != "seconds"} for r in rows]


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> tuple[Path, dict[str, str]]:
    root = tmp_path_factory.mktemp("library")
    return root, make_library(root, 200)


def test_every_drawing_gets_its_status_with_one_and_two_workers(library, tmp_path):
    root, expected = library
    before = _digest(root)
    one = audit([root], workers=1)
    two = audit([root], workers=2)
    assert {r["path"]: r["status"] for r in one} == expected       # the generator's own labels
    assert _strip(one) == _strip(two)
    assert _digest(root) == before                                  # the library is untouched
    assert audit_exit(one) == 2                                     # damaged files fail the audit
    faulty = [r for r in one if r["status"] == "findings"]
    assert faulty and all(r["codes"].get("span-not-tangent") == 1 and r["exit"] == 1 for r in faulty)


def test_a_dask_cluster_gives_the_same_summary_for_the_whole_library(library):
    distributed = pytest.importorskip("distributed")
    root, expected = library
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  host="127.0.0.1") as cluster:
        rows = audit([root], scheduler=cluster.scheduler_address)
    assert {r["path"]: r["status"] for r in rows} == expected
    assert _strip(rows) == _strip(audit([root], workers=2))


def test_a_second_run_comes_from_the_cache_and_a_changed_spec_reruns_only_its_drawing(tmp_path):
    root = tmp_path / "lib"
    expected = make_library(root, 12, seed=5)
    cache = tmp_path / "cache"
    first = audit([root], workers=2, cache_dir=cache)
    again = audit([root], workers=2, cache_dir=cache)
    assert not any(r["cached"] for r in first) and all(r["cached"] for r in again)
    assert _strip([dict(r, cached=False) for r in again]) == _strip(first)
    clean = next(p for p, k in sorted(expected.items()) if k == "clean")
    (root / clean).with_suffix(".spanwise.toml").write_text('units = "mm"\n[belt]\nsection = "SPA"\n')
    third = audit([root], workers=2, cache_dir=cache)
    assert [r["path"] for r in third if not r["cached"]] == [clean]
    forced = audit([root], workers=2, cache_dir=cache, options=AuditOptions(force=True))
    assert not any(r["cached"] for r in forced)


def test_an_interrupted_run_then_a_rerun_gives_the_full_summary(tmp_path):
    root = tmp_path / "lib"
    make_library(root, 24, seed=8)
    cache = tmp_path / "cache"
    full = _strip(audit([root], workers=1))
    cmd = [sys.executable, "-m", "layout.cli", "audit", str(root), "--cache", str(cache), "--workers", "1",
           "--summary", str(tmp_path / "s.jsonl")]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.time() + 60
    while time.time() < deadline and len(list(cache.rglob("*.json"))) < 5:
        time.sleep(0.05)
    proc.send_signal(signal.SIGINT)
    t0 = time.time()
    proc.wait(timeout=60)
    assert time.time() - t0 < 10                  # it stops, it does not finish the batch first
    assert proc.returncode == 2
    entries = list(cache.rglob("*.json"))
    assert entries and all(json.loads(p.read_text())["status"] for p in entries)    # no torn entry
    rerun = audit([root], workers=2, cache_dir=cache)
    assert _strip([dict(r, cached=False) for r in rerun]) == full
    assert any(r["cached"] for r in rerun)


def test_a_drawing_over_its_time_limit_is_timed_out_and_the_batch_completes(tmp_path):
    root = tmp_path / "lib"
    expected = make_library(root, 8, seed=11)
    rows = audit([root], workers=2, options=AuditOptions(timeout_s=0.01))
    # 10 ms is less than any child needs to start and read a drawing: every one is stopped,
    # each reported once, none lost
    assert sorted(r["path"] for r in rows) == sorted(expected)
    assert {r["status"] for r in rows} == {"timed-out"}
    assert audit_exit(rows) == 2


def _children_of(pid: int) -> list[int]:
    out = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                fields = (d / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                out.append(int(d.name))
    return out


@pytest.mark.skipif(not Path("/proc").is_dir(), reason="needs /proc to find the checking processes")
def test_a_child_killed_mid_run_loses_no_drawing_and_counts_none_twice(tmp_path):
    from multiprocessing import forkserver

    from parts_sheet import add_parts_sheet
    from conftest import new_doc

    root = tmp_path / "lib"
    root.mkdir()
    for i in range(6):                                   # parts sheets take a while to read
        doc = new_doc("mm")
        add_parts_sheet(doc.modelspace(), seed=i)
        doc.saveas(root / f"sheet-{i}.dxf")
    result: list = []
    t = threading.Thread(target=lambda: result.append(audit([root], workers=2)))
    t.start()
    killed = 0
    deadline = time.time() + 60
    while t.is_alive() and not killed and time.time() < deadline:
        server = getattr(forkserver._forkserver, "_forkserver_pid", None)
        kids = _children_of(server) if server else []
        if kids:
            os.kill(kids[0], signal.SIGKILL)
            killed += 1
        time.sleep(0.02)
    t.join(timeout=120)
    rows = result[0]
    assert killed == 1
    assert sorted(r["path"] for r in rows) == [f"sheet-{i}.dxf" for i in range(6)]
    assert {r["status"] for r in rows} == {"no-drive"}            # the killed one was tried again


def _cli(*args: str) -> list[str]:
    return [sys.executable, "-m", "layout.cli", "audit", *args]


def test_progress_is_a_live_bar_on_a_terminal_and_plain_lines_in_a_pipe(tmp_path):
    root = tmp_path / "lib"
    make_library(root, 6, seed=2)
    piped = subprocess.run(_cli(str(root), "--workers", "2"), capture_output=True, text=True)
    assert piped.returncode == 1                   # six drawings: one faulty, none damaged
    assert "audit: 6/6 done" in piped.stderr and "\r" not in piped.stderr
    assert piped.stdout.startswith("audit: 6 drawings in ")
    quiet = subprocess.run(_cli(str(root), "--workers", "2", "-q"), capture_output=True, text=True)
    assert quiet.stdout == "" and quiet.stderr == ""
    master, slave = pty.openpty()
    proc = subprocess.Popen(_cli(str(root), "--workers", "2"), stdin=slave, stdout=slave, stderr=slave)
    os.close(slave)
    out = b""
    while True:
        try:
            chunk = os.read(master, 4096)
        except OSError:
            break
        if not chunk:
            break
        out += chunk
    proc.wait(timeout=60)
    os.close(master)
    text = out.decode("utf-8", "replace")
    assert "\r[" in text and "] 6/6" in text and "#" in text


def test_summaries_and_the_output_tree(tmp_path):
    root = tmp_path / "lib"
    expected = make_library(root, 10, seed=4)
    out = tmp_path / "out"
    r = subprocess.run(_cli(str(root), "--summary", str(tmp_path / "s.jsonl"), "--csv", str(tmp_path / "s.csv"),
                            "--html", str(tmp_path / "index.html"), "--out-tree", str(out)),
                       capture_output=True, text=True)
    assert r.returncode == 1, r.stderr             # ten drawings: two faulty, none damaged
    rows = [json.loads(line) for line in (tmp_path / "s.jsonl").read_text().splitlines()]
    assert {x["path"]: x["status"] for x in rows} == expected
    assert len((tmp_path / "s.csv").read_text().splitlines()) == len(rows) + 1
    index = (tmp_path / "index.html").read_text()
    for x in rows:
        if x["status"] in ("clean", "findings"):
            stem = x["path"][:-4]
            assert (out / f"{stem}.spanwise.dxf").is_file() and (out / f"{stem}.html").is_file()
            assert f'href="out/{stem}.html"' in index
    assert all(p.resolve().is_relative_to(out.resolve()) for p in out.rglob("*"))
    assert not any(p.name.endswith(".spanwise.dxf") for p in root.rglob("*"))


def test_paths_are_relative_to_their_argument_and_own_outputs_are_skipped(tmp_path):
    a, b = make_library(tmp_path / "a", 4, seed=1), make_library(tmp_path / "b", 4, seed=2)
    one = audit([tmp_path / "a"], workers=2)
    assert sorted(r["path"] for r in one) == sorted(a)              # relative, with /
    both = audit([tmp_path / "a", tmp_path / "b"], workers=2)
    want = sorted([f"{tmp_path / 'a'}/{p}" for p in a] + [f"{tmp_path / 'b'}/{p}" for p in b])
    assert sorted(r["path"] for r in both) == want                  # prefixed by their argument
    clean = next(p for p, k in sorted(a.items()) if k == "clean")
    (tmp_path / "a" / clean).with_suffix(".spanwise.dxf").write_bytes((tmp_path / "a" / clean).read_bytes())
    assert sorted(r["path"] for r in audit([tmp_path / "a"], workers=2)) == sorted(a)
    globbed = audit([str(tmp_path / "a" / "**" / "*.dxf")], workers=2)
    assert sorted(r["path"] for r in globbed) == sorted(p for p in a if p.endswith(".dxf"))


def test_the_default_spec_applies_where_a_drawing_has_none(tmp_path):
    root = tmp_path / "lib"
    expected = make_library(root, 6, seed=9)
    default = tmp_path / "library.spanwise.toml"
    default.write_text('units = "mm"\n[belt]\nsection = "SPA"\ninstall_tension = "-5 N"\n')
    rows = audit([root], workers=2, options=AuditOptions(spec_default=default))
    # the default's bad value fails every drawing that reads it (the damaged and the belt-less
    # ones too: a spec problem is fatal before the drawing is analysed)
    assert {r["status"] for r in rows} == {"failed"}
    assert all("install_tension" in r["message"] for r in rows if r["path"] in expected)


def test_a_name_that_names_nothing_is_one_fatal_line(tmp_path):
    r = subprocess.run(_cli(str(tmp_path / "nothing-here")), capture_output=True, text=True)
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1 and "names no DXF" in r.stderr
