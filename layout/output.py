"""Writing output files safely: atomically, with the user's umask, never over what
spanwise did not write.

Every output goes to a temporary file in the target's folder and replaces the target in
one ``os.replace``, so a reader never sees half a file and an interrupted run leaves the
old file as it was. A file spanwise wrote carries a digest of its own bytes, so a later
run can tell its own untouched output (which it may replace) from a file a person made or
went on working in (which it refuses without ``--force``).
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import os
import re
import shutil
import signal
import stat
import tempfile
import threading
from pathlib import Path
from typing import Any, Iterator

__all__ = ["write_atomic", "write_files", "DocumentFile", "seal_file", "NotRegularFile", "document_bytes",
           "current_umask", "backup", "DIGEST_PLACEHOLDER", "seal", "is_sealed", "same_file", "save_document"]

#: Stands in the written bytes where their digest goes; the digest is of the bytes with it.
DIGEST_PLACEHOLDER = "spanwise-digest=" + "0" * 64
_DIGEST = re.compile(rb"spanwise-digest=([0-9a-f]{64})")
_ZERO = b"0" * 64


def current_umask() -> int:
    """The process's umask (read by setting and restoring it)."""
    with _signals_held():              # an interruption must not leave the umask changed
        mask = os.umask(0o022)
        os.umask(mask)
    return mask


#: Temporary files are ``.sw-XXXXXXXX.tmp`` in the target's folder: short, so that any legal
#: output name works (the temporary name does not grow with it), and hidden.
TMP_PREFIX, TMP_SUFFIX = ".sw-", ".tmp"

#: Signals whose handlers (``spanwise``'s command line turns them into KeyboardInterrupt)
#: must not run between creating a temporary file and noting its name for the clean-up.
_DEFERRED = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class NotRegularFile(OSError):
    """The target exists and is not a regular file (a folder, device, pipe or socket): it is
    never replaced, whatever ``--force`` says."""

    def __init__(self, path: str | Path) -> None:
        super().__init__(errno.EEXIST, "exists and is not a regular file (a folder, device or pipe)", str(path))


def _check_regular(target: Path) -> None:
    try:
        st = os.stat(target)
    except FileNotFoundError:
        return
    except OSError:
        return                  # the replace below reports what is wrong
    if not stat.S_ISREG(st.st_mode):
        raise NotRegularFile(target)


@contextlib.contextmanager
def _signals_held() -> Iterator[None]:
    """Hold back the signals of :data:`_DEFERRED` (delivered when the block ends); a no-op
    outside the main thread or where the platform has no signal mask."""
    block = hasattr(signal, "pthread_sigmask") and threading.current_thread() is threading.main_thread()
    old = signal.pthread_sigmask(signal.SIG_BLOCK, _DEFERRED) if block else None
    try:
        yield
    finally:
        if old is not None:
            signal.pthread_sigmask(signal.SIG_SETMASK, old)


def _temp_beside(target: Path, staged: list[tuple[str, Path]]) -> int:
    """A new temporary file in ``target``'s folder, noted in ``staged`` (for the clean-up)
    with the signals of :data:`_DEFERRED` held back, so an interruption never falls between
    its creation and its noting; returns its descriptor."""
    folder = str(target.parent) if str(target.parent) else "."
    with _signals_held():
        fd, tmp = tempfile.mkstemp(prefix=TMP_PREFIX, suffix=TMP_SUFFIX, dir=folder)
        staged.append((tmp, target))
        return fd


def _discard(tmp: str) -> None:
    try:
        os.unlink(tmp)
    except OSError:
        pass


class DocumentFile:
    """An ezdxf document to be written by :func:`write_files` as :func:`document_bytes` makes
    it: streamed into its temporary file (never held whole in memory) and sealed there."""

    def __init__(self, doc: Any) -> None:
        self.doc = doc

    def write_into(self, fd: int, tmp: str) -> None:
        encoding, errors = _text_encoding(self.doc)
        with os.fdopen(fd, "w", encoding=encoding, errors=errors, newline="\n") as fh:
            self.doc.write(fh)
        seal_file(tmp)


def _fill(fd: int, tmp: str, data: bytes | str | DocumentFile, mode: int | None) -> None:
    if isinstance(data, DocumentFile):
        data.write_into(fd, tmp)
    else:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data.encode("utf-8") if isinstance(data, str) else data)
    os.chmod(tmp, mode if mode is not None else 0o666 & ~current_umask())


def write_atomic(path: str | Path, data: bytes | str | DocumentFile, *, mode: int | None = None) -> None:
    """Write ``data`` to ``path`` atomically.

    The file gets ``mode`` when given, else the permissions a new file gets under the
    user's umask (``0o666 & ~umask``), not the 0600 of a temporary file. A target that
    exists and is not a regular file is never replaced (:class:`NotRegularFile`). However
    the write ends (an error, Ctrl-C, SIGTERM turned into ``KeyboardInterrupt``), the
    temporary file is removed and the target is left as it was.
    """
    write_files([(path, data, mode)])


