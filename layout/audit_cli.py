"""``spanwise audit``: the command line of :mod:`layout.audit`."""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path
from typing import Any

__all__ = ["add_audit_parser", "run_audit"]


def add_audit_parser(sub: Any, caution: str) -> None:
    a = sub.add_parser("audit", help="check every drawing of a library, in parallel, incrementally",
                       description="Check every DXF drawing the folders and globs name, each in its own "
                                   "process with a time limit, and write one summary row per drawing. "
                                   "Unchanged drawings come from the cache.", epilog=caution)
    a.add_argument("paths", nargs="+", metavar="FOLDER|GLOB", help="folders (searched recursively), globs, files")
    a.add_argument("--workers", type=int, metavar="N", help="drawings checked at once (default: the core count)")
    a.add_argument("--scheduler", metavar="ADDRESS", help="run on this Dask scheduler (needs spanwise[cluster])")
    a.add_argument("--summary", metavar="OUT.jsonl", help="write the JSON Lines summary here")
    a.add_argument("--csv", metavar="OUT.csv", help="write the summary as CSV here")
    a.add_argument("--html", metavar="OUT.html", help="write an HTML index, the worst drawings first")
    a.add_argument("--out-tree", metavar="DIR",
                   help="write each drawing's annotated copy, JSON and HTML report into DIR, mirroring the library")
    a.add_argument("--spec-default", metavar="FILE", help="spec for drawings without their own NAME.spanwise.toml")
    a.add_argument("--cache", metavar="DIR",
                   help="where unchanged drawings' results are kept (default: .spanwise-cache in the output "
                        "tree, else beside the summary)")
    a.add_argument("--timeout", type=float, default=300.0, metavar="S",
                   help="seconds one drawing may take before it is stopped (default 300)")
    a.add_argument("--fail-on", choices=("error", "warning"), default="error",
                   help="lowest severity that makes the exit status 1 (default: error)")
    a.add_argument("--force", action="store_true", help="check every drawing again, ignoring the cache, and "
                                                        "overwrite outputs spanwise did not write")
    a.add_argument("--quiet", "-q", action="store_true", help="no progress and no totals line")


def _cache_dir(args: argparse.Namespace) -> Path | None:
    from .audit import CACHE_DIR

    if args.cache:
        return Path(args.cache)
    for where in (args.out_tree, args.summary, args.csv, args.html):
        if where:
            base = Path(where) if where == args.out_tree else Path(where).parent
            return base / CACHE_DIR
    return None


def _problems(args: argparse.Namespace) -> list[str]:
    out = []
    if args.workers is not None and args.scheduler:
        out.append("--workers and --scheduler: give one (the cluster's workers check the drawings)")
    if args.workers is not None and args.workers < 1:
        out.append(f"--workers {args.workers}: expected 1 or more")
    if not args.timeout > 0:
        out.append(f"--timeout {args.timeout:g}: expected a positive number of seconds")
    if args.spec_default and not Path(args.spec_default).is_file():
        out.append(f"{args.spec_default}: --spec-default names no file")
    for opt in ("summary", "csv", "html"):
        v = getattr(args, opt)
        if v and not Path(v).resolve().parent.is_dir():
            out.append(f"{v}: the folder for --{opt} does not exist")
    return out


def run_audit(args: argparse.Namespace, fatal: Any) -> int:
    from .audit import AuditOptions, audit, audit_exit
    from .audit_out import progress_printer, totals_line, write_summaries
    from .errors import FatalInput

    problems = _problems(args)
    if problems:
        return fatal(problems)
    opts = AuditOptions(spec_default=Path(args.spec_default) if args.spec_default else None,
                        timeout_s=args.timeout, fail_on=args.fail_on,
                        out_tree=Path(args.out_tree) if args.out_tree else None, force=args.force)
    t0 = time.perf_counter()
    try:
        rows = audit(args.paths, workers=args.workers, options=opts, cache_dir=_cache_dir(args),
                     scheduler=args.scheduler, progress=progress_printer(sys.stderr, quiet=args.quiet))
        written = write_summaries(rows, jsonl=Path(args.summary) if args.summary else None,
                                  csv_path=Path(args.csv) if args.csv else None,
                                  html_path=Path(args.html) if args.html else None, out_tree=opts.out_tree)
    except FatalInput as err:
        return fatal(err.problems)
    except OSError as err:
        return fatal([f"{err.filename or ''}: cannot write an output ({err.strerror or err})"])
    if not args.quiet:
        print(totals_line(rows, time.perf_counter() - t0))
        for line in written:
            print(f"  wrote {line}")
    return audit_exit(rows)
