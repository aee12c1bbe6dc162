"""An audit's outputs: the JSON Lines and CSV summaries, the HTML index, and the progress shown
while it runs (a live bar on a terminal, plain lines in a pipe, nothing when quiet)."""

from __future__ import annotations

import csv
import html
import io
import json
import sys
import time
from pathlib import Path
from typing import Any, Callable, TextIO

from .audit import STATUSES, SUMMARY_COLUMNS, Progress, out_paths
from .output import write_atomic

__all__ = ["summary_jsonl", "summary_csv", "index_html", "progress_printer", "totals_line"]

CAUTION = ("Estimates only: check them against the belt maker's data. Guard every nip point, lock out "
           "and tag out the drive before tensioning or inspecting it, and follow local codes and "
           "licensed engineering practice.")


def summary_jsonl(rows: list[dict[str, Any]]) -> str:
    """One JSON object a line, in path order, columns in the contract's order."""
    return "".join(json.dumps({k: r[k] for k in SUMMARY_COLUMNS if k in r}, ensure_ascii=False) + "\n"
                   for r in rows)


def summary_csv(rows: list[dict[str, Any]]) -> str:
    """The same columns as CSV; ``codes`` as a JSON object in its cell."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(SUMMARY_COLUMNS)
    for r in rows:
        w.writerow([json.dumps(r.get(k, {}), sort_keys=True) if k == "codes" else
                    ("" if r.get(k) is None else r.get(k, "")) for k in SUMMARY_COLUMNS])
    return buf.getvalue()


def totals_line(rows: list[dict[str, Any]], seconds: float) -> str:
    """``audit: 200 drawings in 41.2 s: 120 clean, 40 findings, ...; 180 from the cache``."""
    counts = {s: sum(1 for r in rows if r["status"] == s) for s in STATUSES}
    cached = sum(1 for r in rows if r.get("cached"))
    parts = ", ".join(f"{n} {s}" for s, n in counts.items() if n)
    return (f"audit: {len(rows)} drawing{'s' if len(rows) != 1 else ''} in {seconds:.1f} s"
            f"{': ' + parts if parts else ''}; {cached} from the cache")


def _rank(r: dict[str, Any]) -> tuple:
    order = {"failed": 0, "timed-out": 1, "findings": 2, "clean": 3, "no-drive": 4}
    return (order[r["status"]], -r["errors"], -r["warnings"], r["path"])


def index_html(rows: list[dict[str, Any]], out_tree: Path | None, index_path: Path) -> str:
    """A plain, self-contained HTML index: the worst drawings first, each linked to its report."""
    counts = {s: sum(1 for r in rows if r["status"] == s) for s in STATUSES}
    body = []
    for r in sorted(rows, key=_rank):
        name = html.escape(r["path"])
        if out_tree is not None and r["status"] in ("clean", "findings"):
            report = out_paths(r["path"], out_tree)[2]
            href = html.escape(Path(_relpath(report, index_path.parent)).as_posix(), quote=True)
            name = f'<a href="{href}">{name}</a>'
        codes = ", ".join(f"{html.escape(c)} {n}" for c, n in sorted(r["codes"].items(), key=lambda x: -x[1]))
        grip = "" if r["worst_grip_utilisation"] is None else f"{r['worst_grip_utilisation']:.2f}"
        note = html.escape(r.get("message", ""))
        body.append(f"<tr class=\"{r['status']}\"><td>{name}</td><td>{r['status']}</td><td>{r['errors']}</td>"
                    f"<td>{r['warnings']}</td><td>{r['notes']}</td><td>{grip}</td><td>{codes}{note}</td></tr>")
    summary = " · ".join(f"{n} {s}" for s, n in counts.items())
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>spanwise audit</title>
<style>body{{font:14px/1.4 system-ui,sans-serif;margin:2em;color:#111}}table{{border-collapse:collapse}}
td,th{{border-bottom:1px solid #ddd;padding:.25em .6em;text-align:left;vertical-align:top}}
tr.failed td,tr.timed-out td{{background:#fde8e8}}tr.findings td{{background:#fff6e0}}
.caution{{border-left:4px solid #b45309;padding:.4em .8em;background:#fff8eb}}</style></head><body>
<h1>Belt drive audit: {len(rows)} drawings</h1>
<p>{html.escape(summary)}</p>
<p class="caution">{html.escape(CAUTION)}</p>
<table><thead><tr><th>drawing</th><th>status</th><th>errors</th><th>warnings</th><th>notes</th>
<th>worst grip</th><th>codes</th></tr></thead><tbody>
{chr(10).join(body)}
</tbody></table></body></html>
"""


def _relpath(target: Path, start: Path) -> str:
    import os

    return os.path.relpath(target.resolve(), start.resolve())


def progress_printer(stream: TextIO = sys.stderr, *, quiet: bool = False, tty: bool | None = None
                     ) -> Callable[[Progress], None] | None:
    """A live bar on a terminal (redrawn in place), a plain line every few seconds otherwise."""
    if quiet:
        return None
    live = stream.isatty() if tty is None else tty
    last = [0.0]

    def show(p: Progress) -> None:
        counts = " ".join(f"{s} {n}" for s, n in p.counts.items() if n)
        eta = p.eta_s()
        left = "" if eta is None or p.done == p.total else f" · {eta:.0f} s left"
        if live:
            width = 24
            filled = int(width * p.done / max(p.total, 1))
            stream.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {p.done}/{p.total} {counts}{left}\x1b[K")
            if p.done == p.total:
                stream.write("\n")
            stream.flush()
        elif p.done == p.total or time.perf_counter() - last[0] >= 2.0:
            last[0] = time.perf_counter()
            stream.write(f"audit: {p.done}/{p.total} done ({counts}){left}\n")
            stream.flush()

    return show


def write_summaries(rows: list[dict[str, Any]], *, jsonl: Path | None, csv_path: Path | None,
                    html_path: Path | None, out_tree: Path | None) -> list[str]:
    """Write the summaries asked for, atomically; one line per file written."""
    done = []
    if jsonl is not None:
        write_atomic(jsonl, summary_jsonl(rows))
        done.append(f"summary {jsonl}")
    if csv_path is not None:
        write_atomic(csv_path, summary_csv(rows))
        done.append(f"CSV summary {csv_path}")
    if html_path is not None:
        write_atomic(html_path, index_html(rows, out_tree, html_path))
        done.append(f"HTML index {html_path}")
    return done
