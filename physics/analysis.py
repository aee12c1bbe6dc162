"""Run the physics of a whole drive: one entry point, one result object.

``analyse(drive)`` computes every loop's exact geometry now; later stages (speeds,
tensions, grip, moving spans) add their results to the same :class:`Results`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import geometry as geo
from .findings import Finding, Severity
from .model import Drive, Loop

__all__ = ["LoopResult", "Results", "analyse", "loop_arrays"]


@dataclass(frozen=True, slots=True)
class LoopResult:
    """Results for one loop; ``geometry`` is ``None`` when no belt path exists."""

    loop: Loop
    geometry: geo.LoopGeometry | None


@dataclass(frozen=True, slots=True)
class Results:
    """Everything computed for a drive."""

    drive: Drive
    loops: dict[str, LoopResult]
    findings: list[Finding] = field(default_factory=list)


def loop_arrays(drive: Drive, loop: Loop) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Centres ``(n, 2)``, pitch radii ``(n,)`` and turns ``(n,)`` of a loop, travel order."""
    c = np.asarray([drive.pulleys[p].center_m for p in loop.pulleys], dtype=float)
    r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys], dtype=float)
    t = np.asarray(loop.turns, dtype=float)
    return c, r, t


def analyse(drive: Drive) -> Results:
    """Compute the results of ``drive``.

    Examples
    --------
    >>> from physics.model import Drive, Loop, Pulley, Side
    >>> d = Drive({"A": Pulley("A", (0.0, 0.0), 0.2), "B": Pulley("B", (0.5, 0.0), 0.05)},
    ...           (Loop("L1", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False, False)),))
    >>> round(analyse(d).loops["L1"].geometry.length_m, 6)
    1.830745
    """
    findings: list[Finding] = []
    loops: dict[str, LoopResult] = {}
    for loop in drive.loops:
        c, r, t = loop_arrays(drive, loop)
        try:
            g = geo.loop_geometry(c, r, t)
        except geo.GeometryError as err:
            k = err.span_index or 0
            n = len(loop.pulleys)
            findings.append(Finding(
                Severity.ERROR, "no-tangent",
                f"loop {loop.id}: no belt span can join {loop.pulleys[k]} and "
                f"{loop.pulleys[(k + 1) % n]} with these contact sides (the circles overlap)",
                refs=(loop.id, loop.pulleys[k], loop.pulleys[(k + 1) % n])))
            g = None
        loops[loop.id] = LoopResult(loop, g)
    return Results(drive, loops, findings)
