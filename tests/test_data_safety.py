"""Data safety through the real command line: an interruption (SIGTERM, SIGHUP) leaves no
temporary file and says so in one line; one file named by two outputs, an empty name, a
file that is not a regular file (even with --force) are refused in one line; any legal
output name works; ``suggest-idler`` writes only when everything succeeded and knows its
own earlier outputs. Every case runs on copies in ``tmp_path`` and checks that the inputs
are byte-identical afterwards.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import signal
import subprocess
import sys
from pathlib import Path

import pytest

import test_resonance as tr

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"
HANG_GUARD_S = 300

#: Runs the real command line (``layout.cli`` as ``__main__``) with one hook: when the
#: N-th temporary output file (``.sw-*``) is complete, just before it would be moved into
#: place, the process sends itself a real signal (``kill``) or a write fails.
HOOK = r"""
import errno, os, runpy, signal, sys
action, nth = sys.argv.pop(1), int(sys.argv.pop(1))
real_chmod, seen = os.chmod, [0]
def chmod(path, mode, *a, **k):
    if os.path.basename(str(path)).startswith(".sw-"):
        seen[0] += 1
        if seen[0] == nth:
            if action == "ENOSPC":
                raise OSError(errno.ENOSPC, "No space left on device", str(path))
            os.kill(os.getpid(), getattr(signal, action))
    return real_chmod(path, mode, *a, **k)
