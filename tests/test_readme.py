"""The README's Python example runs as written (doctest), from the project's folder."""

from __future__ import annotations

import doctest
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_readme_python_example_runs(monkeypatch):
    monkeypatch.chdir(ROOT)
    result = doctest.testfile(str(ROOT / "README.md"), module_relative=False, optionflags=doctest.ELLIPSIS)
    assert result.attempted >= 6 and result.failed == 0
