"""Exceptions of the ``layout`` package.

One root, :class:`SpanwiseError`. A :class:`FatalInput` carries every fatal problem
found (one line each): the command line prints them all and exits with status 2.
"""

from __future__ import annotations

__all__ = ["SpanwiseError", "FatalInput", "NotADrawing", "NoBeltLoop", "SpecError", "OutputRefused"]


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