os.chmod = chmod
sys.argv[0] = "spanwise"
runpy.run_module("layout.cli", run_name="__main__", alter_sys=True)
"""


def _env() -> dict[str, str]:
    return dict(os.environ, PYTHONWARNINGS="ignore")


def run_cli(*args: object, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "layout.cli", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, env=_env(), timeout=HANG_GUARD_S)


def run_hooked(action: str, nth: int, *args: object) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", HOOK, action, str(nth), *map(str, args)], capture_output=True,
                          text=True, env=_env(), timeout=HANG_GUARD_S)


def _sample(tmp: Path, name: str = "fan_motor") -> Path:
    for suffix in (".dxf", ".spanwise.toml"):
        shutil.copy(SAMPLES / f"{name}{suffix}", tmp / f"{name}{suffix}")
    return tmp / f"{name}.dxf"


def _resonant(tmp: Path) -> Path:
    """The resonant two-pulley drive of ``test_suggest_idler`` (span A-B needs an idler)."""
    return tr._drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in folder.iterdir() if p.is_file() and not p.is_symlink()}


def _temporaries(folder: Path) -> list[str]:
    return [p.name for p in folder.iterdir() if p.name.startswith((".sw-", ".spanwise-")) or p.suffix == ".tmp"]


def _one_line(r: subprocess.CompletedProcess) -> str:
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1, r.stderr
    assert lines[0].startswith("spanwise: ")
    return lines[0]


# --- 1. SIGTERM / SIGHUP while writing --------------------------------------------------------

@pytest.mark.parametrize("sig", ["SIGTERM", "SIGHUP"])
def test_a_signal_while_writing_leaves_no_temporary_file(tmp_path, sig):
    src = _sample(tmp_path)
    before = _snapshot(tmp_path)
    r = run_hooked(sig, 1, "check", src, "--out", tmp_path / "a.dxf", "-q")
    assert r.returncode == 2, r.stderr
    assert _one_line(r) == f"spanwise: interrupted ({sig})"
    assert _temporaries(tmp_path) == []
    assert _snapshot(tmp_path) == before                   # nothing written, inputs untouched


def test_a_signal_between_two_outputs_puts_none_in_place(tmp_path):
    src = _sample(tmp_path)
    before = _snapshot(tmp_path)
    r = run_hooked("SIGTERM", 2, "check", src, "--out", tmp_path / "a.dxf", "--json", tmp_path / "a.json",
                   "--html", tmp_path / "a.html", "-q")
    assert r.returncode == 2 and _one_line(r) == "spanwise: interrupted (SIGTERM)"
    assert _temporaries(tmp_path) == [] and _snapshot(tmp_path) == before


def test_a_signal_during_in_place_keeps_the_drawing(tmp_path):
    src = _sample(tmp_path)
    original = src.read_bytes()
    r = run_hooked("SIGTERM", 1, "check", src, "--in-place", "-q")
    assert r.returncode == 2 and _one_line(r) == "spanwise: interrupted (SIGTERM)"
    assert src.read_bytes() == original and _temporaries(tmp_path) == []


def test_sigterm_from_outside_on_a_large_drawing(tmp_path):
    """A real SIGTERM from another process at whatever point the run has reached once it
    writes: however it lands, no temporary file is left and the drawing is unchanged."""
    src = _sample(tmp_path)
    import ezdxf

    doc = ezdxf.readfile(src)
    msp = doc.modelspace()
    for k in range(60000):                                  # many entities: a long write
        msp.add_line((k, 5000), (k + 0.5, 5000), dxfattribs={"layer": "NOTES"})
    doc.saveas(src)
    original = src.read_bytes()
    p = subprocess.Popen([sys.executable, "-m", "layout.cli", "check", str(src), "--out", str(tmp_path / "a.dxf"),
                          "-q"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env())
    try:
        while p.poll() is None and not _temporaries(tmp_path):
            pass                                            # wait for the write to begin
        if p.poll() is None:
            p.send_signal(signal.SIGTERM)
        out, err = p.communicate(timeout=HANG_GUARD_S)
    finally:
        if p.poll() is None:
            p.kill()
    assert p.returncode in (0, 2), err
    if p.returncode == 2:
        assert err.strip() == "spanwise: interrupted (SIGTERM)"
    assert _temporaries(tmp_path) == [] and src.read_bytes() == original


# --- 2. one file named by two outputs ------------------------------------------------------------

@pytest.mark.parametrize("spelling", ["same", "absolute", "symlink"])
def test_two_outputs_naming_one_file_are_refused(tmp_path, spelling):
    src = _sample(tmp_path)
    other = {"same": "x.out", "absolute": str(tmp_path / "x.out"), "symlink": "link.out"}[spelling]
    if spelling == "symlink":
        (tmp_path / "link.out").symlink_to("x.out")
    before = _snapshot(tmp_path)
    r = run_cli("check", src, "--out", "x.out", "--json", other, cwd=tmp_path)
    assert r.returncode == 2 and "--out and --json" in _one_line(r)
    assert _snapshot(tmp_path) == before and not (tmp_path / "x.out").exists()


def test_suggest_idler_two_outputs_naming_one_file_are_refused(tmp_path):
    src = _resonant(tmp_path)
    before = _snapshot(tmp_path)
    r = run_cli("suggest-idler", src, "--span", "A-B", "--out", "s.dxf", "--json", tmp_path / "s.dxf", cwd=tmp_path)
    assert r.returncode == 2 and "--out and --json" in _one_line(r)
    assert _snapshot(tmp_path) == before


# --- 3. any legal name ----------------------------------------------------------------------------

def test_a_250_character_output_name_works(tmp_path):
    src = _sample(tmp_path)
    name = "a" * 245 + ".json"
    assert len(name) == 250
    r = run_cli("check", src, "--json", tmp_path / name, "-q")
    assert r.returncode == 0, r.stderr
    assert json.loads((tmp_path / name).read_text())["schema"] == "spanwise-report/1"
    assert _temporaries(tmp_path) == []


# --- 4. empty names -------------------------------------------------------------------------------

@pytest.mark.parametrize("command", ["check", "suggest-idler"])
@pytest.mark.parametrize("option", ["--json", "--out"])
def test_an_empty_output_name_is_refused(tmp_path, command, option):
    src = _resonant(tmp_path)
    before = _snapshot(tmp_path)
    extra = ["--span", "A-B"] if command == "suggest-idler" else []
    r = run_cli(command, src, *extra, option, "")
    assert r.returncode == 2 and f"{option} ''" in _one_line(r)
    assert _snapshot(tmp_path) == before


# --- 5. never replace a file that is not a regular file -------------------------------------------

@pytest.mark.parametrize("command", ["check", "suggest-idler"])
@pytest.mark.parametrize("what", ["fifo", "device"])
def test_a_non_regular_output_is_never_replaced_even_with_force(tmp_path, command, what):
    src = _resonant(tmp_path)
    target = tmp_path / "target.json"
    if what == "fifo":
        os.mkfifo(target)
    else:
        target.symlink_to(os.devnull)
    before = _snapshot(tmp_path)
    extra = ["--span", "A-B"] if command == "suggest-idler" else []
    r = run_cli(command, src, *extra, "--json", target, "--force")
    assert r.returncode == 2 and "not a regular file" in _one_line(r)
    assert not os.path.isfile(target) and _snapshot(tmp_path) == before
    if what == "fifo":
        assert target.is_fifo()
    else:
        assert os.path.realpath(target) == os.path.realpath(os.devnull)


# --- 6. suggest-idler ----------------------------------------------------------------------------

def test_suggest_idler_replaces_its_own_outputs_and_refuses_edited_ones(tmp_path):
    src = _resonant(tmp_path)
    inputs = _snapshot(tmp_path)
    args = ("suggest-idler", src, "--span", "A-B", "--json", tmp_path / "s.json", "--out", tmp_path / "s.dxf", "-q")
    first = run_cli(*args)
    assert first.returncode == 0, first.stderr
    assert json.loads((tmp_path / "s.json").read_text())["schema"] == "spanwise-idlers/1"
    second = run_cli(*args)                                 # its own untouched outputs: replaced
    assert second.returncode == 0, second.stderr
    with (tmp_path / "s.dxf").open("a") as fh:              # somebody went on working in the copy
        fh.write("\n")
    edited = (tmp_path / "s.dxf").read_bytes()
    third = run_cli(*args)
    assert third.returncode == 2 and "--force" in _one_line(third)
    assert (tmp_path / "s.dxf").read_bytes() == edited
    assert run_cli(*args, "--force").returncode == 0
    assert all((tmp_path / n).read_bytes() == b for n, b in inputs.items())
    assert _temporaries(tmp_path) == []


def test_suggest_idler_leaves_no_json_when_a_later_write_fails(tmp_path):
    src = _resonant(tmp_path)
    before = _snapshot(tmp_path)
    r = run_hooked("ENOSPC", 2, "suggest-idler", src, "--span", "A-B", "--json", tmp_path / "s.json",
                   "--out", tmp_path / "s.dxf", "-q")
    assert r.returncode == 2 and "cannot write an output" in _one_line(r)
    assert r.stdout == ""                                   # no suggestions printed as if written
    assert _snapshot(tmp_path) == before and _temporaries(tmp_path) == []


def test_suggest_idler_interrupted_leaves_nothing(tmp_path):
    src = _resonant(tmp_path)
    before = _snapshot(tmp_path)
    r = run_hooked("SIGTERM", 1, "suggest-idler", src, "--span", "A-B", "--json", tmp_path / "s.json",
                   "--out", tmp_path / "s.dxf", "-q")
    assert r.returncode == 2 and _one_line(r) == "spanwise: interrupted (SIGTERM)"
    assert _snapshot(tmp_path) == before and _temporaries(tmp_path) == []


def test_suggest_idler_reads_the_drawing_once(tmp_path):
    """The copy with the suggestions is drawn into the document that was analysed: ezdxf
    loads the drawing once."""
    src = _resonant(tmp_path)
    count = r"""
