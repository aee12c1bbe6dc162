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
import tempfile
from pathlib import Path

__all__ = ["main"]

EXIT_OK, EXIT_FINDINGS, EXIT_FATAL = 0, 1, 2

_CAUTION = ("Results are estimates from the drawing as drawn: check them against the belt "
            "maker's data, guard nip points, lock out the drive before tensioning, and follow "
            "local codes and licensed practice.")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # one line, exit 2
        self.exit(EXIT_FATAL, f"spanwise: {message} (see spanwise --help)\n")


def _parser() -> argparse.ArgumentParser:
    p = _Parser(prog="spanwise", description="Check a belt or cable drive drawn in DXF.",
                epilog=_CAUTION)
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)
    c = sub.add_parser("check", help="read one drawing, check its routing and report",
                       description="Read one DXF drawing, check its routing and report.",
                       epilog=_CAUTION)
    c.add_argument("drawing", help="the DXF drawing")
    c.add_argument("--spec", help="spec file (default: NAME.spanwise.toml beside the drawing)")
    c.add_argument("--json", metavar="OUT.json", help="write the JSON report here")
    c.add_argument("--fail-on", choices=("error", "warning"), default="error",
                   help="lowest severity that makes the exit status 1 (default: error)")
    c.add_argument("--grip-margin", type=float, metavar="U",
                   help="highest grip utilisation the install tension is sized for (default: the "
                        "spec's grip_margin, else 0.8)")
    c.add_argument("--force", action="store_true",
                   help="overwrite output files that spanwise did not write")
    c.add_argument("--quiet", "-q", action="store_true", help="print nothing but fatal problems")
    cat = sub.add_parser("catalog", help="list the belt sections spanwise knows")
    cat.add_argument("--json", action="store_true", help="print the catalogue as JSON")
    return p


def _is_ours(path: Path) -> bool:
    """Whether ``path`` is a JSON report spanwise wrote."""
    try:
        with path.open("r", encoding="utf-8") as fh:
            data = json.load(fh)
        return isinstance(data, dict) and str(data.get("schema", "")).startswith("spanwise-report/")
    except (OSError, ValueError):
        return False


def _write_atomic(path: Path, text: str) -> None:
    fd, tmp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=str(path.parent or "."))
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def _check(args: argparse.Namespace) -> int:
    import gc

    # a one-shot run: the cyclic collector would only walk the drawing's objects again
    gc.disable()
    from physics.findings import Severity

    from .errors import FatalInput
    from .pipeline import VERSION, check_drawing
    from .report import dumps, report_dict, summary_text

    problems: list[str] = []
    out_json = Path(args.json) if args.json else None
    src = Path(args.drawing)
    if out_json is not None:
        if out_json.exists() and src.exists() and out_json.resolve() == src.resolve():
            problems.append(f"{out_json}: is the input drawing; choose another --json file")
        elif out_json.exists() and not args.force and not _is_ours(out_json):
            problems.append(f"{out_json}: exists and was not written by spanwise; use --force to "
                            f"overwrite it")
        elif not out_json.parent.exists() and str(out_json.parent):
            problems.append(f"{out_json}: folder {out_json.parent} does not exist")
    try:
        if args.grip_margin is not None and not 0 < args.grip_margin <= 1:
            raise FatalInput(f"--grip-margin {args.grip_margin}: expected a fraction in (0, 1]")
        checked = check_drawing(src, spec=args.spec, grip_margin=args.grip_margin)
    except FatalInput as err:
        for line in problems + err.problems:
            print(f"spanwise: {line}", file=sys.stderr)
        return EXIT_FATAL
    if problems:
        for line in problems:
            print(f"spanwise: {line}", file=sys.stderr)
        return EXIT_FATAL
    findings = checked.findings
    if out_json is not None:
        rep = report_dict(checked.model, checked.results, findings, version=VERSION)
        try:
            _write_atomic(out_json, dumps(rep))
        except OSError as err:
            print(f"spanwise: {out_json}: cannot write the report ({err.strerror or err})", file=sys.stderr)
            return EXIT_FATAL
    if not args.quiet:
        sys.stdout.write(summary_text(checked.model, checked.results, findings))
    threshold = Severity.ERROR if args.fail_on == "error" else Severity.WARNING
    bad = any(f.severity.rank >= threshold.rank for f in findings)
    return EXIT_FINDINGS if bad else EXIT_OK


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
    try:
        if args.command == "check":
            return _check(args)
        if args.command == "catalog":
            return _catalog(args)
    except KeyboardInterrupt:
        print("spanwise: interrupted", file=sys.stderr)
        return EXIT_FATAL
    return EXIT_FATAL


def run() -> None:
    """Console entry point: run, flush, and leave without tearing the heap down.

    A large drawing leaves about a million objects behind; freeing them one by one at
    interpreter exit costs half a second for nothing. Every output is written and closed
    before ``main`` returns.
    """
    code = main()
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(code)


if __name__ == "__main__":
    run()
