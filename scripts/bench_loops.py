"""Benchmark: analysis cost against the number of loops chained by shafts.

    python scripts/bench_loops.py [--sizes 1 10 25 50 100] [--beam] [--serpentine 200]

Builds drives of 1, 10, 25, 50 and 100 four-pulley loops (``physics.model`` by hand):
loop ``k`` is driven through its pulley ``A`` on the shaft of the previous loop's ``C``,
carries a constant-power load on ``B`` and an idler ``D``; the source turns loop 0's ``A``
with a speed range, so the sweep and the resonance refinement run on every loop. Prints
wall seconds and peak traced memory (``tracemalloc``) per size, and seconds per loop: a
cost linear in loops keeps that ratio flat. ``--serpentine N`` also times one loop of
``N`` pulleys with bending stiffness (the batched beam sweep) and prints its peak memory.
A benchmark, not a test.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
import tracemalloc

from physics.analysis import Options, analyse
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

#: Loop corners (m): A (entry), B (load), C (exit shaft), D (idler), counter-clockwise.
CORNERS = ((0.0, 0.0), (0.45, 0.0), (0.45, 0.4), (0.0, 0.4))
RADII = (0.08, 0.06, 0.08, 0.04)
#: Small loads and one install tension: every loop of a long chain keeps similar tensions.
LOAD_W = 5.0
INSTALL_N = 400.0


def chained_drive(loops: int, *, bending_nm2: float | None = None) -> Drive:
    """``loops`` four-pulley loops, each driven from the previous loop's pulley ``C``."""
    belt = Belt(mass_per_length_kg_m=0.12, friction=0.5, bending_stiffness_nm2=bending_nm2,
                install_tension_n=INSTALL_N)
    pulleys: dict[str, Pulley] = {}
    out: list[Loop] = []
    shafts: list[tuple[str, str]] = []
    ox = oy = 0.0
    for k in range(loops):
        ids = tuple(f"{c}{k}" for c in "ABCD")
        for j, (pid, (x, y), r) in enumerate(zip(ids, CORNERS, RADII)):
            kw: dict[str, object] = {}
            if j == 0 and k == 0:
                kw = {"role": Role.DRIVER, "speed_rad_s": 150.0, "speed_range_rad_s": (30.0, 300.0)}
            elif j == 1:
                kw = {"role": Role.DRIVEN, "power_w": LOAD_W + 0.5 * (k % 7)}
            pulleys[pid] = Pulley(pid, (ox + x, oy + y), r, **kw)
        out.append(Loop(f"L{k}", ids, (1, 1, 1, 1), (Side.INSIDE,) * 4, (False,) * 4, belt))
        if k:
            shafts.append((f"C{k - 1}", ids[0]))
        ox, oy = ox + CORNERS[2][0], oy + CORNERS[2][1]
    return Drive(pulleys, tuple(out), tuple(shafts))


def serpentine(n: int, *, bending_nm2: float = 0.02) -> Drive:
    """One loop of ``n`` pulleys round a circle (driver, loads every fourth pulley)."""
    belt = Belt(mass_per_length_kg_m=0.12, friction=0.5, bending_stiffness_nm2=bending_nm2)
    pulleys: dict[str, Pulley] = {}
    R = 0.05 * n / math.pi
    ids = []
    for i in range(n):
        a = 2 * math.pi * i / n
        kw: dict[str, object] = {}
        if i == 0:
            kw = {"role": Role.DRIVER, "speed_rad_s": 150.0, "speed_range_rad_s": (30.0, 300.0)}
        elif i % 4 == 0:
            kw = {"role": Role.DRIVEN, "power_w": 200.0}
        pid = f"P{i}"
        ids.append(pid)
        pulleys[pid] = Pulley(pid, (R * math.cos(a), R * math.sin(a)), 0.015, **kw)
    return Drive(pulleys, (Loop("S", tuple(ids), (1,) * n, (Side.INSIDE,) * n, (False,) * n, belt),))


def measure(drive: Drive, options: Options) -> tuple[float, float, int]:
    """Wall seconds, peak traced MB and the number of resonance bands of one analysis."""
    tracemalloc.start()
    t0 = time.perf_counter()
    res = analyse(drive, options)
    dt = time.perf_counter() - t0
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    bands = sum(len(lr.mechanics.dynamics.bands) for lr in res.loops.values()
                if lr.mechanics is not None and lr.mechanics.dynamics is not None)
    return dt, peak, bands


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1, 10, 25, 50, 100])
    ap.add_argument("--beam", action="store_true", help="give the belts bending stiffness (Galerkin beam)")
    ap.add_argument("--serpentine", type=int, default=0, help="also one loop of this many pulleys (beam)")
    args = ap.parse_args()
    opts = Options()
    analyse(chained_drive(1), opts)                        # imports and caches warm
    print(f"{'loops':>6} {'seconds':>9} {'peak MB':>9} {'s/loop':>9} {'bands':>7}")
    for n in args.sizes:
        dt, peak, bands = measure(chained_drive(n, bending_nm2=0.02 if args.beam else None), opts)
        print(f"{n:6d} {dt:9.3f} {peak:9.1f} {dt / n:9.4f} {bands:7d}")
    if args.serpentine:
        dt, peak, bands = measure(serpentine(args.serpentine), opts)
        print(f"serpentine of {args.serpentine} pulleys (beam): {dt:.3f} s, peak {peak:.1f} MB, {bands} bands")
    return 0


if __name__ == "__main__":
    sys.exit(main())
