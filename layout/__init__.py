"""spanwise's drawing side: read DXF drawings, check them, write the findings back.

The Python API (the command line is a thin layer over it):

* :func:`check` — a drawing (a path, or an ezdxf document) and its spec to a
  :class:`~layout.pipeline.Report`, the one result object every writer takes;
* :func:`annotate` — write a report's findings into an ezdxf document, on spanwise's
  own layers (:mod:`layout.annotate`); :func:`strip` removes them again;
* :func:`render_html` — the HTML report as text (:mod:`layout.html`).

The heavy imports (ezdxf, scipy, matplotlib) happen when a function is first used.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .pipeline import Report

__all__ = ["check", "annotate", "strip", "render_html"]

# Bound here, not lazily: importing the submodule ``layout.annotate`` would otherwise put
# the module where the function ``layout.annotate`` belongs.
from .annotate import annotate, strip  # noqa: E402


def check(drawing: str | Path | Any, *, spec: str | Path | None = None, grip_margin: float | None = None,
          keep_document: bool = True) -> "Report":
    """Check one drawing and return its report.

    Parameters
    ----------
    drawing
        A DXF file's path, or an ezdxf document already in memory.
    spec
        The spec file; default ``NAME.spanwise.toml`` beside a drawing file, if present.
    grip_margin
        Overrides the spec's grip margin (the highest grip utilisation sized for).
    keep_document
        Keep the ezdxf document in ``Report.document`` (for :func:`annotate`).

    Raises
    ------
    layout.errors.FatalInput
        The drawing cannot be analysed: unreadable, no belt loop, a bad spec; its
        ``problems`` holds one line per problem.
    """
    from .pipeline import check_document, check_drawing

    if isinstance(drawing, (str, Path)):
        return check_drawing(drawing, spec=spec, grip_margin=grip_margin, keep_document=keep_document)
    return check_document(drawing, spec=spec, grip_margin=grip_margin)


def render_html(report: "Report") -> str:
    """The HTML report of ``report``: one self-contained page."""
    from .html import render_html as _render

    return _render(report)
