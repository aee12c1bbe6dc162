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
    s.add_argument("--count", type=int, default=3, help="how many positions to give (default 3)")
    s.add_argument("--spec", help="spec file (default: NAME.spanwise.toml beside the drawing)")
    s.add_argument("--out", metavar="OUT.dxf", help="write a copy of the drawing with the suggestions drawn")
    s.add_argument("--json", metavar="OUT.json", help="write the suggestions as JSON")
    s.add_argument("--force", action="store_true", help="overwrite output files that spanwise did not write")
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
    from .console import summary_text
    from .report import dumps, report_dict

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


def _output_problems(out: Path | None, src: Path, force: bool, *, ours: bool = False) -> list[str]:
    """Reasons not to write ``out`` (one line each)."""
    if out is None:
        return []
    if out.exists() and src.exists() and out.resolve() == src.resolve():
        return [f"{out}: is the input drawing; spanwise never writes over its input here"]
    if not out.parent.exists() and str(out.parent):
        return [f"{out}: folder {out.parent} does not exist"]
    if out.exists() and not force and not ours:
        return [f"{out}: exists and was not written by spanwise; use --force to overwrite it"]
    return []


def _suggest(args: argparse.Namespace) -> int:
    import gc

    gc.disable()
    from physics.model import Side

    from .errors import FatalInput
    from .idler import find_span, region_polygons, suggest, suggestion_dict, write_suggestions
    from .pipeline import check_drawing
    from .quantity import QuantityError, parse_quantity
    from .report import dumps

    src = Path(args.drawing)
    out = Path(args.out) if args.out else None
    out_json = Path(args.json) if args.json else None
    problems = _output_problems(out, src, args.force)
    problems += _output_problems(out_json, src, args.force, ours=bool(out_json and _is_ours(out_json)))
    radius = None
    if args.diameter is not None:
        try:
            radius = parse_quantity(args.diameter, "length") / 2
            if radius <= 0:
                raise QuantityError("expected a diameter greater than 0")
        except QuantityError as err:
            problems.append(f"--diameter: {err}")
    if args.count < 1:
        problems.append(f"--count {args.count}: expected at least 1")
    try:
        checked = check_drawing(src, spec=args.spec)
        ref = find_span(checked, args.span, args.loop)
        region = region_polygons(checked, args.region) if args.region else None
    except FatalInput as err:
        problems += err.problems
    if problems:
        for line in problems:
            print(f"spanwise: {line}", file=sys.stderr)
        return EXIT_FATAL
    try:
        found = suggest(checked, ref, radius_m=radius, side=Side(args.side), region=region, count=args.count)
    except ValueError as err:
        print(f"spanwise: --span {args.span}: {err}", file=sys.stderr)
        return EXIT_FATAL
    rows = [suggestion_dict(checked, s, k + 1) for k, s in enumerate(found)]
    if out_json is not None:
        _write_atomic(out_json, dumps({"schema": "spanwise-idlers/1", "drawing": str(src), "span": ref.span_id,
                                       "loop": ref.loop_id, "suggestions": rows}))
    if out is not None and found:
        write_suggestions(checked, found, out)
    if not found:
        print(f"{src}: no position on span {ref.span_id} of loop {ref.loop_id} gives a valid idler", flush=True)
        return EXIT_FINDINGS
    units = checked.model.units
    print(f"{src}: idler positions for span {ref.span_id} of loop {ref.loop_id} "
          f"(pitch diameter {rows[0]['pitch_diameter_m'] * 1e3:.1f} mm, {args.side} side)")
    print(f"  {'#':>2} {'centre (' + units + ')':>24} {'along':>6} {'push mm':>8} {'wrap':>6} {'hub N':>7} "
          f"{'grip':>5} {'clear':>6} {'left':>4}  new spans f1 Hz")
    for row in rows:
        cx, cy = row["center"]
        f1 = ", ".join(f"{k} {v['frequencies_hz'][0]:.1f}" for k, v in row["spans"].items())
        print(f"  {row['rank']:>2} {f'({cx:.2f}, {cy:.2f})':>24} {row['along']:>6.2f} "
              f"{row['deflection_m'] * 1e3:>8.2f} {row['wrap_deg']:>6.1f} {row['hub_load_n']:>7.0f} "
              f"{row['worst_grip_utilisation']:>5.2f} {row['resonance_clearance']:>6.3f} "
              f"{row['resonances_left']:>4}  {f1}")
    print("  clear: smallest |excitation/f - 1| of the new spans over the speed range; left: their resonance bands")
    return EXIT_OK if rows[0]["resonances_left"] == 0 else EXIT_FINDINGS


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
        if args.command == "suggest-idler":
            return _suggest(args)
    except KeyboardInterrupt:
        print("spanwise: interrupted", file=sys.stderr)
        return EXIT_FATAL
    except Exception as err:  # a bug of ours: one line, not a traceback (SPANWISE_DEBUG=1 shows it)
        if os.environ.get("SPANWISE_DEBUG"):
            raise
        where = getattr(args, "drawing", "")
        print(f"spanwise: internal error while working on {where}: {type(err).__name__}: {err} "
              f"(set SPANWISE_DEBUG=1 for details, and please report it with the drawing)", file=sys.stderr)
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
