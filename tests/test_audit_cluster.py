"""``audit`` on a Dask cluster (a real LocalCluster of two worker processes on loopback):
the same rows as a local run, one per drawing even when a worker dies mid-run, and the
library left as it was."""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

distributed = pytest.importorskip("distributed")

from conftest import add_drive, new_doc, save  # noqa: E402
from parts_sheet import add_parts_sheet  # noqa: E402

from layout import cluster as cluster_mod  # noqa: E402
from layout.audit import AuditOptions, audit  # noqa: E402
from layout.errors import FatalInput  # noqa: E402

D, d, C = 400.0, 100.0, 500.0
SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"
EXPECTED = {
    "clean drive.dxf": "clean",
    "junk.dxf": "failed",
    "motors/bad spec.dxf": "failed",
    "motors/fan motor.dxf": "clean",
    "sheets/a/b/-gap.dxf": "findings",
    "sheets/tôle ünïcode.dxf": "no-drive",
}


def _drive(path: Path, form: str = "polyline", gap: float = 0.0) -> None:
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], form, gap=gap)
    save(doc, path.parent, path.name)


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _without_seconds(rows: list[dict]) -> list[dict]:
    return [{k: v for k, v in r.items() if k != "seconds"} for r in rows]


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  host="127.0.0.1") as c:
        yield c


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> Path:
    """Nested folders; names with a space, accents and a leading dash; a drawing with its own
    spec, one with a bad spec, a drafting fault, a parts sheet, a file that is no drawing."""
    lib = tmp_path_factory.mktemp("library")
    for sub in ("motors", "sheets/a/b"):
        (lib / sub).mkdir(parents=True)
    _drive(lib / "clean drive.dxf")
    shutil.copy(SAMPLES / "fan_motor.dxf", lib / "motors" / "fan motor.dxf")
    shutil.copy(SAMPLES / "fan_motor.spanwise.toml", lib / "motors" / "fan motor.spanwise.toml")
    shutil.copy(SAMPLES / "fan_motor.dxf", lib / "motors" / "bad spec.dxf")
    (lib / "motors" / "bad spec.spanwise.toml").write_text('units = "mm"\n[belt]\nsection = "SPA"\nbogus = 3\n')
    _drive(lib / "sheets" / "a" / "b" / "-gap.dxf", "shuffled", gap=1.0)
    doc = new_doc("mm")
    add_parts_sheet(doc.modelspace())
    save(doc, lib / "sheets", "tôle ünïcode.dxf")
    (lib / "junk.dxf").write_bytes(b"not a drawing at all\n")
    return lib


@pytest.fixture(scope="module")
def default_spec(tmp_path_factory) -> Path:
    p = tmp_path_factory.mktemp("specs") / "house default.toml"
    p.write_text('[belt]\nsection = "SPA"\n')
    return p


