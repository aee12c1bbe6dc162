"""One ``check`` run: which outputs, whether each may be written, the check, the writing.

Shared by ``spanwise check`` and ``spanwise watch``. Every output is refused before any
work is done when it would overwrite the drawing or the spec being read, a file that is
not a regular file, or a file spanwise did not write (or that was changed since) without
``--force``; nothing is written when any problem is fatal.
"""

from __future__ import annotations

import os
import re

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import FatalInput
from .output import DIGEST_PLACEHOLDER, DocumentFile, backup, is_sealed, same_file, seal, write_files

__all__ = ["Outputs", "output_path", "plan_outputs", "output_problems", "run_check", "spec_in_use"]

STDOUT = "-"
_KINDS = (("--out", "dxf"), ("--overlay", "dxf"), ("--html", "html"), ("--json", "json"))


@dataclass(frozen=True, slots=True)
class Outputs:
    """What one run writes; ``json`` may be ``"-"`` for standard output."""

    out: Path | None = None
    overlay: Path | None = None
    in_place: bool = False
    json: Path | str | None = None
    html: Path | None = None

    @property
    def needs_document(self) -> bool:
        """Keep the document read: the DXF outputs write into it, the HTML report draws it
        (read again, a drawing rebuilt from its raw tags would not read)."""
        return self.out is not None or self.overlay is not None or self.in_place or self.html is not None

    def files(self) -> list[tuple[str, Path]]:
        """The output files with their kind (``dxf``, ``json``, ``html``); not stdout."""
        return [(k, p) for _, k, p in self.named_files()]

    def named_files(self) -> list[tuple[str, str, Path]]:
        """The output files with the option naming each and its kind; not stdout."""
        js = None if self.json in (None, STDOUT) else Path(self.json)
        rows = [("--out", self.out), ("--overlay", self.overlay), ("--html", self.html), ("--json", js)]
        return [(o, dict(_KINDS)[o], p) for o, p in rows if p is not None]


def output_path(v: str | None, option: str, problems: list[str]) -> Path | None:
    """The output file an option names (``None``: not given); an empty name adds one line
    to ``problems``."""
    if v is None:
        return None
    if not v.strip():
        problems.append(f"{option} '': expected a file name")
        return None
    return Path(v)


def plan_outputs(args: Any, problems: list[str]) -> Outputs:
    """The outputs the command line asks for: with none of --out, --overlay, --in-place,
    --read-only, --json or --html, the annotated copy ``NAME.spanwise.dxf`` beside the drawing."""
    out = output_path(args.out, "--out", problems)
    overlay = output_path(args.overlay, "--overlay", problems)
    html = output_path(args.html, "--html", problems)
    js: Path | str | None = args.json if args.json == STDOUT else output_path(args.json, "--json", problems)
    # an option given with an empty name is refused above, not taken as "none given"
    nothing = not (args.out is not None or args.overlay is not None or args.in_place or args.read_only
                   or args.json is not None or args.html is not None)
    if nothing:
        src = Path(args.drawing)
        out = src.with_name(src.stem + ".spanwise.dxf")
    return Outputs(out, overlay, bool(args.in_place), js, html)


def spec_in_use(drawing: Path, spec: str | None) -> Path | None:
    """The spec file a check of ``drawing`` reads, if any."""
    from .spec import spec_path_for

    if spec is not None:
        return Path(spec)
    auto = spec_path_for(drawing)
    return auto if auto.is_file() else None


#: spanwise's JSON reports open with their schema: the head of a file is enough to tell.
_OUR_JSON_HEAD = re.compile(rb'\A\s*\{\s*"schema"\s*:\s*"spanwise-')


def _is_our_json(path: Path) -> bool:
    """Whether ``path`` is a JSON report spanwise wrote, from its first 4 KiB only (an
    existing 3 GB file is not loaded to find out)."""
    try:
        with path.open("rb") as fh:
            return bool(_OUR_JSON_HEAD.match(fh.read(4096)))
    except OSError:
        return False


def _target_problem(kind: str, p: Path, drawing: Path, spec: Path | None, force: bool) -> str | None:
    if same_file(p, drawing):
        return f"{p}: is the drawing being checked; spanwise writes over it only with --in-place"
    if spec is not None and same_file(p, spec):
        return f"{p}: is the spec file being read; choose another output file"
    if not p.parent.is_dir():
        return f"{p}: folder {p.parent} does not exist"
    if not p.exists():
        return None
    if not p.is_file():
        return f"{p}: exists and is not a regular file (a folder, device or pipe); choose another output file"
    ours = _is_our_json(p) if kind == "json" else is_sealed(p)
    if not ours and not force:
        what = "was not written by spanwise, or was changed since"
        return f"{p}: exists and {what}; use --force to overwrite it"
    return None


