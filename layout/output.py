"""Writing output files safely: atomically, with the user's umask, never over what
spanwise did not write.

Every output goes to a temporary file in the target's folder and replaces the target in
one ``os.replace``, so a reader never sees half a file and an interrupted run leaves the
old file as it was. A file spanwise wrote carries a digest of its own bytes, so a later
run can tell its own untouched output (which it may replace) from a file a person made or
went on working in (which it refuses without ``--force``).
"""

from __future__ import annotations

import hashlib
import os
import re
import shutil
import tempfile
from pathlib import Path
from typing import Any

__all__ = ["write_atomic", "current_umask", "backup", "DIGEST_PLACEHOLDER", "seal", "is_sealed",
           "same_file", "save_document"]

#: Stands in the written bytes where their digest goes; the digest is of the bytes with it.
DIGEST_PLACEHOLDER = "spanwise-digest=" + "0" * 64
_DIGEST = re.compile(rb"spanwise-digest=([0-9a-f]{64})")
_ZERO = b"0" * 64


def current_umask() -> int:
    """The process's umask (read by setting and restoring it)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_atomic(path: str | Path, data: bytes | str, *, mode: int | None = None) -> None:
    """Write ``data`` to ``path`` atomically.

    The file gets ``mode`` when given, else the permissions a new file gets under the
    user's umask (``0o666 & ~umask``), not the 0600 of a temporary file.
    """
    target = Path(path)
    raw = data.encode("utf-8") if isinstance(data, str) else data
    folder = str(target.parent) if str(target.parent) else "."
    fd, tmp = tempfile.mkstemp(prefix=".spanwise-", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
        os.chmod(tmp, mode if mode is not None else 0o666 & ~current_umask())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
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
    m = _DIGEST.search(raw)
    if m is None:
        return False
    unsealed = raw[:m.start(1)] + _ZERO + raw[m.end(1):]
    return hashlib.sha256(unsealed).hexdigest().encode("ascii") == m.group(1)


def same_file(a: str | Path, b: str | Path) -> bool:
    """Whether two paths name one existing file."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def save_document(doc: Any, path: str | Path, *, mode: int | None = None) -> None:
    """Save an ezdxf document to ``path`` atomically, sealed with its digest when it holds
    the placeholder (see :func:`seal`)."""
    import io

    stream = io.StringIO()
    doc.write(stream)
    text = stream.getvalue()
    encoding = "utf-8" if doc.dxfversion >= "AC1021" else doc.output_encoding
    raw = text.encode(encoding, errors="dxfreplace" if _has_dxfreplace() else "replace")
    write_atomic(path, seal(raw), mode=mode)


def _has_dxfreplace() -> bool:
    import codecs

    try:
        import ezdxf.lldxf.encoding  # noqa: F401  registers the "dxfreplace" error handler
        codecs.lookup_error("dxfreplace")
        return True
    except (ImportError, LookupError):
        return False
