"""Belt sections: the numbers spanwise knows about standard belts.

Every row names where its numbers come from. "from memory" marks values recalled from
manufacturers' tables and the standards' scopes, not re-read from the documents: check
them against the belt maker's data before relying on them.

Pitch diameter means the datum diameter for ISO wedge sections.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Section", "SECTIONS", "find_section"]


@dataclass(frozen=True, slots=True)
class Section:
    """One belt section. SI units; ``None`` where the value does not apply.

    Attributes
    ----------
    name
        Trade name (ISO section names for wedge belts).
    family
        ``classical-v``, ``narrow-v``, ``v-ribbed``, ``flat``, ``round`` or ``rope``.
    min_pitch_diameter_m
        Smallest datum (pitch) diameter of a pulley the belt wraps on its inside.
    height_m
        Belt height (the back of the belt sits this far outside the pitch line, roughly).
    source
        Standard, book or "from memory", for every number of the row.
    """

    name: str
    family: str
    min_pitch_diameter_m: float
    height_m: float
    top_width_m: float | None
    mass_per_length_kg_m: float | None
    groove_angle_rad: float | None
    friction: float
    max_speed_m_s: float | None
    source: str

    @property
    def effective_friction(self) -> float:
        """Friction in the groove, ``mu / sin(groove / 2)``; the flat ``mu`` without a groove."""
        if self.groove_angle_rad is None:
            return self.friction
        return self.friction / math.sin(self.groove_angle_rad / 2.0)


_MEM_V = ("ISO 4183 (grooved pulleys, datum system) for section names and minimum datum "
          "diameters; widths, heights, masses and speed limits from memory of manufacturers' "
          "tables")
_MEM_RIB = ("ISO 9982 (V-ribbed belts) for rib pitch; minimum diameter, height and mass per rib "
            "from memory")
_DEG = math.pi / 180.0

# name, family, min datum dia mm, height mm, top width mm, mass kg/m, groove deg, mu, v_max m/s
_ROWS = [
    ("Z", "classical-v", 50, 6, 10, 0.06, 38, 0.25, 30),
    ("A", "classical-v", 75, 8, 13, 0.11, 38, 0.25, 30),
    ("B", "classical-v", 125, 11, 17, 0.19, 38, 0.25, 30),
    ("C", "classical-v", 200, 14, 22, 0.33, 38, 0.25, 30),
    ("D", "classical-v", 355, 19, 32, 0.66, 38, 0.25, 30),
    ("SPZ", "narrow-v", 63, 8, 9.7, 0.074, 38, 0.25, 40),
    ("SPA", "narrow-v", 90, 10, 12.7, 0.123, 38, 0.25, 40),
    ("SPB", "narrow-v", 140, 13, 16.3, 0.195, 38, 0.25, 40),
    ("SPC", "narrow-v", 224, 18, 22, 0.377, 38, 0.25, 40),
]
# V-ribbed, per rib: name, min dia mm, height mm, rib pitch mm, mass per rib kg/m
_RIBS = [
    ("PH", 13, 3, 1.60, 0.005),
    ("PJ", 20, 4, 2.34, 0.009),
    ("PK", 45, 6, 3.56, 0.020),
    ("PL", 75, 10, 4.70, 0.040),
    ("PM", 180, 17, 9.40, 0.13),
]

SECTIONS: dict[str, Section] = {}
for _n, _f, _d, _h, _w, _m, _g, _mu, _v in _ROWS:
    SECTIONS[_n] = Section(_n, _f, _d * 1e-3, _h * 1e-3, _w * 1e-3, _m, _g * _DEG, _mu, float(_v),
                           _MEM_V)
for _n, _d, _h, _p, _m in _RIBS:
    SECTIONS[_n] = Section(_n, "v-ribbed", _d * 1e-3, _h * 1e-3, _p * 1e-3, _m, 40 * _DEG, 0.25,
                           50.0, _MEM_RIB)


def find_section(name: str) -> Section | None:
    """The catalogue entry called ``name`` (case-insensitive), or ``None``."""
    key = name.strip().upper()
    return SECTIONS.get(key)
