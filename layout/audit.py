"""Audit a drawing library: every drawing checked in its own process, one summary row each.

Stages: find the drawings (:func:`find_drawings`: folders recursively, globs, files; never
spanwise's own outputs), key each by the content of the drawing, its spec, the library's
default spec, the tool version and the options (:func:`cache_key`), take unchanged ones
from the cache, check the rest in isolated child processes with a time and memory limit
(:func:`check_isolated`) on a local pool or a Dask cluster (:mod:`layout.cluster`), and
write the summary (JSON Lines, CSV, an HTML index) and, with an output tree, each drawing's
annotated copy and reports.

A summary row (the contract): ``path`` (relative to the argument it came from, with ``/``;
prefixed by the argument when there are several), ``status`` (``clean``, ``findings``,
``no-drive``, ``failed``, ``timed-out``), ``exit`` (0, 1, 2), ``loops``, ``errors``,
``warnings``, ``notes``, ``codes``, ``worst_grip_utilisation``, ``lowest_resonance_margin``,
``seconds``; spanwise adds ``cached`` and, for a failed file, ``message``.
"""

from __future__ import annotations

import glob
import hashlib
import json
import math
import os
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable

from physics.findings import Severity

from .errors import FatalInput, NoBeltLoop, listed
from .output import write_atomic

__all__ = ["Source", "AuditOptions", "find_drawings", "cache_key", "check_source", "check_isolated",
           "audit", "audit_exit", "Cache", "Progress", "out_paths", "STATUSES", "SUMMARY_COLUMNS"]

STATUSES = ("clean", "findings", "no-drive", "failed", "timed-out")
SUMMARY_COLUMNS = ("path", "status", "exit", "loops", "errors", "warnings", "notes", "codes",
                   "worst_grip_utilisation", "lowest_resonance_margin", "seconds", "cached", "message")
#: Names of spanwise's own outputs, never audited as drawings.
_OWN_SUFFIXES = (".spanwise.dxf",)
#: The cache folder's name inside the output location.
CACHE_DIR = ".spanwise-cache"


@dataclass(frozen=True, slots=True)
class Source:
    """One drawing to audit: where it is, its summary path, and its spec (or none)."""

    path: Path
    rel: str
    spec: Path | None = None


@dataclass(frozen=True, slots=True)
class AuditOptions:
    """What changes an audit's results, and where its outputs go."""

    spec_default: Path | None = None
    timeout_s: float = 300.0
    memory_bytes: int | None = None            # per child; None: a share of the machine's memory
    fail_on: str = "error"
    out_tree: Path | None = None
    force: bool = False

    def key_text(self) -> str:
        """The options that change a row, for the cache key."""
        return json.dumps({"fail_on": self.fail_on, "out_tree": self.out_tree is not None}, sort_keys=True)


# --------------------------------------------------------------------------- finding the drawings


def _is_drawing(p: Path) -> bool:
    name = p.name.lower()
    return p.is_file() and name.endswith(".dxf") and not name.endswith(_OWN_SUFFIXES)


def _posix(p: Path) -> str:
    return "/".join(p.parts)


def _under(arg: str) -> tuple[Path, list[Path]]:
    """The base folder of one argument and the drawings it names."""
    p = Path(arg)
    if p.is_dir():
        return p, sorted(q for q in p.rglob("*") if _is_drawing(q))
    if glob.has_magic(arg):
        base = Path(arg.split("*")[0].split("?")[0].split("[")[0] or ".")
        base = base if base.is_dir() else base.parent
        return base, sorted(Path(q) for q in glob.glob(arg, recursive=True) if _is_drawing(Path(q)))
    return p.parent, [p] if p.is_file() else []


def find_drawings(args: Iterable[str], *, skip: Iterable[Path] = ()) -> tuple[list[Source], list[str]]:
    """The drawings the arguments name, each once, with its summary path; and the problems
    (an argument that names nothing). ``skip``: folders never searched (the output tree)."""
    from .spec import spec_path_for

    args = list(args)
    skipped = [s.resolve() for s in skip]
    out: list[Source] = []
    seen: set[Path] = set()
    problems: list[str] = []
    for arg in args:
        base, found = _under(arg)
        if not found and not Path(arg).is_dir():
            problems.append(f"{arg}: names no DXF drawing (expected a folder, a glob or a .dxf file)")
        for q in found:
            real = q.resolve()
            if real in seen or any(real.is_relative_to(s) for s in skipped):
                continue
            seen.add(real)
            rel = _posix(q.relative_to(base)) if q.is_relative_to(base) else q.name
            if len(args) > 1:
                rel = f"{arg.rstrip('/')}/{rel}" if Path(arg).is_dir() else f"{_posix(base)}/{rel}"
            spec = spec_path_for(q)
            out.append(Source(q, rel, spec if spec.is_file() else None))
    out.sort(key=lambda s: s.rel)
    return out, problems


