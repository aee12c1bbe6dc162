"""Property tests: a drive's numbers do not depend on where, how or in what unit it is drawn.

Invariants (no external reference needed): wrap angles and pitch length are unchanged by
rotating, translating or mirroring the drawing, and by drawing it in inches instead of
millimetres; the drawn forms (polyline, lines and arcs, spans only) agree.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import add_drive, new_doc, save
from layout.pipeline import check_drawing
from physics import geometry as geo


def _layout(seed: int) -> tuple[np.ndarray, np.ndarray, list[int]]:
    """A random valid loop of 3 or 4 pulleys (one maybe a back idler), in mm."""
    rng = np.random.default_rng(seed)
    while True:
        n = int(rng.integers(3, 5))
        ang = np.sort(rng.uniform(0, 2 * np.pi, n))
        rad = rng.uniform(300, 900, n)
        c = np.column_stack([rad * np.cos(ang), rad * np.sin(ang)])
        r = rng.uniform(30, 160, n)
        dd = np.hypot(*(c[:, None, :] - c[None, :, :]).transpose(2, 0, 1))
        np.fill_diagonal(dd, np.inf)
        if (dd < 1.3 * (r[:, None] + r[None, :])).any():
            continue
        turns = [1] * n
        try:
            g = geo.loop_geometry(c * 1e-3, r * 1e-3, turns)
        except geo.GeometryError:
            continue
        if abs(geo.signed_turning(g, turns) - 2 * math.pi) > 1e-9 or g.wrap_rad.min() < 0.2:
            continue
        # no span may pass through another pulley (a valid belt path)
        lines = shapely.linestrings(np.stack([g.span_start_m, g.span_end_m], axis=1))
        clear = all(shapely.distance(lines[k], shapely.points(c[j] * 1e-3)) > r[j] * 1e-3
                    for k in range(n) for j in range(n) if j not in (k, (k + 1) % n))
        if clear:
            return c, r, turns


def _numbers(checked) -> tuple[float, list[float]]:
    (lp,) = checked.model.loops
    g = checked.results.loops[lp.id].geometry
    return g.length_m, sorted(g.wrap_rad.tolist())


SETTINGS = settings(max_examples=15, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])


@SETTINGS
@given(seed=st.integers(0, 10_000), angle=st.floats(0, 360), dx=st.floats(-1e5, 1e5),
       dy=st.floats(-1e5, 1e5), mirror=st.booleans(),
       form=st.sampled_from(["polyline", "lines", "spans", "shuffled"]))
def test_rigid_motions_and_forms_leave_results_unchanged(tmp, seed, angle, dx, dy, mirror, form):
    c, r, turns = _layout(seed)
    doc = new_doc("mm")
    add_drive(doc.modelspace(), c, r, turns, "polyline")
    base = _numbers(check_drawing(save(doc, tmp, "base.dxf")))
    t = math.radians(angle)
    rot = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
    c2 = c @ rot.T + (dx, dy)
    turns2 = turns
    if mirror:
        c2[:, 0] *= -1
        turns2 = [-x for x in turns]
    doc = new_doc("mm")
    add_drive(doc.modelspace(), c2, r, turns2, form, seed=seed)
    checked = check_drawing(save(doc, tmp, "moved.dxf"))
    assert not [f for f in checked.findings if f.severity.value == "error"], checked.findings
    length, wraps = _numbers(checked)
    assert length == pytest.approx(base[0], rel=1e-9)
    assert wraps == pytest.approx(base[1], rel=1e-9, abs=1e-12)


@SETTINGS
@given(seed=st.integers(0, 10_000))
def test_inches_and_millimetres_agree(tmp, seed):
    c, r, turns = _layout(seed)
    doc = new_doc("mm")
    add_drive(doc.modelspace(), c, r, turns, "spans")
    mm = _numbers(check_drawing(save(doc, tmp, "mm.dxf")))
    doc = new_doc("in")
    add_drive(doc.modelspace(), c / 25.4, r / 25.4, turns, "spans")
    inch = _numbers(check_drawing(save(doc, tmp, "in.dxf")))
    assert inch[0] == pytest.approx(mm[0], rel=1e-9)
    assert inch[1] == pytest.approx(mm[1], rel=1e-9)
