"""spanwise's drawing side: read DXF drawings, check them, write the findings back.

The Python API (the command line is a thin layer over it):

* :func:`check` — a drawing (a path, or an ezdxf document) and its spec to a
  :class:`~layout.pipeline.Report`, the one result object every writer takes;
* :func:`annotate` — write a report's findings into an ezdxf document, on spanwise's
  own layers (:mod:`layout.annotate`); :func:`strip` removes them again;
* :func:`render_html` — the HTML report as text (:mod:`layout.html`).

Imports are lazy, so ``import layout`` costs nothing until a function is used.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .pipeline import Report

__all__ = ["check", "annotate", "strip", "render_html"]


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


def annotate(doc: Any, report: "Report") -> Any:
    """Write ``report``'s results and findings into the ezdxf document ``doc`` on spanwise's
    own layers, replacing what spanwise wrote there before; return ``doc``."""
    from .annotate import annotate as _annotate

    return _annotate(doc, report)


def strip(doc: Any) -> int:
    """Remove spanwise's layers, entities and blocks from ``doc``; return how many entities."""
    from .annotate import strip as _strip

    return _strip(doc)


def render_html(report: "Report") -> str:
    """The HTML report of ``report``: one self-contained page."""
    from .html import render_html as _render

    return _render(report)