def output_problems(outputs: Outputs, drawing: Path, spec: Path | None, force: bool, *,
                    rebuilt: bool = False) -> list[str]:
    """Reasons not to write the outputs, one line each (empty: all may be written).

    ``rebuilt``: the drawing was read from its raw DXF tags into a new document
    (``Drawing.rebuilt``), which must not replace the user's file (known once it is read).
    """
    problems = []
    groups: list[list[tuple[str, str, Path]]] = []
    for option, kind, p in outputs.named_files():
        # one file however it is spelt: relative or absolute, through a symlink, a hard link
        key = os.path.realpath(p) if p.parent.is_dir() else os.path.abspath(p)
        for g in groups:
            if g[0][0] == key or same_file(p, g[0][2]):
                g.append((key, option, p))
                break
        else:
            groups.append([(key, option, p)])
    for g in groups:
        p = g[0][2]
        if len(g) > 1:
            problems.append(f"{p}: named by both {' and '.join(o for _, o, _ in g)}; give each output its own file")
            continue
        problem = _target_problem(dict(_KINDS)[g[0][1]], p, drawing, spec, force)
        if problem:
            problems.append(problem)
    if outputs.in_place and drawing.exists() and not drawing.is_file():
        problems.append(f"{drawing}: --in-place needs a regular file")
    if outputs.in_place and rebuilt:
        problems.append(f"{drawing}: --in-place refused: ezdxf cannot read this file, so spanwise rebuilt "
                        f"its entities from the raw DXF tags, and writing that copy back would replace "
                        f"your drawing; write an annotated copy with --out instead")
    return problems


def run_check(drawing: Path, outputs: Outputs, *, spec: str | None, grip_margin: float | None,
              force: bool) -> tuple[Any, list[str]]:
    """Check ``drawing`` and write ``outputs``; return the report and one line per file written.

    Raises
    ------
    FatalInput
        Every fatal problem: the drawing, the spec, and every output refused.
    """
    from .pipeline import check_drawing

    problems: list[str] = []
    if drawing.is_dir():
        problems.append(f"{drawing}: is a folder; spanwise check reads one DXF drawing (check every "
                        f"drawing of a folder with: spanwise audit {drawing})")
        raise FatalInput(problems)
    problems += output_problems(outputs, drawing, spec_in_use(drawing, spec), force)
    try:
        report = check_drawing(drawing, spec=spec, grip_margin=grip_margin, keep_document=outputs.needs_document)
    except FatalInput as err:
        raise FatalInput(problems + err.problems) from err
    if report.model.drawing.rebuilt:
        problems += output_problems(Outputs(in_place=outputs.in_place), drawing, None, force, rebuilt=True)
    if problems:
        raise FatalInput(problems)
    try:
        return report, write_outputs(report, outputs, drawing)
    except OSError as err:
        raise FatalInput(f"{err.filename or drawing}: cannot write an output ({err.strerror or err})") from err


def write_outputs(report: Any, outputs: Outputs, drawing: Path) -> list[str]:
    """Write every output of ``report``; return one line per file written.

    The files are written by :func:`write_files` (reports made in memory, drawings streamed
    into their temporary files): all the temporary files first, then all moved into place,
    so a failure or an interruption part way leaves no output half done and none of the old
    ones replaced.
    """
    from .report import dumps

    files: list[tuple[Path | str, bytes | str | DocumentFile, int | None]] = []
    done = []
    if outputs.json is not None and outputs.json != STDOUT:
        files.append((outputs.json, dumps(report.to_dict()), None))
        done.append(f"JSON report {outputs.json}")
    if outputs.html is not None:
        files.append((outputs.html, seal(_html(report).encode("utf-8")), None))
        done.append(f"HTML report {outputs.html}")
    in_place = None
    if outputs.out is not None or outputs.in_place:
        from .annotate import annotate

        raw = DocumentFile(annotate(report.document, report))
        if outputs.in_place:
            in_place = raw
        else:
            files.append((outputs.out, raw, None))
            done.append(f"annotated copy {outputs.out}")
    if outputs.overlay is not None:
        from .annotate import overlay

        files.append((outputs.overlay, DocumentFile(overlay(report)), None))
        done.append(f"overlay {outputs.overlay}")
    if in_place is not None:
        saved = backup(drawing)
        files.append((drawing, in_place, drawing.stat().st_mode & 0o7777))
        done.append(f"annotations into {drawing} (backup {saved})")
    write_files(files)
    return done


def _html(report: Any) -> str:
    """The HTML report with the seal that marks it as spanwise's own, untouched output."""
    from .html import render_html

    text = render_html(report)
    meta = f'<meta name="generator" content="spanwise {report.version}; {DIGEST_PLACEHOLDER}">'
    return text.replace("<head>", "<head>\n" + meta, 1) if "<head>" in text else meta + text