import sys, ezdxf
real, calls = ezdxf.readfile, []
def readfile(*a, **k):
    calls.append(a[0])
    return real(*a, **k)
ezdxf.readfile = readfile
from layout.cli import main
code = main(sys.argv[1:])
print("READS", len(calls))
sys.exit(code)
"""
    r = subprocess.run([sys.executable, "-c", count, "suggest-idler", str(src), "--span", "A-B", "--out",
                        str(tmp_path / "s.dxf"), "--json", str(tmp_path / "s.json"), "-q"],
                       capture_output=True, text=True, env=_env(), timeout=HANG_GUARD_S)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip().splitlines()[-1] == "READS 1"


def test_a_streamed_drawing_is_byte_for_byte_the_sealed_document_and_is_ours(tmp_path):
    # the annotated copy is streamed into its temporary file and sealed there; it must be the
    # very bytes the in-memory path seals (digest of the bytes with the placeholder in place)
    import ezdxf

    from layout.output import DIGEST_PLACEHOLDER, DocumentFile, document_bytes, is_sealed, write_atomic

    doc = ezdxf.new("R2010")
    doc.modelspace().add_circle((0, 0), 10)
    doc.modelspace().add_text("Ω pulley " + DIGEST_PLACEHOLDER)        # not ASCII, and the seal's place
    out = tmp_path / "copy.dxf"
    write_atomic(out, DocumentFile(doc))

    def masked(raw: bytes) -> bytes:      # what differs between two writes: a GUID, a time, the seal
        raw = re.sub(rb"\{[0-9A-F-]{36}\}", b"{GUID}", raw)
        raw = re.sub(rb"@ \d{4}-\d\d-\d\dT[0-9:.+]+", b"@ TIME", raw)
        return re.sub(rb"spanwise-digest=[0-9a-f]{64}", b"spanwise-digest=D", raw)

    assert masked(out.read_bytes()) == masked(document_bytes(doc))
    assert is_sealed(out) and DIGEST_PLACEHOLDER.encode() not in out.read_bytes()
    out.write_bytes(out.read_bytes().replace(b"pulley", b"pullez"))        # edited by a person
    assert not is_sealed(out)
