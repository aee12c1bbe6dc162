"""The annotated copy opens in a general-purpose CAD program: LibreCAD prints it, and
spanwise's entities are visible in the print (where LibreCAD and poppler are installed)."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from test_findings import run_cli

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"

needs_librecad = pytest.mark.skipif(not (shutil.which("librecad") and shutil.which("pdftoppm")),
                                    reason="LibreCAD and poppler-utils are not installed")


def _print(dxf: Path, folder: Path) -> np.ndarray:
    """LibreCAD's print of ``dxf`` as an RGB array (PDF, then PNG by pdftoppm)."""
    import matplotlib.image as mpimg

    folder.mkdir()
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen")
    subprocess.run(["librecad", "dxf2pdf", "-a", "-t", str(folder), str(dxf)], env=env, check=True,
                   capture_output=True, timeout=120)
    (pdf,) = folder.glob("*.pdf")
    subprocess.run(["pdftoppm", "-png", "-r", "50", "-singlefile", str(pdf), str(folder / "page")], check=True,
                   timeout=120)
    return mpimg.imread(folder / "page.png")[..., :3]


def _coloured(img: np.ndarray) -> int:
    """Pixels that are clearly coloured (not black, grey or white): spanwise's layers use
    cyan, green, magenta, red, orange and blue; the sample's own entities are black."""
    spread = img.max(axis=2) - img.min(axis=2)
    return int((spread > 0.35).sum())


@needs_librecad
def test_librecad_prints_the_annotated_copy_with_spanwise_entities_visible(tmp):
    for suffix in (".dxf", ".spanwise.toml"):
        shutil.copy(SAMPLES / f"mixer_two_stage{suffix}", tmp / f"mixer_two_stage{suffix}")
    src = tmp / "mixer_two_stage.dxf"
    assert run_cli("check", src, "-q").returncode == 0
    plain = _print(src, tmp / "plain")
    annotated = _print(tmp / "mixer_two_stage.spanwise.dxf", tmp / "annotated")
    assert _coloured(plain) < 50                      # the drawing itself is drawn in black
    assert _coloured(annotated) > 2000                # the path, labels, arrows and summary show