# --------------------------------------------------------------------------- one drawing


def cache_key(src: Source, opts: AuditOptions, version: str) -> str:
    """The content hash that decides whether a cached row still holds."""
    h = hashlib.sha256()
    for part in (src.path, src.spec, opts.spec_default):
        h.update(b"\0" + (Path(part).read_bytes() if part is not None else b"-"))
    h.update(f"\0{version}\0{opts.key_text()}".encode())
    return h.hexdigest()


def out_paths(rel: str, out_tree: Path) -> tuple[Path, Path, Path]:
    """The annotated copy, JSON and HTML reports of a drawing in the output tree, mirroring
    its summary path; no part of the name can lead out of the tree."""
    parts = [p for p in rel.split("/") if p not in ("", ".", "..")]
    safe = parts or ["drawing.dxf"]
    folder = out_tree.joinpath(*safe[:-1])
    stem = safe[-1][:-4] if safe[-1].lower().endswith(".dxf") else safe[-1]
    paths = folder / f"{stem}.spanwise.dxf", folder / f"{stem}.json", folder / f"{stem}.html"
    root = out_tree.resolve()
    for p in paths:
        if not p.resolve().is_relative_to(root):
            raise FatalInput(f"{rel}: its output would leave the output tree {out_tree}")
    return paths


def _empty_row(src: Source, status: str, exit_code: int, message: str = "") -> dict[str, Any]:
    row: dict[str, Any] = {"path": src.rel, "status": status, "exit": exit_code, "loops": 0, "errors": 0,
                           "warnings": 0, "notes": 0, "codes": {}, "worst_grip_utilisation": None,
                           "lowest_resonance_margin": None, "seconds": 0.0, "cached": False}
    if message:
        row["message"] = message
    return row


def _report_row(src: Source, report: Any, fail_on: str) -> dict[str, Any]:
    """A checked drawing's row from its report."""
    counts = {"error": 0, "warning": 0, "note": 0}
    codes: dict[str, int] = {}
    for f in report.findings:
        counts[f.severity.value] += 1
        codes[f.code] = codes.get(f.code, 0) + 1
    grips = [p.get("grip_utilisation") for lp in report.to_dict()["loops"] for p in lp["pulleys"]]
    grips = [g for g in grips if isinstance(g, (int, float)) and math.isfinite(g)]
    gaps = [f.data["gap"] for f in report.findings if f.code == "resonance" and isinstance(f.data.get("gap"), float)]
    row = _empty_row(src, "findings" if counts["error"] or counts["warning"] else "clean",
                     1 if report.fails(Severity(fail_on)) else 0)
    row.update({"loops": len(report.model.loops), "errors": counts["error"], "warnings": counts["warning"],
                "notes": counts["note"], "codes": dict(sorted(codes.items())),
                "worst_grip_utilisation": max(grips) if grips else None,
                "lowest_resonance_margin": min(gaps) if gaps else None})
    return row


def check_source(src: Source, opts: AuditOptions) -> dict[str, Any]:
    """Check one drawing (in this process) and write its outputs; its summary row. Never raises
    for a bad drawing: every failure is a ``failed`` row with its message."""
    from .runner import Outputs, run_check

    t0 = time.perf_counter()
    spec = src.spec or opts.spec_default
    outputs = Outputs()
    try:
        if opts.out_tree is not None:
            dxf, js, html = out_paths(src.rel, opts.out_tree)
            dxf.parent.mkdir(parents=True, exist_ok=True)
            outputs = Outputs(out=dxf, json=js, html=html)
        report, _ = run_check(src.path, outputs, spec=str(spec) if spec else None, grip_margin=None,
                              force=opts.force)
        row = _report_row(src, report, opts.fail_on)
    except FatalInput as err:
        if isinstance(err, NoBeltLoop) or isinstance(err.__cause__, NoBeltLoop):
            row = _empty_row(src, "no-drive", 0)
        else:
            row = _empty_row(src, "failed", 2, "; ".join(listed(err.problems)))
    except MemoryError:
        row = _empty_row(src, "failed", 2, "ran out of its memory limit")
    except RecursionError:
        row = _empty_row(src, "failed", 2, "nested too deeply to read")
    except Exception as err:  # noqa: BLE001 - one drawing's internal error must not stop the batch
        row = _empty_row(src, "failed", 2, f"internal error ({type(err).__name__}: {err}); please report it")
    row["seconds"] = round(time.perf_counter() - t0, 3)
    return row