@pytest.fixture(scope="module")
def slow_drawing(tmp_path_factory) -> bytes:
    """A large but legal drawing (16 parts sheets, no belt: about a second to check)."""
    doc = new_doc("mm")
    for k in range(16):
        add_parts_sheet(doc.modelspace(), seed=k, center=(1400.0 * (k % 4), 1400.0 * (k // 4)))
    return save(doc, tmp_path_factory.mktemp("slow"), "slow.dxf").read_bytes()


def _stories(keys: list[str], dask_scheduler=None) -> dict[str, list[str]]:
    """The states each task went into, from the scheduler's log (run on the scheduler)."""
    return {k: [t[2] for t in dask_scheduler.story(k) if t[0] == k] for k in keys}


def _ready(c) -> None:
    with distributed.Client(c.scheduler_address, set_as_default=False) as client:
        client.wait_for_workers(2, timeout=30)


def test_cluster_rows_equal_local_rows(cluster, library, default_spec, tmp_path):
    _ready(cluster)
    before = _snapshot(library)
    opts = AuditOptions(spec_default=default_spec)
    seen: list[int] = []
    remote = audit([library], scheduler=cluster.scheduler_address, options=opts, cache_dir=tmp_path / "cache",
                   progress=lambda p: seen.append(p.done))
    local = audit([library], workers=2, options=opts)
    assert _without_seconds(remote) == _without_seconds(local)
    assert {r["path"]: r["status"] for r in remote} == EXPECTED
    assert seen == list(range(1, len(EXPECTED) + 1))
    by_path = {r["path"]: r for r in remote}
    # the messages name the drawing and spec where they are on this machine, not the worker's copy
    assert by_path["junk.dxf"]["message"].startswith(str(library / "junk.dxf") + ":")
    assert str(library / "motors" / "bad spec.spanwise.toml") in by_path["motors/bad spec.dxf"]["message"]
    assert by_path["sheets/a/b/-gap.dxf"]["codes"].get("path-gap", 0) > 0
    assert by_path["motors/fan motor.dxf"]["worst_grip_utilisation"] is not None   # its own spec was read
    assert _snapshot(library) == before
    # every row went into the cache: a second run checks nothing
    again = audit([library], scheduler=cluster.scheduler_address, options=opts, cache_dir=tmp_path / "cache")
    assert all(r["cached"] for r in again)
    assert [dict(r, cached=False) for r in _without_seconds(again)] == _without_seconds(local)


def test_default_spec_travels_and_is_named_as_on_this_machine(cluster, library, tmp_path):
    bad = tmp_path / "bad default.toml"
    bad.write_text('[belt]\nbogus = 1\n')
    opts = AuditOptions(spec_default=bad)
    target = [library / "clean drive.dxf"]
    remote = audit(target, scheduler=cluster.scheduler_address, options=opts)
    assert _without_seconds(remote) == _without_seconds(audit(target, workers=1, options=opts))
    assert remote[0]["status"] == "failed" and str(bad) in remote[0]["message"]


def test_time_limit_holds_on_the_cluster(cluster, slow_drawing, tmp_path):
    (tmp_path / "slow.dxf").write_bytes(slow_drawing)
    rows = audit([tmp_path], scheduler=cluster.scheduler_address, options=AuditOptions(timeout_s=0.2))
    assert [(r["path"], r["status"], r["exit"]) for r in rows] == [("slow.dxf", "timed-out", 2)]
    assert rows[0]["message"] == "still running after 0.2 s; stopped"


def test_cli_audit_on_the_cluster(cluster, library, tmp_path):
    before = _snapshot(library)
    out = tmp_path / "summary.jsonl"
    r = subprocess.run([sys.executable, "-m", "layout.cli", "audit", str(library), "--scheduler",
                        cluster.scheduler_address, "--summary", str(out), "--quiet"],
                       capture_output=True, text=True, env=dict(os.environ, PYTHONWARNINGS="ignore"), timeout=120)
    assert r.returncode == 2, r.stderr                 # two drawings failed
    lines = out.read_text(encoding="utf-8").splitlines()
    rows = [json.loads(line) for line in lines]
    assert {row["path"]: row["status"] for row in rows} == EXPECTED
    assert [row["path"] for row in rows] == sorted(EXPECTED)
    assert _without_seconds(rows) == _without_seconds(audit([library], workers=2))
    assert _snapshot(library) == before


def test_out_tree_is_refused_with_a_scheduler(library, tmp_path):
    with pytest.raises(FatalInput) as err:
        audit([library], scheduler="tcp://127.0.0.1:1", options=AuditOptions(out_tree=tmp_path / "out"))
    assert err.value.problems == [cluster_mod.OUT_TREE_LOCAL]
    assert not (tmp_path / "out").exists()


def test_unreachable_scheduler_is_one_fatal_line(library, monkeypatch):
    monkeypatch.setattr(cluster_mod, "CONNECT_TIMEOUT_S", 1.0)
    import socket

    with socket.socket() as s:                          # a port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(FatalInput) as err:
        audit([library], scheduler=f"tcp://127.0.0.1:{port}")
    assert len(err.value.problems) == 1 and "cannot reach the Dask scheduler" in err.value.problems[0]
    with pytest.raises(FatalInput) as err:
        audit([library], scheduler="no-port-here")
    assert len(err.value.problems) == 1 and "not a Dask scheduler address" in err.value.problems[0]


def test_missing_dask_names_the_extra(library, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)      # import distributed -> ImportError
    with pytest.raises(FatalInput) as err:
        audit([library], scheduler="tcp://127.0.0.1:1")
    assert err.value.problems == [cluster_mod.NEEDS_EXTRA]


@pytest.mark.parametrize("n, threads", [(1, 1), (5, 4), (60, 2), (61, 2), (400, 2), (1000, 3), (3000, 8)])
def test_batches_cover_every_drawing_once_and_feed_every_thread(n, threads):
    batches = cluster_mod.plan_batches([1000 + k for k in range(n)], threads)
    assert sorted(i for b in batches for i in b) == list(range(n))
    assert len(batches) >= min(n, threads)
    sizes = [len(b) for b in batches]
    assert max(sizes) <= cluster_mod.BATCH_MAX
    if n >= threads * cluster_mod.BATCH_MIN:
        assert min(sizes) >= cluster_mod.BATCH_MIN
    assert max(sizes) - min(sizes) <= 1


def test_batches_split_at_the_byte_limit():
    big = cluster_mod.BATCH_MAX_BYTES // 3
    batches = cluster_mod.plan_batches([big] * 40 + [10] * 20, 1)
    assert sorted(i for b in batches for i in b) == list(range(60))
    assert all(len(b) == 1 or sum(big if i < 40 else 10 for i in b) <= cluster_mod.BATCH_MAX_BYTES
               for b in batches)


class _Lost:
    """A batch's future as it ends when the cluster gives up on it."""

    def __init__(self, status: str, err: BaseException | None = None, answer: object = None) -> None:
        self.status, self._err, self._answer = status, err, answer

    def exception(self):
        return self._err

    def result(self):
        return self._answer


@pytest.mark.parametrize("future, reason", [
    (_Lost("error", distributed.KilledWorker("k", "tcp://w", "gone")), "workers running its batch died"),
    (_Lost("error", RuntimeError("no space left on device")), "RuntimeError: no space left on device"),
    (_Lost("cancelled"), "cancelled"),
    (_Lost("finished", answer={"version": "0.0.0-other", "rows": []}), "the worker runs spanwise 0.0.0-other"),
    (_Lost("finished", answer={"version": None, "rows": [{}]}), "the worker runs spanwise None"),
])
def test_a_batch_lost_for_good_gives_failed_rows_kept_out_of_the_cache(library, future, reason):
    from layout.audit import find_drawings

    sources, _ = find_drawings([str(library)])
    rows = cluster_mod._batch_rows(future, sources[:2])
    assert [(r["path"], r["status"], r["exit"], checked) for r, checked in rows] == [
        (s.rel, "failed", 2, False) for s in sources[:2]]
    assert all(reason in r["message"] for r, _ in rows)


def test_a_worker_killed_mid_run_loses_no_drawing(cluster, slow_drawing, tmp_path):
    """Last in this module: it kills one of the cluster's worker processes (its nanny starts
    a new one)."""
    _ready(cluster)
    lib = tmp_path / "lib"
    lib.mkdir()
    names = [f"slow {k}.dxf" for k in range(6)]
    for name in names:
        (lib / name).write_bytes(slow_drawing)
    _drive(lib / "quick.dxf")
    (lib / "junk.dxf").write_bytes(b"junk")
    before = _snapshot(lib)
    result: dict = {}
    counts: list[dict] = []

    def run() -> None:
        try:
            result["rows"] = audit([lib], scheduler=cluster.scheduler_address,
                                   progress=lambda p: counts.append(dict(p.counts)))
        except BaseException as err:  # noqa: BLE001 - reported by the test below
            result["error"] = err

    runner = threading.Thread(target=run)
    runner.start()
    with distributed.Client(cluster.scheduler_address, set_as_default=False) as client:
        deadline = time.monotonic() + 30
        busy: list[str] = []
        while time.monotonic() < deadline and len(busy) < 2:
            busy = [w for w, keys in client.processing().items()
                    if any(str(k).startswith("spanwise-audit-batch") for k in keys)]
            time.sleep(0.05)
        assert len(busy) == 2, "both workers should be checking a batch"
        time.sleep(0.8)                                 # well into the batches' first drawings
        assert runner.is_alive()
        killed = [k for k in client.processing()[busy[0]] if str(k).startswith("spanwise-audit-batch")]
        pid = client.run(os.getpid, workers=[busy[0]])[busy[0]]
        os.kill(pid, signal.SIGKILL)
        runner.join(timeout=60)
        # the scheduler sent the dead worker's batches out again (each one's story: processing twice)
        story = client.run_on_scheduler(_stories, keys=killed)
    assert not runner.is_alive() and "error" not in result, result.get("error")
    rows = result["rows"]
    assert [r["path"] for r in rows] == sorted([*names, "quick.dxf", "junk.dxf"])
    assert {r["path"]: r["status"] for r in rows} == {**dict.fromkeys(names, "no-drive"), "quick.dxf": "clean",
                                                      "junk.dxf": "failed"}
    assert len(counts) == len(rows) and sum(counts[-1].values()) == len(rows)
    assert killed and all(states.count("processing") >= 2 for states in story.values()), story
    assert _snapshot(lib) == before