def write_files(items: list[tuple[str | Path, bytes | str | DocumentFile, int | None]]) -> None:
    """Write several files ``(path, data, mode)`` as :func:`write_atomic` does, all or none
    as far as the file system allows: every temporary file is written first, and only when
    all are complete are they moved into place, one ``os.replace`` each."""
    staged: list[tuple[str, Path]] = []
    try:
        for path, data, mode in items:
            target = Path(path)
            _check_regular(target)
            fd = _temp_beside(target, staged)
            _fill(fd, staged[-1][0], data, mode)
        for _, target in staged:
            _check_regular(target)
        with _signals_held():           # every file moved into place, or (interrupted before) none
            while staged:
                tmp, target = staged[0]
                os.replace(tmp, target)
                staged.pop(0)
    except BaseException:
        for tmp, _ in staged:
            _discard(tmp)
        raise


def backup(path: str | Path) -> Path:
    """Copy ``path`` to ``NAME.bak`` beside it (``NAME.1.bak``, ``NAME.2.bak``, ... when that
    exists: an earlier backup is never overwritten); return the backup's path."""
    src = Path(path)
    dest = src.with_name(src.name + ".bak")
    k = 0
    while dest.exists():
        k += 1
        dest = src.with_name(f"{src.name}.{k}.bak")
    shutil.copy2(src, dest)
    return dest


def seal(raw: bytes) -> bytes:
    """``raw`` with its placeholder replaced by the digest of ``raw`` itself."""
    placeholder = DIGEST_PLACEHOLDER.encode("ascii")
    if placeholder not in raw:
        return raw
    digest = hashlib.sha256(raw).hexdigest().encode("ascii")
    return raw.replace(placeholder, placeholder[:-64] + digest, 1)


def seal_file(path: str | Path) -> None:
    """Seal the file at ``path`` in place as :func:`seal` seals bytes (its size unchanged)."""
    import mmap

    placeholder = DIGEST_PLACEHOLDER.encode("ascii")
    with open(path, "r+b") as fh:
        if os.fstat(fh.fileno()).st_size < len(placeholder):
            return
        with mmap.mmap(fh.fileno(), 0) as mm:
            at = mm.find(placeholder)
            if at < 0:
                return
            digest = hashlib.sha256(mm).hexdigest().encode("ascii")
            mm[at + len(placeholder) - 64:at + len(placeholder)] = digest


def is_sealed(path: str | Path) -> bool:
    """Whether ``path`` is a file spanwise wrote and nobody has changed since.

    Reads at most 512 MiB; a larger file is not taken as ours.
    """
    p = Path(path)
    try:
        if not p.is_file() or p.stat().st_size > 512 * 2**20:
            return False
        raw = p.read_bytes()
    except OSError:
        return False
    # a copy of a drawing that was itself spanwise's output may hold that output's old
    # digest beside ours: the file is ours when any one digest in it is of its own bytes
    for m in _DIGEST.finditer(raw):
        unsealed = raw[:m.start(1)] + _ZERO + raw[m.end(1):]
        if hashlib.sha256(unsealed).hexdigest().encode("ascii") == m.group(1):
            return True
    return False


def same_file(a: str | Path, b: str | Path) -> bool:
    """Whether two paths name one existing file."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def document_bytes(doc: Any) -> bytes:
    """An ezdxf document as the bytes :func:`save_document` writes: encoded for its DXF
    version and sealed with its digest when it holds the placeholder (see :func:`seal`)."""
    import io

    stream = io.StringIO()
    doc.write(stream)
    encoding, errors = _text_encoding(doc)
    return seal(stream.getvalue().encode(encoding, errors=errors))


def _text_encoding(doc: Any) -> tuple[str, str]:
    """The encoding a document's text is written in (UTF-8 from R2007 on, else its code page)
    and the error handler for characters it cannot hold (ezdxf's ``\\U+`` escapes)."""
    encoding = "utf-8" if doc.dxfversion >= "AC1021" else doc.output_encoding
    return encoding, "dxfreplace" if _has_dxfreplace() else "replace"


def save_document(doc: Any, path: str | Path, *, mode: int | None = None) -> None:
    """Save an ezdxf document to ``path`` atomically, sealed with its digest when it holds
    the placeholder (see :func:`seal`)."""
    write_atomic(path, DocumentFile(doc), mode=mode)


def _has_dxfreplace() -> bool:
    import codecs

    try:
        import ezdxf.lldxf.encoding  # noqa: F401  registers the "dxfreplace" error handler
        codecs.lookup_error("dxfreplace")
        return True
    except (ImportError, LookupError):
        return False
