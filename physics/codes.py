"""The registry of finding codes: every code any stage raises, its severities and meaning.

One line per code: its code string, the severities it may take (the first is its
default) and a one-line meaning, in the README's order (errors, warnings, notes).
:class:`physics.findings.Finding` refuses a code that is not here, or a severity the
code does not take; a test checks that the README's table of codes says exactly what
this registry says, and that every code the sources raise is registered.

To add a code: one line here, and the same line as a row of the README's table.
"""

from __future__ import annotations

from dataclasses import dataclass

from .findings import Severity

__all__ = ["Code", "CODES", "code_info"]


@dataclass(frozen=True, slots=True)
class Code:
    """A finding code: ``severities[0]`` is its default severity."""

    code: str
    severities: tuple[Severity, ...]
    meaning: str

    @property
    def severity(self) -> Severity:
        """The default severity."""
        return self.severities[0]


def _code(code: str, *rest: Severity | str) -> Code:
    """``_code(code, severity, ..., meaning)``: the severities, default first, then the meaning."""
    *sevs, meaning = rest
    if not sevs or not all(isinstance(s, Severity) for s in sevs) or not isinstance(meaning, str):
        raise TypeError(f"finding code {code!r}: expected severities then a meaning")
    return Code(code, tuple(s for s in sevs if isinstance(s, Severity)), meaning)


E, W, N = Severity.ERROR, Severity.WARNING, Severity.NOTE

#: Every finding code by its code string, in the README's order.
CODES: dict[str, Code] = {c.code: c for c in (
    _code("slip", E, "a loaded pulley's grip utilisation exceeds 1, or its slack side goes slack"),
    _code("slack-span", E, "a span's quasi-static tension reaches zero somewhere in the speed range"),
    _code("ambiguous-drive", E, "several speed sources, a cycle of loops, or a loop no shaft links to the source"),
    _code("direction-conflict", E, "a loop's travel order turns a pulley against its shaft"),
    _code("tensioner-count", E, "more than one tensioner in a loop"),
    _code("tensioner-slide", E, "a tensioner slides square to the force of its spans"),
    _code("length-unreachable", E, "no position of the adjustable pulley fits the chosen belt length"),
    _code("span-not-tangent", E, "a drawn span is off the exact tangent (angle or offset beyond tolerance)"),
    _code("path-gap", E, "the drawn path has a gap, or a span ends short of its tangent point"),
    _code("path-open", E, "a path touching pulleys does not close"),
    _code("path-branch", E, "more than two path ends meet at one point"),
    _code("span-kink", E, "a drawn span bends where there is no pulley"),
    _code("arc-off-pulley", E, "an arc of a belt path lies on no pulley circle"),
    _code("span-hits-pulley", E, "a span passes through a pulley of its own loop it does not wrap"),
    _code("no-tangent", E, "two consecutive pulleys overlap so that no span can join them"),
    _code("single-twist", E, "a loop has an odd number of half twists"),
    _code("route-impossible", E, "a `[route]` cannot be drawn without crossing itself"),
    _code("fatal", E, "the drawing could not be analysed at all (only in a failed report)"),
    _code("driver-missing", E, "the speed source is a loaded driven pulley and no pulley is marked driver"),
    _code("standstill-load", W, "the speed range reaches standstill with loads held at constant power"),
    _code("speed-outside-range", W, "the source's nominal speed lies outside its own speed range"),
    _code("friction-derived", W, "groove friction derived as mu / sin(groove/2) above the usual design value"),
    _code("tension-high", W, "the belt's peak tension is over half its section's durability tension"),
    _code("tensioner-wrap", W, "a tensioner wraps under 10 deg: its force sets the tension unreliably"),
    _code("resonance", W, "an excitation comes within the margin of a span mode (direct, or parametric at 2 f)"),
    _code("near-critical", W, "a span's v/c passes the threshold (default 0.7) somewhere in the range"),
    _code("sag", W, "a span's sag exceeds `sag_limit` of its length (running or at rest)"),
    _code("grip-low", W, "a grip utilisation above the margin (default 0.8)"),
    _code("belt-speed", W, "belt speed above the section's usual limit"),
    _code("power-mismatch", W, "the loads take more than the driver's rating, or differ from its given power"),
    _code("load-missing", W, "a driven pulley with no power or torque"),
    _code("tensioner-lever", W, E, "a tensioner arm's lever is under a tenth of the idler's radius (error at zero)"),
    _code("keep-out", W, "a span is closer than `clearance` to geometry on a keep-out layer"),
    _code("diameter-small", W, "a pitch diameter is under the belt section's minimum"),
    _code("units-implausible", W, "the declared unit makes the drive implausible; another unit fits"),
    _code("bad-coordinates", W, "entities with NaN, infinite or beyond 1e12-unit coordinates were skipped"),
    _code("circle-distorted", W, "a circle in a non-uniformly scaled block reference (not a pulley)"),
    _code("label-conflict", W, "a second label names an already labelled pulley"),
    _code("auto-id-named", W, "the spec names an automatic id, which moves if the drawing changes"),
    _code("route-ignored", W, "a `[route]` names a loop that is drawn; the drawing wins"),
    _code("recovered", N, W, "the file was read by the recovery reader (warning when truncated)"),
    _code("crossed-spans", N, "spans of one loop cross: a half twist in each"),
    _code("units-assumed", N, "no units declared: millimetres assumed"),
    _code("duplicate-entity", N, "entities repeating others are ignored (one note with the count)"),
    _code("back-offset", N, "a back idler drawn at its outside diameter"),
    _code("off-belt-layer", N, "a loop-like path off the spec's `belt_layers`, not analysed"),
    _code("label-overridden", N, "the spec renames a labelled pulley"),
    _code("no-speed-source", N, "no pulley gives a speed: only tensions at rest are reported"),
    _code("install-tension-assumed", N, "no install tension or tensioner setting: analysed at the lowest within the grip margin"),
    _code("friction-assumed", N, "no friction and no section: flat friction 0.3 assumed"),
    _code("mass-unknown", N, "no mass per length: centrifugal tension and frequencies left out"),
    _code("span-weight", N, "a span's weight over its rise exceeds 5 % of its tension (left out of the steps)"),
    _code("label-ignored", N, "a text in a pulley written like a label but not one (bad id, a word without =)"),
    _code("stray-paths", N, "chains touching circles that do not look like a belt, counted in one note"),
    _code("possible-slot", N, "two small equal circles joined by tangent lines: a slot, not a loop"),
    _code("direction-assumed", N, "the speed source has no direction: counter-clockwise assumed"),
)}


def code_info(code: str) -> Code:
    """The registry entry of ``code``.

    Raises
    ------
    KeyError
        When ``code`` is not registered.

    Examples
    --------
    >>> code_info("slip").severity.value
    'error'
    >>> [s.value for s in code_info("recovered").severities]
    ['note', 'warning']
    """
    return CODES[code]
