"""One drawing from file to findings: read, spec, recognise, analyse, check.

:func:`check_drawing` is the library entry point under ``spanwise check``. It raises
:class:`~layout.errors.FatalInput` listing every fatal problem (unreadable drawing, bad
spec, no belt loop); everything else comes back as findings.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from physics.analysis import GRIP_MARGIN, Options, Results, analyse
from physics.findings import Finding, Severity, worst_severity

from .checks import locate, run_checks
from .errors import FatalInput
from .read import Drawing, read_document, read_drawing
from .route import Model, build_model
from .spec import Spec, load_spec, spec_path_for
from .wording import word

__all__ = ["Report", "Checked", "check_drawing", "check_document", "load_spec_for", "options_for", "VERSION"]



try:
    from importlib.metadata import version as _version

    VERSION = _version("spanwise")
except Exception:  # not installed (running from a checkout)
    VERSION = "0.1.0"


@dataclass(frozen=True, slots=True)
class Report:
    """A drawing read, analysed and checked: the one object every writer takes.

    The console summary (:mod:`layout.console`), the JSON report (:mod:`layout.report`),
    the annotated drawing (:mod:`layout.annotate`) and the HTML report
    (:mod:`layout.html`) all read this and compute nothing of their own.

    Attributes
    ----------
    model
        The drawing read as a drive (records in drawing terms, the physics drive).
    results
        The physics results of the drive.
    findings
        Every finding, errors first, each located in drawing units where it has a place.
    spec_path, spec_sha256
        The spec file used and the hash of its bytes, or ``None`` when no spec was found.
    version
        The tool's version.
    document
        The ezdxf document the drawing was read from, when it was kept for writing back.
    """

    model: Model
    results: Results
    findings: list[Finding]
    spec_path: str | None
    spec_sha256: str | None = None
    version: str = VERSION
    document: Any = field(default=None, repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        """The JSON report (``schema: "spanwise-report/1"``) as plain values."""
        from .report import report_dict

        out = report_dict(self.model, self.results, self.findings, version=self.version)
        out["spec"] = {"path": self.spec_path, "sha256": self.spec_sha256}
        return out

    def worst(self) -> Severity | None:
        """The highest severity among the findings, or ``None`` when there is none."""
        return worst_severity(self.findings)

    def fails(self, threshold: Severity) -> bool:
        """Whether a finding at or above ``threshold`` exists (exit status 1)."""
        return any(f.severity.rank >= threshold.rank for f in self.findings)


#: The earlier name of :class:`Report`.
Checked = Report


def load_spec_for(drawing: str | Path, spec: str | Path | None) -> tuple[Spec, str | None]:
    """The spec named by ``spec``, else ``NAME.spanwise.toml`` beside the drawing, else none."""
    if spec is not None:
        if not Path(spec).exists():
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


def _sha256(path: str | None) -> str | None:
    if path is None:
        return None
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return None


def check_drawing(path: str | Path, *, spec: str | Path | None = None, grip_margin: float | None = None,
                  keep_document: bool = False) -> Report:
    """Read, analyse and check one drawing.

    Parameters
    ----------
    path
        The DXF drawing.
    spec
        The spec file; default ``NAME.spanwise.toml`` beside the drawing, if there is one.
    grip_margin
        Overrides the spec's grip margin.
    keep_document
        Keep the ezdxf document in the report (``Report.document``), to write the findings
        back into a copy of exactly what was analysed.

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
        drawing = read_drawing(path, keep_document=keep_document)
    except FatalInput as err:
        problems.extend(err.problems)
        raise FatalInput(problems) from err
    if sp is None:
        raise FatalInput(problems)
    return _analyse(drawing, sp, spec_file, grip_margin)


def check_document(doc: Any, *, spec: str | Path | None = None, grip_margin: float | None = None,
                   name: str = "<document>") -> Report:
    """Analyse and check an ezdxf document already in memory (kept in ``Report.document``).

    ``spec`` is a spec file; without one the drawing's labels alone describe the drive.
    """
    sp, spec_file = (load_spec_for(name, spec) if spec is not None else (Spec(), None))
    return _analyse(read_document(doc, path=name), sp, spec_file, grip_margin)


def _one_root_cause(findings: list[Finding]) -> list[Finding]:
    """Drop an ``ambiguous-drive`` error that only repeats a broken path: the speed source's
    belt did not form because its path is open or its route impossible, already an error."""
    broken = {r for f in findings if f.code in ("path-open", "route-impossible") for r in f.refs}
    return [f for f in findings
            if not (f.code == "ambiguous-drive" and f.refs and set(f.refs) <= broken)]


def _analyse(drawing: Drawing, sp: Spec, spec_file: str | None, grip_margin: float | None) -> Report:
    if drawing.entity_count == 0 and drawing.own_count > 0:
        raise FatalInput(f"{drawing.path}: holds only spanwise's own annotations (an overlay or a stripped "
                         f"copy's leftovers); check the drawing they belong to")
    model = build_model(drawing, sp)
    options = options_for(sp, grip_margin=grip_margin)
    results = analyse(model.drive, options)
    findings = list(model.findings)
    findings.extend(locate(model, results, word(f)) for f in results.findings)
    findings.extend(run_checks(model, results))
    findings = _one_root_cause(findings)
    findings.sort(key=lambda f: _ORDER[f.severity])
    return Report(model, results, findings, spec_file, _sha256(spec_file), VERSION, drawing.document)
