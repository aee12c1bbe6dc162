"""The registry of finding codes (physics.codes): the README's table says exactly what it
says, every code the sources raise is registered with the severity raised, and
``Finding`` refuses an unregistered code or severity."""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

from physics.codes import CODES
from physics.findings import Finding, Severity

ROOT = Path(__file__).resolve().parent.parent
ROW = re.compile(r"^\| `([a-z0-9-]+)` \| ([a-z/]+) \| (.+?) \|$", re.M)

# (code, severity or None where the source computes it, where)
Raised = tuple[str, str | None, str]


def _readme_table() -> list[tuple[str, tuple[str, ...], str]]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text[text.index("### Finding codes"):]
    section = section[:section.index("\n## ")]
    return [(code, tuple(sev.split("/")), meaning) for code, sev, meaning in ROW.findall(section)]


def _constants(node: ast.expr | None) -> set[str] | None:
    """The strings an argument can take: a literal, or either side of ``a if c else b``;
    ``None`` when the source computes it some other way."""
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return {node.value}
    if isinstance(node, ast.IfExp):
        a, b = _constants(node.body), _constants(node.orelse)
        return None if a is None or b is None else a | b
    return None


def _severities(node: ast.expr | None) -> set[str] | None:
    """``Severity.X`` (or either side of a conditional) as the severities' values."""
    if isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) and node.value.id == "Severity":
        return {Severity[node.attr].value}
    if isinstance(node, ast.IfExp):
        a, b = _severities(node.body), _severities(node.orelse)
        return None if a is None or b is None else a | b
    return _constants(node)


def _argument(call: ast.Call, index: int, name: str) -> ast.expr | None:
    if len(call.args) > index:
        return call.args[index]
    return next((k.value for k in call.keywords if k.arg == name), None)


def raised_in(source: str, where: str) -> tuple[list[Raised], list[str]]:
    """Every ``Finding(severity, code, ...)`` call and every ``{"code": ...}`` dict literal in
    ``source``: the codes with their severities, and the places whose code is not a literal."""
    found: list[Raised] = []
    unresolved: list[str] = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Call) and getattr(node.func, "id", getattr(node.func, "attr", None)) == "Finding":
            codes, sevs = _constants(_argument(node, 1, "code")), _severities(_argument(node, 0, "severity"))
        elif isinstance(node, ast.Dict) and any(isinstance(k, ast.Constant) and k.value == "code" for k in node.keys):
            items = {k.value: v for k, v in zip(node.keys, node.values) if isinstance(k, ast.Constant)}
            codes, sevs = _constants(items["code"]), _severities(items.get("severity"))
            if codes is None:
                continue                              # a writer copying a finding's code, not raising one
        else:
            continue
        place = f"{where}:{node.lineno}"
        if codes is None:
            unresolved.append(place)
            continue
        found += [(c, s, place) for c in codes for s in (sorted(sevs) if sevs else [None])]
    return found, unresolved


def _sources() -> list[Path]:
    return sorted([*ROOT.glob("layout/*.py"), *ROOT.glob("physics/*.py")])


def test_readme_table_equals_the_registry():
    registry = [(c.code, tuple(s.value for s in c.severities), c.meaning) for c in CODES.values()]
    table = _readme_table()
    assert len(table) == len({code for code, _, _ in table})          # each code once
    assert table == registry                                             # same codes, severities, meanings, order


def test_every_code_the_sources_raise_is_registered_with_its_severity():
    raised: list[Raised] = []
    unresolved: list[str] = []
    for path in _sources():
        found, bad = raised_in(path.read_text(encoding="utf-8"), path.relative_to(ROOT).as_posix())
        raised += found
        unresolved += bad
    assert not unresolved, f"finding codes that are not literals: {unresolved}"
    assert len({c for c, _, _ in raised}) >= 45                         # the scan sees the sources' codes
    unknown = [(c, w) for c, _, w in raised if c not in CODES]
    assert not unknown, f"unregistered codes: {unknown}"
    wrong = [(c, s, w) for c, s, w in raised if s is not None and s not in {x.value for x in CODES[c].severities}]
    assert not wrong, f"severities the registry does not allow: {wrong}"


def test_the_scan_catches_a_typo_and_a_computed_code():
    src = 'Finding(Severity.ERROR, "sl1p", "typo")\nFinding(Severity.NOTE, "tensioner-" + kind, "computed")\n'
    found, unresolved = raised_in(src, "x.py")
    assert [(c, s) for c, s, _ in found] == [("sl1p", "error")] and "sl1p" not in CODES
    assert unresolved == ["x.py:2"]
    found, _ = raised_in('Finding(Severity.ERROR, "a" if x else "b", "m")', "y.py")
    assert {c for c, _, _ in found} == {"a", "b"}


def test_an_unregistered_code_or_severity_is_refused():
    with pytest.raises(ValueError, match="not registered"):
        Finding(Severity.ERROR, "sl1p", "typo")
    with pytest.raises(ValueError, match="takes severity"):
        Finding(Severity.NOTE, "slip", "an error code raised as a note")
    assert Finding(Severity.WARNING, "recovered", "truncated").code == "recovered"
    assert Finding(Severity.ERROR, "tensioner-lever", "pivot on the line").severity is Severity.ERROR


def test_default_severity_is_the_first():
    assert CODES["recovered"].severity is Severity.NOTE
    assert CODES["tensioner-lever"].severity is Severity.WARNING
    assert CODES["slip"].severities == (Severity.ERROR,)
