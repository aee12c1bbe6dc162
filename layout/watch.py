"""``spanwise watch``: check a drawing again each time it is saved.

The drawing is polled (its size and modification time; no extra dependency and no
platform-specific notification API). A change is checked once the file has stayed
unchanged for the debounce time, and only when the file is complete: a DXF being saved
has no end-of-file marker yet, so it is looked at again on the next poll. Every run
rewrites the outputs and prints one status line; Ctrl-C ends the watch cleanly.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import Any, Callable

__all__ = ["watch_drawing", "file_stamp", "looks_complete"]

#: How many polls a file without its end-of-file marker is waited for before it is
#: checked anyway (then the check reports it as truncated).
INCOMPLETE_POLLS = 40


def file_stamp(path: Path) -> tuple[int, int] | None:
    """``(size, mtime_ns)`` of ``path``, or ``None`` when it cannot be seen."""
    try:
        st = path.stat()
    except OSError:
        return None
    return (st.st_size, st.st_mtime_ns)


def looks_complete(path: Path) -> bool:
    """Whether the file ends with a DXF end-of-file marker (not half written)."""
    try:
        with path.open("rb") as fh:
            fh.seek(0, 2)
            size = fh.tell()
            fh.seek(max(0, size - 64))
            tail = fh.read()
    except OSError:
        return False
    return b"EOF" in tail


def _status(path: Path, run: Callable[[Any], tuple[Any, list[str]]], args: Any) -> str:
    from .errors import FatalInput

    try:
        report, written = run(args)
    except FatalInput as err:
        return f"{path.name}: not checked: " + "; ".join(err.problems)
    fs = report.findings
    counts = [sum(1 for f in fs if f.severity.value == s) for s in ("error", "warning", "note")]
    line = f"{path.name}: {counts[0]} error(s), {counts[1]} warning(s), {counts[2]} note(s)"
    return line + (f"; wrote {', '.join(written)}" if written else "")


def watch_drawing(args: Any, run: Callable[[Any], tuple[Any, list[str]]], *,
                  echo: Callable[[str], None] | None = None) -> int:
    """Watch ``args.drawing`` and call ``run(args)`` after each completed save.

    ``args`` carries ``drawing``, ``debounce`` and ``poll`` (seconds), ``runs`` (stop after
    that many checks; 0: until Ctrl-C) and ``in_place``. Returns the exit status.
    """
    say = echo or (lambda s: print(s, flush=True))
    path = Path(args.drawing)
    if getattr(args, "in_place", False):
        print("spanwise: watch cannot write into the drawing it watches; use --out or the default copy",
              file=sys.stderr)
        return 2
    if path.is_dir() or not path.exists():
        print(f"spanwise: {path}: no such drawing file to watch", file=sys.stderr)
        return 2
    say(f"watching {path} (Ctrl-C to stop)")
    try:
        _loop(path, args, run, say)
    except KeyboardInterrupt:
        say("stopped")
    return 0


def _loop(path: Path, args: Any, run: Callable[[Any], tuple[Any, list[str]]], say: Callable[[str], None]) -> None:
    checked: tuple[int, int] | None = None
    waited = runs = 0
    while not args.runs or runs < args.runs:
        stamp = file_stamp(path)
        if stamp is None or stamp == checked:
            time.sleep(args.poll)
            continue
        time.sleep(args.debounce)
        if file_stamp(path) != stamp:
            continue                      # still being written
        if not looks_complete(path) and waited < INCOMPLETE_POLLS:
            waited += 1
            time.sleep(args.poll)
            continue
        waited = 0
        say(time.strftime("%H:%M:%S ") + _status(path, run, args))
        checked = stamp
        runs += 1
