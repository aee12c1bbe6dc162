"""Belt sections: the numbers spanwise knows about standard belts, ropes and cords.

Every row names where its numbers come from. "from memory" marks values recalled from
manufacturers' tables and the standards' scopes, not re-read from the documents: check
them against the belt maker's data before relying on them. "common practice" marks a
rule of the trade.

Pitch diameter means the datum diameter for ISO wedge sections. Masses, forces and
tensions are per strand (per belt); a V-ribbed belt is one strand of ``n`` ribs
(``6PK`` = six PK ribs).

Parametrised names: ``<n>PH|PJ|PK|PL|PM`` (V-ribbed with ``n`` ribs), ``ROUND-<d>``
(polyurethane round belt, cord diameter ``d`` mm), ``WIRE-6X19-<d>`` (steel wire rope,
diameter ``d`` mm), ``FLAT-POLYAMIDE``, ``FLAT-LEATHER``, ``FLAT-RUBBER`` (flat belts:
give ``width`` and ``thickness``, or ``mass_per_length``).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

__all__ = ["Section", "SECTIONS", "find_section", "PREFERRED_LENGTHS_M", "catalogue_rows"]

_DEG = math.pi / 180.0


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
        Belt height (the back of the belt sits about this far outside the pitch line).
    mass_per_length_kg_m
        Per strand; ``None`` for flat belts, whose mass follows from width and thickness.
    density_kg_m3
        Material density, for flat belts (``mass = density * width * thickness``).
    groove_angle_rad
        Included groove angle; ``None`` for flat contact.
    friction
        Flat-surface coefficient of friction of the belt material on a cast-iron or steel pulley.
    max_speed_m_s
        Usual upper limit of belt speed.
    stock_lengths_m
        Standard pitch (datum) lengths, or ``None`` where belts are made to length.
    bending_kb_nm
        Bending tension constant: the tension from bending round a pulley of pitch diameter
        ``d`` is ``Kb / d`` (N*m, so that Kb / d is in N); ``None`` where no data is known.
    fatigue_k_n, fatigue_b
        Durability constants of the section: a belt whose peak tension ``T`` recurs at
        each pass lasts about ``(K / T)**b`` passes.
    tension_source
        Where the three tension constants come from.
    source
        Standard, book or "from memory", for every number of the row.
    """

    name: str
    family: str
    min_pitch_diameter_m: float | None
    height_m: float | None
    top_width_m: float | None
    mass_per_length_kg_m: float | None
    groove_angle_rad: float | None
    friction: float
    max_speed_m_s: float | None
    source: str
    density_kg_m3: float | None = None
    stock_lengths_m: tuple[float, ...] | None = None
    design_effective_friction: float | None = None
    bending_kb_nm: float | None = None
    fatigue_k_n: float | None = None
    fatigue_b: float | None = None
    tension_source: str = ""

    @property
    def effective_friction(self) -> float:
        """Friction in the groove used for design.

        The section's design value where the trade has one (V-belts: 0.5123, the value
        that gives ``exp(mu' pi) = 5``, Shigley ch. 17, from memory); else the wedge
        factor on the flat friction, ``mu / sin(groove / 2)`` (Shigley ch. 17, from
        memory); the flat ``mu`` without a groove.
        """
        if self.design_effective_friction is not None:
            return self.design_effective_friction
        if self.groove_angle_rad is None:
            return self.friction
        return self.friction / math.sin(self.groove_angle_rad / 2.0)


def _r20(lo_mm: float, hi_mm: float) -> tuple[float, ...]:
    """ISO 3 preferred numbers, R20 series, between two lengths (metres)."""
    base = [1.00, 1.12, 1.25, 1.40, 1.60, 1.80, 2.00, 2.24, 2.50, 2.80, 3.15, 3.55, 4.00, 4.50,
            5.00, 5.60, 6.30, 7.10, 8.00, 9.00]
    out = []
    for decade in (100, 1000, 10000):
        for b in base:
            v = b * decade
            if lo_mm - 1e-9 <= v <= hi_mm + 1e-9:
                out.append(round(v * 1e-3, 6))
    return tuple(out)


