"""Benchmark: the speed sweep of 200 speeds x 100 spans x 5 modes.

    python scripts/bench_sweep.py [--speeds 200] [--spans 100] [--modes 5] [--repeat 3]

Times the span frequencies over the sweep (the exact moving-string formula, and the
Galerkin moving beam when the belt has bending stiffness) and the resonance band search
against pulley orders, belt pass and parametric excitation, on a synthetic set of spans
(lengths 0.2-1.5 m, tensions 100-900 N, m = 0.12 kg/m, EI = 0.02 N m^2). A benchmark, not
a test: it prints the wall times.
"""

from __future__ import annotations

import argparse
import math
import sys
import time

import numpy as np

from physics.resonance import find_bands
from physics.spans import span_frequencies


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--speeds", type=int, default=200)
    ap.add_argument("--spans", type=int, default=100)
    ap.add_argument("--modes", type=int, default=5)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    rng = np.random.default_rng(7)
    m, ei, r_driver = 0.12, 0.02, 0.06
    L = rng.uniform(0.2, 1.5, args.spans)
    P0 = rng.uniform(100.0, 900.0, args.spans)
    w_src = np.linspace(50.0, 320.0, args.speeds)                  # rad/s of the driver
    v = w_src * r_driver
    P = P0[None, :] - 0.5 * m * v[:, None] ** 2                    # fixed centres, some loss with speed
    T = P + m * v[:, None] ** 2
    exc = {"driver x1": w_src / (2 * math.pi), "driver x2": 2 * w_src / (2 * math.pi),
           "belt pass": v / 3.0}

    def best(fn) -> float:
        t = math.inf
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            fn()
            t = min(t, time.perf_counter() - t0)
        return t

    t_string = best(lambda: span_frequencies(P, T, m, L[None, :], v[:, None], args.modes))
    f = span_frequencies(P, T, m, L[None, :], v[:, None], args.modes)
    t_bands = best(lambda: find_bands(w_src, f, exc))
    t_beam = best(lambda: span_frequencies(P, T, m, L[None, :], v[:, None], args.modes, bending_nm2=ei))
    n_bands = len(find_bands(w_src, f, exc))
    print(f"sweep: {args.speeds} speeds x {args.spans} spans x {args.modes} modes")
    print(f"string frequencies (closed form)   {t_string * 1e3:9.2f} ms")
    print(f"beam frequencies (Galerkin, EI)    {t_beam * 1e3:9.2f} ms")
    print(f"resonance bands on the grid        {t_bands * 1e3:9.2f} ms  ({n_bands} bands)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