# --------------------------------------------------------------------------- isolation


def _memory_limit(opts: AuditOptions, workers: int) -> int:
    """Each child's address-space limit: the option, else 3/4 of the machine's memory shared
    among the workers, at least 1 GiB."""
    if opts.memory_bytes is not None:
        return opts.memory_bytes
    try:
        total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        total = 8 << 30
    return max(1 << 30, int(0.75 * total / max(workers, 1)))


def _child(src: Source, opts: AuditOptions, memory: int, conn: Any) -> None:
    """The child process: quiet the libraries' logging (problems are findings), limit its own
    memory, check, send the row back."""
    import logging

    for name in ("ezdxf", "layout", "physics"):
        logging.getLogger(name).addHandler(logging.NullHandler())
        logging.getLogger(name).propagate = False
    try:
        import resource

        resource.setrlimit(resource.RLIMIT_AS, (memory, memory))
    except (ImportError, ValueError, OSError):
        pass
    try:
        conn.send(check_source(src, opts))
    finally:
        conn.close()


_CONTEXT: Any = None
#: Children now checking a drawing, and the flag that stops new ones (an interrupted audit).
_ACTIVE: set[Any] = set()
_STOPPING = threading.Event()
#: Imported once by the fork server, so that each child starts with them loaded (ezdxf alone
#: takes about 150 ms to import; a child per drawing must not pay it).
_PRELOAD = ["layout.audit", "layout.pipeline", "layout.runner", "layout.annotate", "layout.report",
            "ezdxf", "ezdxf.recover", "scipy.optimize", "scipy.spatial", "scipy.sparse.csgraph", "shapely"]


def _context() -> Any:
    """The process context for the children: a fork server preloaded with spanwise (cheap
    starts, no threads inherited), else the platform's default."""
    global _CONTEXT
    if _CONTEXT is None:
        import multiprocessing as mp

        try:
            _CONTEXT = mp.get_context("forkserver")
            _CONTEXT.set_forkserver_preload(_PRELOAD)
        except ValueError:
            _CONTEXT = mp.get_context()
    return _CONTEXT


def check_isolated(src: Source, opts: AuditOptions, *, memory: int, attempts: int = 2) -> dict[str, Any]:
    """Check ``src`` in a child process with ``opts.timeout_s`` and ``memory`` as its limits.

    A child past its time is killed (``timed-out``); a child that dies without answering
    (killed, crashed) is tried again up to ``attempts`` times, then the drawing is ``failed``.
    """
    ctx = _context()
    t0 = time.perf_counter()
    why = ""
    for _ in range(max(attempts, 1)):
        if _STOPPING.is_set():
            return _empty_row(src, "failed", 2, "the audit was interrupted")
        recv, send = ctx.Pipe(duplex=False)
        proc = ctx.Process(target=_child, args=(src, opts, memory, send), daemon=True)
        proc.start()
        _ACTIVE.add(proc)
        send.close()
        try:
            if recv.poll(opts.timeout_s):
                try:
                    return recv.recv()
                except EOFError:
                    pass
            else:
                proc.kill()
                proc.join()
                row = _empty_row(src, "timed-out", 2, f"still running after {opts.timeout_s:g} s; stopped")
                row["seconds"] = round(time.perf_counter() - t0, 3)
                return row
        finally:
            recv.close()
            proc.join(timeout=5)
            if proc.is_alive():
                proc.kill()
                proc.join()
            _ACTIVE.discard(proc)
        why = f"its checking process died (exit {proc.exitcode})"
    return _empty_row(src, "failed", 2, why)


# --------------------------------------------------------------------------- cache


@dataclass(slots=True)
class Cache:
    """Rows by cache key, one small file each, written atomically (an interrupted run leaves
    whole entries or none)."""

    folder: Path | None
    hits: int = 0

    def get(self, key: str, src: Source) -> dict[str, Any] | None:
        if self.folder is None:
            return None
        p = self.folder / key[:2] / f"{key}.json"
        try:
            row = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        if not isinstance(row, dict) or row.get("status") not in STATUSES:
            return None
        self.hits += 1
        return dict(row, path=src.rel, cached=True)

    def put(self, key: str, row: dict[str, Any]) -> None:
        """Keep ``row`` unless it depends on more than the drawing's content (a time limit, a
        dead process, an internal error: those are tried again next run)."""
        transient = row["status"] == "timed-out" or row.get("message", "").startswith(
            ("internal error", "its checking process died", "ran out of"))
        if self.folder is None or transient:
            return
        p = self.folder / key[:2] / f"{key}.json"
        p.parent.mkdir(parents=True, exist_ok=True)
        write_atomic(p, json.dumps(row, sort_keys=True))