#: Preferred stock lengths (R20 series, ISO 3) used as the datum-length series of wedge
#: belts. From memory: ISO 4184 lists datum lengths built on preferred numbers; makers'
#: catalogues list many more lengths between these. Give ``stock_lengths`` in the spec
#: for the maker's own list.
PREFERRED_LENGTHS_M = _r20(400, 12500)

_SRC_V = ("section names and minimum datum diameters: ISO 4183 (grooved pulleys, datum system); "
          "widths, heights, masses: from memory of makers' tables; friction 0.25 rubber on cast iron, "
          "design groove friction 0.5123 (Shigley ch. 17) and speed limits (classical 30 m/s, narrow 40 m/s): common practice, from memory; stock "
          "lengths: R20 preferred numbers (ISO 3), from memory")
_SRC_RIB = ("rib pitch: ISO 9982 (V-ribbed belts); minimum effective diameter, height, mass per rib: "
            "from memory; friction 0.25, design groove friction 0.5 and 50 m/s limit: common practice, "
            "from memory")
_SRC_FLAT = ("densities and friction: Budynas and Nisbett, Shigley's Mechanical Engineering Design, "
             "9th ed., Table 17-2 (from memory); speed limits: common practice, from memory")
_SRC_ROUND = ("polyurethane density 1200 kg/m3, friction 0.5, minimum pulley diameter 10 cord "
              "diameters, 20 m/s: from memory of makers' tables")
_SRC_ROPE = ("6x19 fibre-core steel wire rope: mass 0.0035 d^2 kg/m (d in mm), minimum sheave 26 d, "
             "friction 0.1 on a steel sheave, 10 m/s: from memory of rope makers' tables (common practice)")

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
# flat belts: name, density kg/m3, mu, v_max m/s
_FLAT = [
    ("FLAT-POLYAMIDE", 1160.0, 0.8, 60.0),   # 0.042 lbf/in^3
    ("FLAT-LEATHER", 970.0, 0.4, 30.0),      # 0.035 lbf/in^3
    ("FLAT-RUBBER", 1250.0, 0.3, 30.0),
]
_STOCK = {"Z": (400, 3150), "A": (630, 5000), "B": (900, 8000), "C": (1400, 10000), "D": (2800, 12500),
          "SPZ": (630, 3550), "SPA": (800, 4500), "SPB": (1250, 8000), "SPC": (2000, 12500)}

_LBF, _LBF_IN = 4.4482216, 0.11298483
#: Bending constant Kb (lbf*in) and durability K (lbf), b of the RMA sections: Budynas and
#: Nisbett, Shigley's Mechanical Engineering Design, 9th ed., Tables 17-16 and 17-17 (from memory).
_RMA = {"A": (220, 674, 11.089), "B": (576, 1193, 10.926), "C": (1600, 2038, 11.173),
        "D": (5680, 4208, 11.105), "3V": (230, 728, 12.464), "5V": (1098, 1654, 12.593),
        "8V": (4830, 3638, 12.629)}
#: ISO sections taken as an RMA section: the classical ones by name; the narrow ones as the RMA
#: narrow section of nearest top width, SPA (12.7 mm) as the narrower 3V (a rough, cautious bound).
_AS_RMA = {"A": "A", "B": "B", "C": "C", "D": "D", "SPZ": "3V", "SPA": "3V", "SPB": "5V", "SPC": "8V"}
_SRC_TENSION = ("Kb, K and b: Shigley's Mechanical Engineering Design, 9th ed., Tables 17-16 and "
                "17-17 (from memory), for section {rma}")


