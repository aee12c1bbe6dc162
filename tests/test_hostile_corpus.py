"""The hostile corpus of scripts/hostile_corpus.py, audited in the suite: every case ends within
its time limit, in 1 GiB, never as an internal error, with the status its family must give
(truncated drawings say so; other formats fail by their signature; an empty drawing and a pile
of circles are no drive; a binary, R12 or R2018 drive is clean)."""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "scripts"))

from hostile_corpus import generate, problems  # noqa: E402
from layout.audit import AuditOptions, audit  # noqa: E402


def test_the_hostile_corpus_gives_clear_answers(tmp_path):
    cases = generate(tmp_path / "corpus", seed=7, mutations=60)
    rows = audit([tmp_path / "corpus"], workers=2, options=AuditOptions(timeout_s=10.0, memory_bytes=1 << 30))
    assert len(rows) == len(cases)
    assert problems(cases, rows) == []


# property-based: seeded byte edits of a valid drawing, each checked in its own process
from hypothesis import HealthCheck, given, settings, strategies as st  # noqa: E402

from layout.audit import Source, check_isolated  # noqa: E402

_EDIT = st.tuples(st.floats(0.0, 1.0), st.integers(0, 40), st.binary(max_size=24))


@settings(max_examples=40, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edits=st.lists(_EDIT, min_size=1, max_size=6))
def test_edited_drawings_never_hang_or_fail_inside(tmp_path, edits):
    from hostile_corpus import _drive_doc, _text

    data = bytearray(_text(_drive_doc()))
    for where, cut, insert in edits:          # at a share of the file: cut some bytes, insert others
        i = int(where * (len(data) - 1))
        data[i:i + cut] = insert
    path = tmp_path / "edited.dxf"
    path.write_bytes(bytes(data))
    row = check_isolated(Source(path, "edited.dxf"), AuditOptions(timeout_s=10.0), memory=1 << 30)
    assert row["status"] != "timed-out"
    assert "internal error" not in row.get("message", "") and "died" not in row.get("message", "")
    assert row["exit"] in (0, 1, 2)