# --------------------------------------------------------------------------- the audit


@dataclass(slots=True)
class Progress:
    """Counts by status as rows come in, shown by ``show`` (a callable taking the counts)."""

    total: int
    show: Callable[["Progress"], None] | None = None
    done: int = 0
    counts: dict[str, int] = field(default_factory=lambda: dict.fromkeys(STATUSES, 0))
    started: float = field(default_factory=time.perf_counter)

    def add(self, row: dict[str, Any]) -> None:
        self.done += 1
        self.counts[row["status"]] += 1
        if self.show is not None:
            self.show(self)

    def eta_s(self) -> float | None:
        if not self.done:
            return None
        return (time.perf_counter() - self.started) / self.done * (self.total - self.done)


def _run_local(todo: list[tuple[Source, str]], opts: AuditOptions, workers: int, cache: Cache,
               progress: Progress) -> list[dict[str, Any]]:
    """Check ``todo`` with ``workers`` isolated children at a time."""
    from concurrent.futures import ThreadPoolExecutor, as_completed

    memory = _memory_limit(opts, workers)
    rows = []
    _STOPPING.clear()
    pool = ThreadPoolExecutor(max_workers=max(workers, 1))
    futures = {pool.submit(check_isolated, src, opts, memory=memory): key for src, key in todo}
    try:
        for fut in as_completed(futures):
            row = fut.result()
            cache.put(futures[fut], row)
            rows.append(row)
            progress.add(row)
    except BaseException:            # Ctrl-C: start nothing new, stop what runs, keep what is cached
        _STOPPING.set()
        pool.shutdown(wait=False, cancel_futures=True)
        for proc in list(_ACTIVE):
            proc.kill()
        raise
    pool.shutdown()
    return rows


def audit(paths: Iterable[str | Path], *, workers: int | None = None, options: AuditOptions = AuditOptions(),
          cache_dir: Path | None = None, scheduler: str | None = None,
          progress: Callable[[Progress], None] | None = None) -> list[dict[str, Any]]:
    """Audit every drawing ``paths`` name; the summary rows, sorted by path.

    Parameters
    ----------
    paths
        Folders (searched recursively), globs or files.
    workers
        Drawings checked at once on this machine (default: the core count).
    options
        Spec default, time limit, fail-on, output tree, force.
    cache_dir
        Where unchanged drawings' rows are kept between runs (``None``: no cache).
    scheduler
        A Dask scheduler's address: check on that cluster instead (:mod:`layout.cluster`).
    progress
        Called with the :class:`Progress` after each drawing.

    Raises
    ------
    FatalInput
        An argument names no drawing.
    """
    from .pipeline import VERSION

    skip = [options.out_tree] if options.out_tree is not None else []
    sources, problems = find_drawings([str(p) for p in paths], skip=skip + ([cache_dir] if cache_dir else []))
    if problems:
        raise FatalInput(problems)
    cache = Cache(None if cache_dir is None or options.force else cache_dir)
    store = Cache(cache_dir)
    rows, todo = [], []
    for src in sources:
        key = cache_key(src, options, VERSION)
        hit = cache.get(key, src)
        if hit is not None and _outputs_present(hit, options):
            rows.append(hit)
        else:
            todo.append((src, key))
    prog = Progress(len(sources), progress)
    for row in rows:
        prog.add(row)
    if scheduler is not None:
        from .cluster import run_on_cluster

        rows += run_on_cluster(scheduler, todo, options, store, prog)
    else:
        rows += _run_local(todo, options, workers or os.cpu_count() or 1, store, prog)
    rows.sort(key=lambda r: r["path"])
    return rows


def _outputs_present(row: dict[str, Any], opts: AuditOptions) -> bool:
    """Whether a cached row's outputs in the output tree are all still there."""
    if opts.out_tree is None or row["status"] not in ("clean", "findings"):
        return True
    return all(p.exists() for p in out_paths(row["path"], opts.out_tree))


def audit_exit(rows: list[dict[str, Any]]) -> int:
    """2 if any drawing failed or timed out, else 1 if any has a finding at or above fail-on, else 0."""
    if any(r["status"] in ("failed", "timed-out") for r in rows):
        return 2
    return 1 if any(r["exit"] == 1 for r in rows) else 0
