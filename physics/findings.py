"""The one way any stage reports a problem: a :class:`Finding`.

``physics`` raises findings with references to pulley and span ids only; ``layout``
adds the location in drawing units (``at``) where the problem can be seen.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from enum import Enum
from typing import Any

__all__ = ["Severity", "Finding", "worst_severity"]


class Severity(str, Enum):
    """How bad a finding is. Ordered: ``note < warning < error``."""

    NOTE = "note"
    WARNING = "warning"
    ERROR = "error"

    @property
    def rank(self) -> int:
        return _RANK[self]


_RANK = {Severity.NOTE: 0, Severity.WARNING: 1, Severity.ERROR: 2}


@dataclass(frozen=True, slots=True)
class Finding:
    """One problem found in a drawing or a drive.

    Parameters
    ----------
    severity
        ``error``, ``warning`` or ``note``.
    code
        Short kebab-case code, stable across versions, registered in
        :data:`physics.codes.CODES` (the README's table of codes says the same).
    message
        One line saying what and where, with numbers and units.
    at
        The drawn point nearest the problem, in drawing units, or ``None`` when the
        problem has no place (a spec value, the whole file).
    refs
        Ids of the pulleys, spans or loops concerned.
    data
        Numbers behind the finding, JSON-ready (plain floats, ints, strings, lists).
        Physics findings hold them in SI with the unit in the key (``speed_rad_s``,
        ``sag_m``); ``layout.wording.word`` adds the display keys (``speed_rpm``).

    Raises
    ------
    ValueError
        When ``code`` is not registered, or the registry does not allow ``severity`` for it.
    """

    severity: Severity
    code: str
    message: str
    at: tuple[float, float] | None = None
    refs: tuple[str, ...] = ()
    data: dict[str, Any] = field(default_factory=dict, compare=False, hash=False)

    def __post_init__(self) -> None:
        from .codes import CODES

        entry = CODES.get(self.code)
        if entry is None:
            raise ValueError(f"finding code {self.code!r} is not registered in physics.codes")
        if self.severity not in entry.severities:
            raise ValueError(f"finding code {self.code!r} takes severity "
                             f"{'/'.join(s.value for s in entry.severities)}, not {self.severity.value}")

    def located(self, at: tuple[float, float] | None) -> "Finding":
        """The same finding placed at ``at`` (drawing units)."""
        return replace(self, at=None if at is None else (float(at[0]), float(at[1])))


def worst_severity(findings: list[Finding]) -> Severity | None:
    """The highest severity among ``findings``, or ``None`` for an empty list."""
    if not findings:
        return None
    return max((f.severity for f in findings), key=lambda s: s.rank)
