"""Benchmark: `audit` of a generated library with 1 worker, 2 workers and a two-worker Dask
LocalCluster. Target: 2 workers at least 1.7 times as fast as 1 worker on 2 cores.

    python scripts/bench_audit.py [--count 60] [--repeat 3] [--keep FOLDER]

The library, a stated mix, seeded: a third the sample drawings with their specs
(`sample_drawings/`, each a full mechanics check), a third generated two- and three-pulley
drives drawn as a polyline, lines or spans (no spec), a third parts sheets with no belt
(`tests/parts_sheet.py`, one to four sheets a drawing), in nested folders. Each
configuration is the best of --repeat runs of `layout.audit.audit` without a cache (the
first run also starts each worker's fork server); the cluster's start-up is not timed, its
scheduling and the drawings' transport are. Every configuration must give the same rows
(`seconds` aside); nothing here asserts a time.
"""

from __future__ import annotations

import argparse
import math
import os
import random
import shutil
import sys
import tempfile
import time
from pathlib import Path

import ezdxf

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

from parts_sheet import add_parts_sheet  # noqa: E402

from layout.audit import audit  # noqa: E402
from layout.draw import add_belt_path  # noqa: E402

SAMPLES = ("fan_motor", "bottling_conveyor", "mixer_two_stage")
FORMS = ("polyline", "lines", "spans")


def make_library(folder: Path, count: int, *, seed: int = 3) -> dict[str, int]:
    """Write ``count`` drawings into ``folder``; how many of each kind."""
    rng = random.Random(seed)
    kinds = {"samples": 0, "drives": 0, "sheets": 0}
    for k in range(count):
        sub = folder / f"line{k % 4}" / ("old" if k % 5 == 0 else "")
        sub.mkdir(parents=True, exist_ok=True)
        kind = ("samples", "drives", "sheets")[k % 3]
        kinds[kind] += 1
        if kind == "samples":
            name = SAMPLES[(k // 3) % len(SAMPLES)]
            shutil.copy(ROOT / "sample_drawings" / f"{name}.dxf", sub / f"{name} {k}.dxf")
            shutil.copy(ROOT / "sample_drawings" / f"{name}.spanwise.toml", sub / f"{name} {k}.spanwise.toml")
            continue
        doc = ezdxf.new("R2010")
        doc.header["$INSUNITS"] = 4
        msp = doc.modelspace()
        if kind == "drives":
            centre = rng.uniform(400.0, 900.0)
            centers = [(0.0, 0.0), (centre, 0.0)] + ([(centre / 2, rng.uniform(250.0, 400.0))] if k % 2 else [])
            radii = [rng.uniform(50.0, 120.0), rng.uniform(100.0, 200.0)] + ([40.0] if k % 2 else [])
            for c, r in zip(centers, radii):
                msp.add_circle(c, r, dxfattribs={"layer": "PULLEYS"})
            add_belt_path(msp, centers, radii, [1] * len(radii), form=rng.choice(FORMS), layer="BELT")
            doc.saveas(sub / f"drive {k}.dxf")
        else:
            for s in range(1 + k % 4):
                add_parts_sheet(msp, seed=k * 7 + s, center=(1400.0 * s, 0.0))
            doc.saveas(sub / f"sheet {k}.dxf")
    return kinds


def best_of(fn, repeat: int) -> tuple[float, list[dict]]:
    best, rows = math.inf, []
    for _ in range(repeat):
        t0 = time.perf_counter()
        rows = fn()
        best = min(best, time.perf_counter() - t0)
    return best, rows


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--count", type=int, default=60, help="drawings in the library (default 60)")
    ap.add_argument("--repeat", type=int, default=3, help="runs per configuration, best kept (default 3)")
    ap.add_argument("--keep", help="folder to keep the generated library in")
    args = ap.parse_args()
    folder = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="spanwise-bench-audit-"))
    folder.mkdir(parents=True, exist_ok=True)
    kinds = make_library(folder, args.count)
    print(f"library: {folder}: {args.count} drawings ({', '.join(f'{n} {k}' for k, n in kinds.items())}); "
          f"{os.cpu_count()} cores")

    results: dict[str, tuple[float, list[dict]]] = {}
    results["1 worker"] = best_of(lambda: audit([folder], workers=1), args.repeat)
    results["2 workers"] = best_of(lambda: audit([folder], workers=2), args.repeat)
    try:
        from distributed import LocalCluster
    except ImportError:
        print("cluster: skipped (pip install 'spanwise[cluster]')")
    else:
        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                          host="127.0.0.1") as cluster:
            results["cluster, 2 workers"] = best_of(
                lambda: audit([folder], scheduler=cluster.scheduler_address), args.repeat)

    def strip(rows: list[dict]) -> list[dict]:
        return [{k: v for k, v in r.items() if k != "seconds"} for r in rows]

    reference = strip(results["1 worker"][1])
    for name, (_, rows) in results.items():
        if strip(rows) != reference:
            print(f"{name}: its rows differ from the 1-worker run's")
            return 1
    statuses: dict[str, int] = {}
    for r in reference:
        statuses[r["status"]] = statuses.get(r["status"], 0) + 1
    print(f"rows: identical in every configuration ({statuses})")
    for name, (seconds, _) in results.items():
        print(f"{name:20s} {args.count / seconds:7.2f} drawings/s  ({seconds:.2f} s, best of {args.repeat})")
    one = results["1 worker"][0]
    print(f"2 workers / 1 worker: {one / results['2 workers'][0]:.2f}  (target >= 1.7 on 2 cores)")
    if "cluster, 2 workers" in results:
        print(f"cluster / 1 worker:   {one / results['cluster, 2 workers'][0]:.2f}")
        print(f"cluster / 2 workers:  {results['2 workers'][0] / results['cluster, 2 workers'][0]:.2f}")
    if not args.keep:
        shutil.rmtree(folder, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
