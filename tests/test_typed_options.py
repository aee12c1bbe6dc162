"""Options are enums checked once at the edge: a misspelt value is a clear error, never a default."""

from __future__ import annotations

import pytest

from physics.analysis import Options
from physics.model import Belt, Loop, Pulley, Role, Side, SpanEnds, Tensioning


def test_misspelt_tensioning_is_refused_with_the_allowed_values():
    with pytest.raises(ValueError, match=r"Belt.tensioning = 'fixd': expected one of 'fixed', 'constant'"):
        Belt(tensioning="fixd")


def test_tensioning_given_as_text_becomes_the_enum():
    assert Belt(tensioning="constant").tensioning is Tensioning.CONSTANT


def test_misspelt_role_and_side_are_refused():
    with pytest.raises(ValueError, match=r"Pulley\('A'\).role = 'drver'"):
        Pulley("A", (0.0, 0.0), 0.1, role="drver")
    with pytest.raises(ValueError, match=r"Loop\('L'\).sides = 'bak'"):
        Loop("L", ("A", "B"), (1, 1), ("inside", "bak"), (False, False))


def test_roles_and_sides_given_as_text_become_enums():
    assert Pulley("A", (0.0, 0.0), 0.1, role="driver").role is Role.DRIVER
    lp = Loop("L", ("A", "B"), (1, -1), ("inside", "back"), (False, False))
    assert lp.sides == (Side.INSIDE, Side.BACK)


def test_misspelt_span_ends_is_refused():
    with pytest.raises(ValueError, match="clampd"):
        Options(span_ends="clampd")
    assert Options(span_ends="clamped").span_ends is SpanEnds.CLAMPED
