"""One drawing from file to findings: read, spec, recognise, analyse, check.

:func:`check_drawing` is the library entry point under ``spanwise check``. It raises
:class:`~layout.errors.FatalInput` listing every fatal problem (unreadable drawing, bad
spec, no belt loop); everything else comes back as findings.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from physics.analysis import GRIP_MARGIN, Options, Results, analyse
from physics.findings import Finding, Severity

from .checks import locate, run_checks
from .errors import FatalInput
from .read import read_drawing
from .route import Model, build_model
from .spec import Spec, load_spec, spec_path_for

__all__ = ["Checked", "check_drawing", "load_spec_for", "options_for", "VERSION"]

try:
    from importlib.metadata import version as _version

    VERSION = _version("spanwise")
except Exception:  # not installed (running from a checkout)
    VERSION = "0.1.0"


@dataclass(frozen=True, slots=True)
class Checked:
    """A drawing read, analysed and checked."""

    model: Model
    results: Results
    findings: list[Finding]
    spec_path: str | None


def load_spec_for(drawing: str | Path, spec: str | Path | None) -> tuple[Spec, str | None]:
    """The spec named by ``spec``, else ``NAME.spanwise.toml`` beside the drawing, else none."""
    if spec is not None:
        if not Path(spec).is_file():
            raise FatalInput(f"{spec}: spec file not found")
        return load_spec(spec), str(spec)
    auto = spec_path_for(drawing)
    if auto.is_file():
        return load_spec(auto), str(auto)
    return Spec(), None


def options_for(sp: Spec, *, grip_margin: float | None = None) -> Options:
    """Analysis options from the spec (and the command line's grip margin)."""
    defaults = Options()
    return Options(
        service_factor=sp.service_factor,
        grip_margin=grip_margin or sp.grip_margin or GRIP_MARGIN,
        modes=sp.modes or defaults.modes,
        resonance_margin=sp.resonance_margin or defaults.resonance_margin,
        near_critical=sp.near_critical or defaults.near_critical,
        sag_limit=sp.sag_limit or defaults.sag_limit,
        span_ends=sp.span_ends or defaults.span_ends,
        gravity=sp.gravity)


_ORDER = {Severity.ERROR: 0, Severity.WARNING: 1, Severity.NOTE: 2}


def check_drawing(path: str | Path, *, spec: str | Path | None = None,
                  grip_margin: float | None = None) -> Checked:
    """Read, analyse and check one drawing.

    Raises
    ------
    FatalInput
        Every fatal problem found in the spec and the drawing, one line each.
    """
    problems: list[str] = []
    sp: Spec | None = None
    spec_file: str | None = None
    try:
        sp, spec_file = load_spec_for(path, spec)
    except FatalInput as err:
        problems.extend(err.problems)
    try:
        drawing = read_drawing(path)
    except FatalInput as err:
        problems.extend(err.problems)
        raise FatalInput(problems) from err
    if sp is None:
        raise FatalInput(problems)
    model = build_model(drawing, sp)
    options = options_for(sp, grip_margin=grip_margin)
    results = analyse(model.drive, options)
    findings = list(model.findings)
    findings.extend(locate(model, results, f) for f in results.findings)
    findings.extend(run_checks(model, results))
    findings.sort(key=lambda f: _ORDER[f.severity])
    return Checked(model, results, findings, spec_file)
