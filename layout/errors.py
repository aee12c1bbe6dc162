"""Exceptions of the ``layout`` package.

One root, :class:`SpanwiseError`. A :class:`FatalInput` carries every fatal problem
found (one line each): the command line prints them (the first :data:`MAX_LISTED`, then a
count of the rest) and exits with status 2.
"""

from __future__ import annotations

__all__ = ["SpanwiseError", "FatalInput", "NotADrawing", "NoBeltLoop", "SpecError", "OutputRefused",
           "MAX_LISTED", "listed"]

#: Most problems listed one per line; a drawing with hundreds (duplicate labels on a dense
#: sheet) gets these and one line counting the rest, so the first problems stay readable.
MAX_LISTED = 20


def listed(problems: list[str], limit: int = MAX_LISTED) -> list[str]:
    """The first ``limit`` problems, then one line saying how many more there are.

    >>> listed(["a", "b", "c"], 2)
    ['a', 'b', '... and 1 more problem like these']
    """
    if len(problems) <= limit:
        return list(problems)
    rest = len(problems) - limit
    return problems[:limit] + [f"... and {rest} more problem{'s' if rest > 1 else ''} like these"]


class SpanwiseError(Exception):
    """Root of the exceptions spanwise raises on purpose."""


class FatalInput(SpanwiseError, ValueError):
    """Input that cannot be analysed at all; ``problems`` holds one line per problem."""

    def __init__(self, problems: list[str] | str):
        self.problems = [problems] if isinstance(problems, str) else list(problems)
        super().__init__("; ".join(self.problems))


class NotADrawing(FatalInput):
    """The file is not a readable DXF drawing (a DWG, random bytes, empty, truncated)."""


class NoBeltLoop(FatalInput):
    """The drawing reads fine but holds no belt loop (a plate, a parts sheet, a title block)."""


class SpecError(FatalInput):
    """A bad value or an unknown key in the spec file or in a drawn label."""


class OutputRefused(FatalInput):
    """An output file would overwrite something spanwise did not write."""
