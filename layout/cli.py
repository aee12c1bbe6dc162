"""The ``spanwise`` command line: parse, call the library, print, pick the exit status.

Exit status: 0 no finding at or above ``--fail-on`` (default ``error``); 1 at least
one; 2 fatal (unreadable input, bad spec, no belt loop, refused output), with one line
on stderr per problem and no output written.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path
from typing import Any

__all__ = ["main"]

EXIT_OK, EXIT_FINDINGS, EXIT_FATAL = 0, 1, 2

_CAUTION = ("Results are estimates from the drawing as drawn: check them against the belt "
            "maker's data, guard nip points, lock out the drive before tensioning, and follow "
            "local codes and licensed practice.")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # one line, exit 2
        self.exit(EXIT_FATAL, f"spanwise: {message} (see spanwise --help)\n")


def _version() -> str:
    try:
        from importlib.metadata import version

        return version("spanwise")
    except Exception:  # running from a checkout that is not installed
        return "unknown"


def _parser() -> argparse.ArgumentParser:
    p = _Parser(prog="spanwise", description="Check a belt or cable drive drawn in DXF.",
                epilog=_CAUTION)
    p.add_argument("--version", action="version", version=f"spanwise {_version()}")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)
    _check_parser(sub)
    _watch_parser(sub)
    _strip_parser(sub)
    _suggest_parser(sub)
    from .audit_cli import add_audit_parser

    add_audit_parser(sub, _CAUTION)
    cat = sub.add_parser("catalog", help="list the belt sections spanwise knows")
    cat.add_argument("--json", action="store_true", help="print the catalogue as JSON")
    return p


def _output_options(c: argparse.ArgumentParser) -> None:
    where = c.add_mutually_exclusive_group()
    where.add_argument("--out", metavar="OUT.dxf",
                       help="write the annotated copy here (default, when no other output is asked for: "
                            "NAME.spanwise.dxf beside the drawing)")
    where.add_argument("--overlay", metavar="OUT.dxf",
                       help="write spanwise's annotations alone, at the drawing's coordinates, to attach "
                            "as an external reference")
    where.add_argument("--in-place", action="store_true",
                       help="write the annotations into the drawing itself, after a backup NAME.dxf.bak")
    where.add_argument("--read-only", action="store_true", help="write no drawing: print the summary only")
    c.add_argument("--json", metavar="OUT.json", help="write the JSON report here ('-': standard output)")
    c.add_argument("--html", metavar="OUT.html", help="write the HTML report here")
    c.add_argument("--spec", help="spec file (default: NAME.spanwise.toml beside the drawing)")
    c.add_argument("--fail-on", choices=("error", "warning"), default="error",
                   help="lowest severity that makes the exit status 1 (default: error)")
    c.add_argument("--grip-margin", type=float, metavar="U",
                   help="highest grip utilisation the install tension is sized for (default: the "
                        "spec's grip_margin, else 0.8)")
    c.add_argument("--force", action="store_true",
                   help="overwrite output files that spanwise did not write, or that were changed since "
                        "(never the drawing or the spec being read)")
    c.add_argument("--quiet", "-q", action="store_true", help="print nothing but fatal problems")


def _check_parser(sub: Any) -> None:
    c = sub.add_parser("check", help="read one drawing, check it and write the findings back",
                       description="Read one DXF drawing, check its routing and mechanics, and write the "
                                   "findings into an annotated copy, a JSON or an HTML report.",
                       epilog=_CAUTION)
    c.add_argument("drawing", help="the DXF drawing")
    _output_options(c)


def _watch_parser(sub: Any) -> None:
    w = sub.add_parser("watch", help="check a drawing again each time it is saved",
                       description="Check a drawing each time it is saved: rewrite the annotated copy (and "
                                   "the reports asked for) and print one status line per run. Ctrl-C ends.",
                       epilog=_CAUTION)
    w.add_argument("drawing", help="the DXF drawing")
    _output_options(w)
    w.add_argument("--debounce", type=float, default=0.5, metavar="S",
                   help="seconds the file must stay unchanged before it is checked (default 0.5)")
    w.add_argument("--poll", type=float, default=0.25, metavar="S",
                   help="seconds between looks at the file (default 0.25)")
    w.add_argument("--runs", type=int, default=0, help=argparse.SUPPRESS)   # tests: stop after N runs


def _strip_parser(sub: Any) -> None:
    s = sub.add_parser("strip", help="remove spanwise's layers, entities and blocks from a drawing",
                       description="Remove everything spanwise wrote into a drawing: its layers, entities "
                                   "and block definitions. Without --out, in place after a backup.")
    s.add_argument("drawing", help="the DXF drawing")
    s.add_argument("--out", metavar="OUT.dxf", help="write the stripped drawing here instead")
    s.add_argument("--force", action="store_true", help="overwrite an --out file spanwise did not write")


def _suggest_parser(sub: Any) -> None:
    s = sub.add_parser("suggest-idler", help="find idler positions that clear a span's resonances",
                       description="Find positions for a new idler on a span that clear its resonances "
                                   "over the speed range and keep every pulley's grip within the margin.",
                       epilog=_CAUTION)
    s.add_argument("drawing", help="the DXF drawing")
    s.add_argument("--span", required=True, help="the span, FROM-TO in travel order (as in the report)")
    s.add_argument("--loop", help="the loop, where the span id is not unique")
    s.add_argument("--diameter", help="the idler's pitch diameter with a unit, e.g. '90 mm' "
                                      "(default: the smaller of the span's pulleys, at least the section's minimum)")
    s.add_argument("--side", choices=("back", "inside"), default="back",
                   help="press on the back of the belt from outside the loop (default) or from inside")
    s.add_argument("--region", metavar="LAYER", help="allowed area for the idler's centre: closed polylines on LAYER")
    s.add_argument("--count", type=int, default=3, metavar="N", help="how many positions to give at most (default 3)")
    s.add_argument("--clearance", metavar="LENGTH",
                   help="least gap between the idler and every pulley and other span, with a unit, e.g. '8 mm' "
                        "(default: the belt's height where its section gives it, else 5 mm)")
    s.add_argument("--spec", help="spec file (default: NAME.spanwise.toml beside the drawing)")
    s.add_argument("--out", metavar="OUT.dxf", help="write a copy of the drawing with the suggestions drawn")
    s.add_argument("--json", metavar="OUT.json", help="write the suggestions as JSON")
    s.add_argument("--force", action="store_true", help="overwrite output files that spanwise did not write")
    s.add_argument("--quiet", "-q", action="store_true", help="print the suggestion rows only")


def _fatal(lines: list[str]) -> int:
    from .errors import listed

    for line in listed(lines):
        print(f"spanwise: {line}", file=sys.stderr)
    return EXIT_FATAL


def _threshold(fail_on: str) -> Any:
    from physics.findings import Severity

    return Severity.ERROR if fail_on == "error" else Severity.WARNING


def _check_once(args: argparse.Namespace) -> tuple[Any, list[str]]:
    """Plan the outputs, check, write; raise FatalInput with every fatal problem."""
    from .errors import FatalInput
    from .runner import plan_outputs, run_check

    problems: list[str] = []
    if Path(args.drawing).is_dir():
        raise FatalInput(f"{args.drawing}: is a folder; spanwise check reads one DXF drawing: name the "
                         f"drawing (spanwise check FOLDER/NAME.dxf)")
    if args.grip_margin is not None and not 0 < args.grip_margin <= 1:
        problems.append(f"--grip-margin {args.grip_margin}: expected a fraction in (0, 1]")
    outputs = plan_outputs(args, problems)
    if problems:                          # refused before any work: nothing read, nothing written
        raise FatalInput(problems)
    try:
        report, written = run_check(Path(args.drawing), outputs, spec=args.spec, grip_margin=args.grip_margin,
                                    force=args.force)
    except FatalInput as err:
        raise FatalInput(problems + err.problems) from err
    if problems:
        raise FatalInput(problems)
    return report, written


def _check(args: argparse.Namespace) -> int:
    import gc

    # a one-shot run: the cyclic collector would only walk the drawing's objects again
    gc.disable()
    from .console import summary_text
    from .errors import FatalInput

    try:
        report, written = _check_once(args)
    except FatalInput as err:
        return _fatal(err.problems)
    code = EXIT_FINDINGS if report.fails(_threshold(args.fail_on)) else EXIT_OK
    try:
        if args.json == "-":
            from .report import dumps

            sys.stdout.write(dumps(report.to_dict()))
        elif not args.quiet:
            sys.stdout.write(summary_text(report))
            for line in written:
                print(f"  wrote {line}")
        sys.stdout.flush()
    except BrokenPipeError:                # e.g. piped into head: the status still counts
        _silence_stdout()
    return code


def _watch(args: argparse.Namespace) -> int:
    from .watch import watch_drawing

    return watch_drawing(args, _check_once)


def _strip(args: argparse.Namespace) -> int:
    import ezdxf

    from .annotate import strip
    from .output import backup, save_document
    from .runner import Outputs, output_problems

    src = Path(args.drawing)
    out = Path(args.out) if args.out else None
    problems = output_problems(Outputs(out=out), src, None, args.force) if out else []
    if not src.is_file():
        problems.append(f"{src}: no such drawing file")
    if problems:
        return _fatal(problems)
    try:
        doc = ezdxf.readfile(str(src))
    except Exception as err:   # the reader raises many kinds; all mean "cannot be read"
        return _fatal([f"{src}: not a readable DXF drawing ({type(err).__name__}: {err})"])
    removed = strip(doc)
    if out is not None:
        save_document(doc, out)
        print(f"{src}: {removed} spanwise entit{'y' if removed == 1 else 'ies'} removed; written to {out}")
    elif removed == 0:
        print(f"{src}: holds nothing of spanwise's; left as it is")
    else:
        saved = backup(src)
        save_document(doc, src, mode=src.stat().st_mode & 0o7777)
        print(f"{src}: {removed} spanwise entit{'y' if removed == 1 else 'ies'} removed (backup {saved})")
    return EXIT_OK


def _suggest(args: argparse.Namespace) -> int:
    import gc

    gc.disable()
    from physics.model import Side

    from .errors import FatalInput
    from .idler import (console_lines, find_span, length_option, place, placement_dict, region_polygons,
                        suggestion_dict, suggestions_document)
    from .output import DocumentFile, write_files
    from .pipeline import check_drawing
    from .report import dumps
    from .runner import Outputs, output_path, output_problems, spec_in_use

    src = Path(args.drawing)
    problems: list[str] = []
    if src.is_dir():
        return _fatal([f"{src}: is a folder; spanwise suggest-idler reads one DXF drawing"])
    out = output_path(args.out, "--out", problems)
    out_json = output_path(args.json, "--json", problems)
    # the same refusals as check: the drawing, the spec, one file asked for twice, a file that
    # is not a regular file (even with --force), a file spanwise did not write
    problems += output_problems(Outputs(out=out, json=out_json), src, spec_in_use(src, args.spec), args.force)
    diameter = length_option("--diameter", args.diameter, problems, positive=True)
    clearance = length_option("--clearance", args.clearance, problems, positive=False)
    if args.count < 1:
        problems.append(f"--count {args.count}: expected at least 1")
    try:
        # the drawing is read once: the document drawn into is the one analysed
        checked = check_drawing(src, spec=args.spec, keep_document=out is not None)
        ref = find_span(checked, args.span, args.loop)
        region = region_polygons(checked, args.region) if args.region else None
    except FatalInput as err:
        problems += err.problems
    if problems:
        return _fatal(problems)
    try:
        placement = place(checked, ref, radius_m=None if diameter is None else diameter / 2, side=Side(args.side),
                          region=region, count=args.count, clearance_m=clearance)
    except ValueError as err:
        return _fatal([f"--span {args.span}: {err}"])
    found = list(placement.suggestions)
    rows = [suggestion_dict(checked, s, k + 1) for k, s in enumerate(found)]
    lines = console_lines(str(src), checked, placement, found, rows, quiet=args.quiet)
    # every output staged in its temporary file first, then all moved into place: a failure
    # leaves none behind
    files: list[tuple[Path, bytes | str | DocumentFile, int | None]] = []
    if out_json is not None:
        files.append((out_json, dumps(placement_dict(str(src), placement, rows)), None))
    if out is not None and found:
        files.append((out, DocumentFile(suggestions_document(checked, found)), None))
    try:
        write_files(files)
    except OSError as err:
        return _fatal([f"{err.filename or src}: cannot write an output ({err.strerror or err})"])
    for line in lines:
        print(line)
    sys.stdout.flush()
    if not placement.needed:
        return EXIT_OK
    return EXIT_OK if found and found[0].clear else EXIT_FINDINGS


def _catalog(args: argparse.Namespace) -> int:
    import math

    from physics.catalogue import catalogue_rows

    rows_all = catalogue_rows()
    if args.json:
        rows = [{"name": s.name, "family": s.family, "min_pitch_diameter_m": s.min_pitch_diameter_m,
                 "height_m": s.height_m, "mass_per_length_kg_m": s.mass_per_length_kg_m,
                 "groove_angle_deg": None if s.groove_angle_rad is None else math.degrees(s.groove_angle_rad),
                 "friction": s.friction, "effective_friction": s.effective_friction,
                 "max_speed_m_s": s.max_speed_m_s,
                 "stock_lengths_m": None if s.stock_lengths_m is None else list(s.stock_lengths_m),
                 "source": s.source} for s in rows_all]
        print(json.dumps(rows, indent=2))
        return EXIT_OK
    print(f"{'section':<14} {'family':<12} {'min dia mm':>10} {'height mm':>9} {'kg/m':>7} "
          f"{'groove':>6} {'mu':>5} {'mu eff':>6} {'v max':>6}")
    for s in rows_all:
        g = "-" if s.groove_angle_rad is None else f"{math.degrees(s.groove_angle_rad):.0f}"
        m = "-" if s.mass_per_length_kg_m is None else f"{s.mass_per_length_kg_m:.3f}"
        v = "-" if s.max_speed_m_s is None else f"{s.max_speed_m_s:.0f}"
        dmin = "-" if s.min_pitch_diameter_m is None else f"{s.min_pitch_diameter_m * 1e3:.0f}"
        h = "-" if s.height_m is None else f"{s.height_m * 1e3:.1f}"
        print(f"{s.name:<14} {s.family:<12} {dmin:>10} {h:>9} {m:>7} {g:>6} {s.friction:>5.2f} "
              f"{s.effective_friction:>6.3f} {v:>6}")
    print("Also: nPH/nPJ/nPK/nPL/nPM (n ribs), ROUND-<d mm>, WIRE-6X19-<d mm>. Flat belts take width and "
          "thickness. Sources: `spanwise catalog --json`; values from memory must be checked against the "
          "belt maker's data.")
    return EXIT_OK


def main(argv: list[str] | None = None) -> int:
    import logging

    # library chatter (the recovery reader's repairs, skipped entities) is reported as
    # findings; stderr is kept for fatal problems, one line each
    for name in ("ezdxf", "layout", "physics"):
        logging.getLogger(name).addHandler(logging.NullHandler())
        logging.getLogger(name).propagate = False
    args = _parser().parse_args(argv)
    previous = _interrupt_on_signals()
    try:
        return _dispatch(args)
    except KeyboardInterrupt as err:      # Ctrl-C, SIGTERM, SIGHUP: every temporary file is gone
        how = f" ({err.signal_name})" if isinstance(err, Signalled) else ""
        print(f"spanwise: interrupted{how}", file=sys.stderr)
        return EXIT_FATAL
    finally:
        _restore_signals(previous)


class Signalled(KeyboardInterrupt):
    """SIGTERM or SIGHUP, raised where the program is, as Ctrl-C is: the same clean-up runs
    (``write_atomic`` removes its temporary file, ``audit`` stops its children)."""

    def __init__(self, signal_name: str) -> None:
        super().__init__(signal_name)
        self.signal_name = signal_name


def _raise_signalled(signum: int, frame: Any) -> None:
    import signal

    for sig in _HANDLED:                  # once: a second signal must not cut the clean-up short
        signal.signal(sig, _ignore_signal)
    raise Signalled(signal.Signals(signum).name)


def _ignore_signal(signum: int, frame: Any) -> None:
    pass


_HANDLED: list[int] = []


def _interrupt_on_signals() -> dict[int, Any]:
    """Turn SIGTERM and SIGHUP into :class:`Signalled`; return the handlers they had."""
    import signal

    import threading

    previous: dict[int, Any] = {}
    if threading.current_thread() is not threading.main_thread():
        return previous                   # main() called from a thread: signals are not ours
    for name in ("SIGTERM", "SIGHUP"):
        sig = getattr(signal, name, None)
        if sig is None:
            continue
        old = signal.getsignal(sig)
        if old is signal.SIG_IGN:         # nohup: the user asked for this one to be ignored
            continue
        previous[sig] = old
        signal.signal(sig, _raise_signalled)
    _HANDLED[:] = list(previous)
    return previous


def _restore_signals(previous: dict[int, Any]) -> None:
    import signal

    for sig, old in previous.items():
        signal.signal(sig, old if old is not None else signal.SIG_DFL)


def _dispatch(args: argparse.Namespace) -> int:
    try:
        if args.command == "check":
            return _check(args)
        if args.command == "catalog":
            return _catalog(args)
        if args.command == "suggest-idler":
            return _suggest(args)
        if args.command == "watch":
            return _watch(args)
        if args.command == "strip":
            return _strip(args)
        if args.command == "audit":
            from .audit_cli import run_audit

            return run_audit(args, _fatal)
    except BrokenPipeError:                # the reader of our output went away: end quietly
        _silence_stdout()
        return EXIT_OK
    except Exception as err:  # a bug of ours: one line, not a traceback (SPANWISE_DEBUG=1 shows it)
        if os.environ.get("SPANWISE_DEBUG"):
            raise
        where = getattr(args, "drawing", "")
        print(f"spanwise: internal error while working on {where}: {type(err).__name__}: {err} "
              f"(set SPANWISE_DEBUG=1 for details, and please report it with the drawing)", file=sys.stderr)
        return EXIT_FATAL
    return EXIT_FATAL


def _silence_stdout() -> None:
    try:
        fd = os.open(os.devnull, os.O_WRONLY)
        os.dup2(fd, sys.stdout.fileno())
    except OSError:
        pass


def run() -> None:
    """Console entry point: run, flush, and leave without tearing the heap down.

    A large drawing leaves about a million objects behind; freeing them one by one at
    interpreter exit costs half a second for nothing. Every output is written and closed
    before ``main`` returns.
    """
    code = main()
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        _silence_stdout()
    sys.stderr.flush()
    os._exit(code)


if __name__ == "__main__":
    run()
