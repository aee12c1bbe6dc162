"""Benchmark: `spanwise check --json` on a small drive hidden among 100 000 unrelated
entities, against `ezdxf.readfile` of the same file. Target: ratio <= 1.3.

    python scripts/bench_read.py [--entities 100000] [--repeat 3] [--keep FOLDER]

The unrelated entities, a stated mix: 40 % LINE, 20 % CIRCLE (bolt holes, bosses), 15 % ARC,
10 % TEXT, 15 % INSERT of four small blocks (each a circle, two lines and an arc). They are
scattered away from the drive over a sheet that grows with their number at a constant
density (18 m x 18 m for 100 000: a larger drawing is a larger sheet, not a denser one, so
the rows measure growth with size alone). The ratio compares the whole
command (Python start-up, imports, reading, recognising, analysing, writing the JSON) with
ezdxf's reading alone, timed in-process; each is the best of --repeat runs.
"""

from __future__ import annotations

import argparse
import math
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import ezdxf
import numpy as np

from layout.draw import add_belt_path

#: Side of the sheet the unrelated entities cover at 100 000 of them, mm.
SIDE_AT_100K = 18000.0
MIX = {"LINE": 0.40, "CIRCLE": 0.20, "ARC": 0.15, "TEXT": 0.10, "INSERT": 0.15}


def make(path: Path, n: int, seed: int = 1) -> dict[str, int]:
    rng = np.random.default_rng(seed)
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    for b in range(4):
        blk = doc.blocks.new(f"PART{b}")
        blk.add_circle((0, 0), 5 + b)
        blk.add_line((-10, 0), (10, 0))
        blk.add_line((0, -10), (0, 10))
        blk.add_arc((0, 0), 12 + b, 0, 90)
    counts = {k: int(round(v * n)) for k, v in MIX.items()}
    side = SIDE_AT_100K * math.sqrt(n / 100_000)          # constant density: 3240 mm2 per entity
    xy = 2000.0 + rng.uniform(0.0, side, size=(n, 2))
    k = 0
    for _ in range(counts["LINE"]):
        x, y = xy[k]
        a = rng.uniform(0, 2 * math.pi)
        msp.add_line((x, y), (x + 50 * math.cos(a), y + 50 * math.sin(a)), dxfattribs={"layer": "FRAME"})
        k += 1
    for _ in range(counts["CIRCLE"]):
        msp.add_circle(tuple(xy[k]), float(rng.uniform(2, 40)), dxfattribs={"layer": "HOLES"})
        k += 1
    for _ in range(counts["ARC"]):
        a = float(rng.uniform(0, 360))
        msp.add_arc(tuple(xy[k]), float(rng.uniform(5, 60)), a, a + float(rng.uniform(10, 180)),
                    dxfattribs={"layer": "FRAME"})
        k += 1
    for _ in range(counts["TEXT"]):
        msp.add_text(f"M{int(rng.integers(3, 24))}", dxfattribs={"insert": tuple(xy[k]), "layer": "NOTES"})
        k += 1
    for _ in range(counts["INSERT"]):
        msp.add_blockref(f"PART{int(rng.integers(0, 4))}", tuple(xy[k]),
                         dxfattribs={"rotation": float(rng.uniform(0, 360))})
        k += 1
    # the drive: motor and fan, a back idler
    centers = [(0.0, 0.0), (600.0, 0.0), (300.0, 130.0)]
    radii = [60.0, 150.0, 40.0]
    for c, r in zip(centers, radii):
        msp.add_circle(c, r, dxfattribs={"layer": "PULLEYS"})
    add_belt_path(msp, centers, radii, [1, 1, -1], form="lines", layer="BELT")
    doc.saveas(path)
    counts["drive"] = 3 + 6
    return counts


def best_of(fn, repeat: int) -> float:
    best = math.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--entities", type=int, default=100_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--keep", help="folder to keep the generated drawing in")
    args = ap.parse_args()
    folder = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="spanwise-bench-"))
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "bench.dxf"
    counts = make(path, args.entities)
    size = path.stat().st_size / 1e6
    probe = ("import sys, time, ezdxf; t = time.perf_counter(); ezdxf.readfile(sys.argv[1]); "
             "print(time.perf_counter() - t)")
    reads = []
    for _ in range(args.repeat):
        out_ = subprocess.run([sys.executable, "-c", probe, str(path)], capture_output=True, text=True, check=True)
        reads.append(float(out_.stdout.strip()))
    t_read = min(reads)
    out = folder / "bench.json"

    def run() -> None:
        r = subprocess.run([sys.executable, "-m", "layout.cli", "check", str(path), "--json", str(out),
                            "--quiet", "--force"], capture_output=True, text=True)
        if r.returncode not in (0, 1):
            raise SystemExit(f"check failed ({r.returncode}): {r.stderr}")

    t_check = best_of(run, args.repeat)
    print(f"drawing: {path} ({size:.1f} MB), entities {counts}")
    print(f"ezdxf.readfile        {t_read:7.3f} s")
    print(f"spanwise check --json {t_check:7.3f} s")
    print(f"ratio                 {t_check / t_read:7.3f}   (target <= 1.3)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
