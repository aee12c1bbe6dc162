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
