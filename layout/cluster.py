"""Audit on a Dask cluster: the drawings travel to the workers as bytes, in batches.

:func:`run_on_cluster` is what ``spanwise audit --scheduler ADDRESS`` (and
``layout.audit.audit(..., scheduler=ADDRESS)``) runs instead of the local pool. It needs the
``cluster`` extra (``pip install 'spanwise[cluster]'``) on this machine and spanwise, the same
version, on every worker; no shared file system.

- Transport: each task carries its drawings' bytes (and their specs', and the default
  spec's) as its arguments, so it lives in the scheduler's task record and a task whose
  worker died can run again on another worker (scattered data would die with its worker).
- On the worker, each drawing is written into a private temporary folder (in the worker's
  scratch folder, which Dask clears after a dead worker) under its own file name, its spec
  beside it as ``NAME.spanwise.toml``, and checked by :func:`layout.audit.check_isolated`: the
  per-drawing time limit and the memory limit of a child process hold on the cluster as they
  do locally (the worker, a daemon process by Dask's default, is let start children). A path
  in a row's ``message`` is put back to the drawing's path on this machine, so the summary is
  the local run's, ``seconds`` aside.
- Batches: :func:`plan_batches` (20 to 100 drawings a task, fewer only so that every worker
  thread gets work; about equal bytes each; at most :data:`BATCH_MAX_BYTES` a task). A few
  batches per worker thread are in flight at a time, so neither this machine nor the
  scheduler holds the whole library's bytes.
- Failures: a dead worker's task is run again by Dask (``distributed.scheduler.allowed-failures``
  times), a task that raises is retried :data:`RETRIES` times; each batch's future is
  collected exactly once, and a batch lost for good gives its drawings ``failed`` rows with
  the reason, kept out of the cache (the next run tries them again).
- An output tree is refused: every report and annotated copy names the drawing's path, which
  on a worker is its temporary copy.
"""

from __future__ import annotations

import math
import os
import uuid
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Iterator

from .audit import STATUSES, AuditOptions, Cache, Progress, Source, _empty_row
from .errors import FatalInput

__all__ = ["run_on_cluster", "plan_batches", "BATCH_MIN", "BATCH_MAX", "BATCH_MAX_BYTES",
           "CONNECT_TIMEOUT_S", "RETRIES"]

#: Drawings a task: a Dask task costs about 1.5 ms, a drawing tens of milliseconds or more.
BATCH_MIN, BATCH_MAX = 20, 100
#: Drawing and spec bytes a task at most (one larger drawing goes alone), kept under Dask's
#: large-graph warning (10 MB); they sit in the scheduler's memory until the task is done.
BATCH_MAX_BYTES = 8 * 2**20
#: Batches a worker thread may have queued or running at a time.
IN_FLIGHT_PER_THREAD = 2
#: Seconds to reach the scheduler, and for a first worker to be there.
CONNECT_TIMEOUT_S = 10.0
#: Times a task that raised is tried again (a dead worker's task is rescheduled by Dask anyway).
RETRIES = 2

NEEDS_EXTRA = "--scheduler needs the cluster extra: pip install 'spanwise[cluster]'"
OUT_TREE_LOCAL = ("--out-tree is local only: the annotated copies and reports name each drawing's "
                  "path, which on a cluster worker is a temporary copy; run without --scheduler to "
                  "write an output tree")


@dataclass(frozen=True, slots=True)
class _File:
    """A file sent to a worker: its name there, its bytes, and its path on this machine."""

    name: str
    data: bytes
    shown: str


@dataclass(frozen=True, slots=True)
class _Job:
    """One drawing of a batch: its summary path, the drawing, and its own spec (or none)."""

    rel: str
    drawing: _File
    spec: _File | None


# --------------------------------------------------------------------------- on the client