def _tension_data(name: str) -> dict[str, float | str]:
    rma = _AS_RMA.get(name)
    if rma is None:
        return {}
    kb, k, b = _RMA[rma]
    src = _SRC_TENSION.format(rma=rma) + ("" if rma == name else f", taken for {name}")
    return {"bending_kb_nm": kb * _LBF_IN, "fatigue_k_n": k * _LBF, "fatigue_b": b, "tension_source": src}


SECTIONS: dict[str, Section] = {}
for _n, _f, _d, _h, _w, _m, _g, _mu, _v in _ROWS:
    SECTIONS[_n] = Section(_n, _f, _d * 1e-3, _h * 1e-3, _w * 1e-3, _m, _g * _DEG, _mu, float(_v),
                           _SRC_V, stock_lengths_m=_r20(*_STOCK[_n]), design_effective_friction=0.5123,
                           **_tension_data(_n))
for _n, _d, _h, _p, _m in _RIBS:
    SECTIONS[_n] = Section(_n, "v-ribbed", _d * 1e-3, _h * 1e-3, _p * 1e-3, _m, 40 * _DEG, 0.25,
                           50.0, _SRC_RIB, stock_lengths_m=_r20(500, 3150), design_effective_friction=0.5)
for _n, _rho, _mu, _v in _FLAT:
    SECTIONS[_n] = Section(_n, "flat", None, None, None, None, None, _mu, _v, _SRC_FLAT,
                           density_kg_m3=_rho)

_RIBBED = re.compile(r"^(\d+)\s*-?\s*(PH|PJ|PK|PL|PM)$|^(PH|PJ|PK|PL|PM)\s*-?\s*(\d+)$")
_ROUND = re.compile(r"^ROUND\s*-?\s*(\d+(?:\.\d+)?)$")
_WIRE = re.compile(r"^WIRE\s*-?\s*6X19\s*-?\s*(\d+(?:\.\d+)?)$")


def find_section(name: str) -> Section | None:
    """The catalogue entry called ``name`` (case-insensitive), or ``None``.

    Examples
    --------
    >>> find_section("6PK").mass_per_length_kg_m
    0.12
    >>> find_section("spa").effective_friction
    0.5123
    """
    key = name.strip().upper()
    if key in SECTIONS:
        return SECTIONS[key]
    m = _RIBBED.match(key)
    if m:
        ribs = int(m.group(1) or m.group(4))
        base = SECTIONS[m.group(2) or m.group(3)]
        if ribs < 1:
            return None
        return replace(base, name=f"{ribs}{base.name}",
                       mass_per_length_kg_m=round(ribs * base.mass_per_length_kg_m, 9),
                       top_width_m=ribs * base.top_width_m)
    m = _ROUND.match(key)
    if m:
        d = float(m.group(1)) * 1e-3
        return Section(f"ROUND-{m.group(1)}", "round", 10 * d, d, d, 1200.0 * math.pi * d * d / 4,
                       None, 0.5, 20.0, _SRC_ROUND, density_kg_m3=1200.0)
    m = _WIRE.match(key)
    if m:
        dmm = float(m.group(1))
        return Section(f"WIRE-6X19-{m.group(1)}", "rope", 26 * dmm * 1e-3, dmm * 1e-3, dmm * 1e-3,
                       0.0035 * dmm * dmm, None, 0.1, 10.0, _SRC_ROPE)
    return None


def catalogue_rows() -> list[Section]:
    """Entries listed by ``spanwise catalog``: the fixed sections and common sizes of the
    parametrised ones."""
    rows = list(SECTIONS.values())
    rows += [find_section(f"6{n}") for n, *_ in _RIBS]           # type: ignore[misc]
    rows += [find_section(f"ROUND-{d}") for d in (3, 5, 8, 12)]  # type: ignore[misc]
    rows += [find_section(f"WIRE-6X19-{d}") for d in (6, 10, 16, 20)]  # type: ignore[misc]
    return [r for r in rows if r is not None]