def run_on_cluster(address: str, todo: list[tuple[Source, str]], options: AuditOptions, cache: Cache,
                   progress: Progress) -> list[dict[str, Any]]:
    """Check ``todo`` on the Dask cluster whose scheduler is at ``address``; one row each.

    Parameters
    ----------
    address
        The scheduler's address, ``tcp://host:8786``.
    todo
        The drawings to check and their cache keys.
    options
        As for a local audit; ``out_tree`` must be ``None``.
    cache
        Each checked drawing's row is put here.
    progress
        Told of each row as its batch comes back.

    Returns
    -------
    list of dict
        Exactly one summary row per drawing of ``todo``, in the order batches finish.

    Raises
    ------
    FatalInput
        Dask is not installed, an output tree was asked for, the scheduler cannot be reached
        within :data:`CONNECT_TIMEOUT_S` or has no worker.
    """
    problems = []
    try:
        import distributed
    except ImportError:
        problems.append(NEEDS_EXTRA)
        distributed = None
    if options.out_tree is not None:
        problems.append(OUT_TREE_LOCAL)
    if problems:
        raise FatalInput(problems)
    if not todo:
        return []
    client = _connect(distributed, address)
    try:
        return _run(client, distributed, todo, options, cache, progress)
    finally:
        client.close()


def _connect(distributed: Any, address: str) -> Any:
    """A client of the scheduler at ``address`` with at least one worker, or FatalInput."""
    problem = ""
    try:
        client = distributed.Client(address, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
    except OSError as err:
        problem = f"--scheduler {address}: cannot reach the Dask scheduler within {CONNECT_TIMEOUT_S:g} s ({err})"
    except (ValueError, TypeError) as err:
        problem = f"--scheduler {address}: not a Dask scheduler address, expected tcp://HOST:PORT ({err})"
    if problem:
        import gc

        gc.collect()        # the half-made client is in a cycle: close it now, not at exit
        raise FatalInput(problem)
    try:
        client.wait_for_workers(1, timeout=CONNECT_TIMEOUT_S)
    except (TimeoutError, OSError) as err:
        client.close()
        raise FatalInput(f"--scheduler {address}: the scheduler has no worker (none joined within "
                         f"{CONNECT_TIMEOUT_S:g} s)") from err
    return client


def _threads(client: Any) -> int:
    """Worker threads on the cluster now (at least 1)."""
    return max(sum(client.nthreads().values()), 1)


def plan_batches(sizes: list[int], threads: int, *, batch_min: int = BATCH_MIN, batch_max: int = BATCH_MAX,
                 max_bytes: int = BATCH_MAX_BYTES) -> list[list[int]]:
    """Group drawings into batches: lists of indices into ``sizes`` (bytes per drawing).

    ``rounds`` batches per worker thread: as many as keeps each batch at ``batch_min`` drawings
    or more (up to 4, so that other batches can even out a slow one), and at least as many as
    keeps each at ``batch_max`` or fewer. The drawings are dealt out largest first, there and
    back across the batches, so that the batches have equal counts (to one) and about equal
    bytes (a drawing's bytes stand for its checking time); a batch has fewer than ``batch_min``
    only when there are too few drawings for every thread to get that many. A batch is split
    where its bytes would pass ``max_bytes``.

    >>> [len(b) for b in plan_batches([10] * 60, 2)]
    [30, 30]
    >>> [len(b) for b in plan_batches([10] * 1000, 2)]
    [100, 100, 100, 100, 100, 100, 100, 100, 100, 100]
    >>> plan_batches([50, 40, 30, 20, 10, 5], 2, batch_min=2)
    [[0, 3, 4], [1, 2, 5]]
    >>> plan_batches([10] * 5, 4)
    [[0], [1], [2], [3, 4]]
    >>> plan_batches([5, 5, 5, 5], 1, max_bytes=12)
    [[0, 1], [2, 3]]
    """
    n, threads = len(sizes), max(threads, 1)
    if not n:
        return []
    rounds = max(math.ceil(n / (threads * batch_max)), min(4, n // (threads * batch_min)), 1)
    count = min(n, rounds * threads)
    dealt: list[list[int]] = [[] for _ in range(count)]
    for rank, i in enumerate(sorted(range(n), key=lambda i: (-sizes[i], i))):
        turn, step = divmod(rank, count)                # dealt 0 1 2 2 1 0 0 1 2 ...
        dealt[step if turn % 2 == 0 else count - 1 - step].append(i)
    out: list[list[int]] = []
    for group in dealt:
        batch: list[int] = []
        held = 0
        for i in group:
            if batch and held + sizes[i] > max_bytes:
                out.append(batch)
                batch, held = [], 0
            batch.append(i)
            held += sizes[i]
        out.append(batch)
    return out


def _size(src: Source) -> int:
    total = 0
    for p in (src.path, src.spec):
        try:
            total += p.stat().st_size if p is not None else 0
        except OSError:
            pass
    return total


def _read(p: Path) -> _File:
    return _File(p.name, p.read_bytes(), str(p))


def _jobs(batch: list[tuple[Source, str]]) -> tuple[list[_Job], dict[int, dict[str, Any]]]:
    """The batch's drawings as bytes; a row for each drawing that could not be read here."""
    jobs, unread = [], {}
    for k, (src, _) in enumerate(batch):
        try:
            jobs.append(_Job(src.rel, _read(src.path), _read(src.spec) if src.spec is not None else None))
        except OSError as err:
            unread[k] = _empty_row(src, "failed", 2, f"{err.filename or src.path}: cannot read it "
                                                     f"({err.strerror or err})")
    return jobs, unread


def _run(client: Any, distributed: Any, todo: list[tuple[Source, str]], options: AuditOptions, cache: Cache,
         progress: Progress) -> list[dict[str, Any]]:
    """Submit the batches a few at a time, collect each exactly once as it finishes."""
    default = _read(options.spec_default) if options.spec_default is not None else None
    sent_options = replace(options, spec_default=None, out_tree=None)
    plan = plan_batches([_size(src) for src, _ in todo], _threads(client))
    batches: Iterator[list[tuple[Source, str]]] = ([todo[i] for i in idx] for idx in plan)
    run_id = uuid.uuid4().hex[:12]
    pending: dict[Any, tuple[list[tuple[Source, str]], dict[int, dict[str, Any]]]] = {}
    finished = distributed.as_completed(loop=client.loop)
    rows: list[dict[str, Any]] = []
    count = 0

    def submit_more() -> None:
        nonlocal count
        room = IN_FLIGHT_PER_THREAD * _threads(client) - len(pending)
        for batch in batches:
            jobs, unread = _jobs(batch)
            if jobs:
                fut = client.submit(_check_batch, jobs, default, sent_options, retries=RETRIES,
                                    key=f"spanwise-audit-batch-{run_id}-{count}")
                pending[fut] = (batch, unread)
                finished.add(fut)
            else:                             # nothing readable: no task
                take(batch, unread, None)
            count += 1
            room -= 1
            if room <= 0:
                return

    def take(batch: list[tuple[Source, str]], unread: dict[int, dict[str, Any]], fut: Any) -> None:
        checked = _batch_rows(fut, [src for k, (src, _) in enumerate(batch) if k not in unread])
        it = iter(checked)
        for k, (src, key) in enumerate(batch):
            row, real = (unread[k], False) if k in unread else next(it)
            if real:
                cache.put(key, row)
            rows.append(row)
            progress.add(row)

    try:
        submit_more()
        for fut in finished:
            batch, unread = pending.pop(fut)
            take(batch, unread, fut)
            fut.release()
            submit_more()
    except BaseException:     # Ctrl-C: withdraw what has not run (a running batch ends on its worker)
        client.cancel(list(pending))
        raise
    return rows


def _batch_rows(fut: Any, sources: list[Source]) -> list[tuple[dict[str, Any], bool]]:
    """The rows of a finished batch, each with whether it came from a check (and may be
    cached); ``failed`` rows with the reason when the batch was lost or answered wrongly."""
    from .pipeline import VERSION

    if fut is None:
        return []
    why = ""
    if fut.status == "finished":
        try:
            answer = fut.result()
        except Exception as err:  # noqa: BLE001 - a result that does not come back is the batch's failure
            why = _reason(err)
        else:
            rows = answer.get("rows") if isinstance(answer, dict) else None
            if isinstance(answer, dict) and answer.get("version") != VERSION:
                why = (f"the worker runs spanwise {answer.get('version')}, this machine {VERSION}; "
                       f"install the same version on the workers")
            elif not _rows_fit(rows, sources):
                why = "the worker's answer did not fit its batch (please report it)"
            else:
                return [(row, True) for row in rows]
    elif fut.status == "cancelled":
        why = "its task was cancelled (the scheduler lost it)"
    else:
        why = _reason(fut.exception())
    return [(_empty_row(src, "failed", 2, f"not checked on the cluster: {why}"), False) for src in sources]


def _rows_fit(rows: Any, sources: list[Source]) -> bool:
    return (isinstance(rows, list) and len(rows) == len(sources)
            and all(isinstance(r, dict) and r.get("path") == s.rel and r.get("status") in STATUSES
                    for r, s in zip(rows, sources)))


def _reason(err: BaseException | None) -> str:
    if err is None:
        return "its task ended without an answer"
    if type(err).__name__ == "KilledWorker":
        return ("the workers running its batch died each time it was tried "
                "(distributed.scheduler.allowed-failures); see the workers' logs")
    first = (str(err).strip().splitlines() or [""])[0]
    return f"{type(err).__name__}: {first}" if first else type(err).__name__


# --------------------------------------------------------------------------- on a worker


def _allow_children() -> None:
    """Let this worker process start checking processes.

    Dask starts worker processes as daemons (``distributed.worker.daemon``), and
    multiprocessing refuses children to a daemon. The flag only guards against orphans;
    :func:`layout.audit.check_isolated` joins or kills every child it starts.
    """
    import multiprocessing

    me = multiprocessing.current_process()
    if me.daemon:
        try:
            me.daemon = False
        except AssertionError as err:
            raise RuntimeError("this Dask worker is a daemon process and cannot start checking "
                               "processes; start the workers with DASK_DISTRIBUTED__WORKER__DAEMON=False") from err


def _worker_memory(options: AuditOptions) -> int:
    """Each child's memory limit on this worker: the option, else 3/4 of the worker's Dask
    memory limit (else of the machine's memory) shared among its threads."""
    from .audit import _memory_limit

    if options.memory_bytes is not None:
        return options.memory_bytes
    try:
        from distributed import get_worker

        worker = get_worker()
        threads = max(int(worker.state.nthreads), 1)
        limit = worker.memory_manager.memory_limit
    except (ImportError, ValueError, AttributeError):
        return _memory_limit(options, 1)
    if not limit:
        return _memory_limit(options, threads)
    return max(1 << 30, int(0.75 * limit / threads))


def _scratch() -> str | None:
    """The worker's own scratch folder (``--local-directory``), else the system's temporary one."""
    try:
        from distributed import get_worker

        folder = get_worker().local_directory
    except (ImportError, ValueError, AttributeError):
        return None
    return folder if folder and os.path.isdir(folder) else None


def _check_batch(jobs: list[_Job], default: _File | None, options: AuditOptions) -> dict[str, Any]:
    """The task: write the batch's files into a private folder, check each in its own process,
    return the rows with the paths of the client's machine in their messages."""
    import tempfile

    from .audit import check_isolated
    from .pipeline import VERSION
    from .spec import spec_path_for

    _allow_children()
    memory = _worker_memory(options)
    rows = []
    with tempfile.TemporaryDirectory(prefix="spanwise-audit-", dir=_scratch()) as tmp:
        root = Path(tmp)
        shown: dict[str, str] = {}
        if default is not None:
            (root / "default").mkdir()
            spec_default = root / "default" / default.name
            spec_default.write_bytes(default.data)
            options = replace(options, spec_default=spec_default)
            shown[str(spec_default)] = default.shown
        for k, job in enumerate(jobs):
            folder = root / str(k)
            folder.mkdir()
            drawing = folder / job.drawing.name
            drawing.write_bytes(job.drawing.data)
            here = dict(shown, **{str(drawing): job.drawing.shown})
            spec = None
            if job.spec is not None:
                spec = spec_path_for(drawing)
                spec.write_bytes(job.spec.data)
                here[str(spec)] = job.spec.shown
            row = check_isolated(Source(drawing, job.rel, spec), options, memory=memory)
            row["path"] = job.rel
            if "message" in row:
                row["message"] = _put_back(row["message"], here)
            rows.append(row)
    return {"version": VERSION, "rows": rows}


def _put_back(message: str, shown: dict[str, str]) -> str:
    """``message`` with each worker path replaced by the client's (longest first)."""
    for worker_path in sorted(shown, key=len, reverse=True):
        message = message.replace(worker_path, shown[worker_path])
    return message

