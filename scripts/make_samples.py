"""Regenerate the demo drawings in sample_drawings/ (scenarios invented for the demos).

    python scripts/make_samples.py [OUTPUT_FOLDER]

Each drawing comes with its spec, NAME.spanwise.toml. The belt paths are exact tangent
paths, drawn in the three ways the tool reads: a closed polyline, LINE and ARC
entities, and the free spans alone.
"""

from __future__ import annotations

import sys
from pathlib import Path

import ezdxf

from layout.draw import add_belt_path

HERE = Path(__file__).resolve().parent.parent / "sample_drawings"


def _new(units: int = 4) -> ezdxf.document.Drawing:
    doc = ezdxf.new("R2010", setup=True)
    doc.header["$INSUNITS"] = units
    for name, color in (("PULLEYS", 7), ("BELT", 1), ("LABELS", 3), ("FRAME", 8)):
        if name not in doc.layers:
            doc.layers.add(name, color=color)
    return doc


def fan_motor(out: Path) -> None:
    """A 4 kW motor driving a roof ventilation fan through one SPA belt."""
    doc = _new()
    msp = doc.modelspace()
    motor, fan = (0.0, 0.0), (455.0, 120.0)
    r_motor, r_fan = 56.0, 140.0
    msp.add_circle(motor, r_motor, dxfattribs={"layer": "PULLEYS"})
    msp.add_circle(fan, r_fan, dxfattribs={"layer": "PULLEYS"})
    # shaft bores and a mounting plate: circles that are not pulleys
    msp.add_circle(motor, 12.0, dxfattribs={"layer": "PULLEYS"})
    msp.add_circle(fan, 20.0, dxfattribs={"layer": "PULLEYS"})
    msp.add_lwpolyline([(-120, -110), (620, -110), (620, -90), (-120, -90)], close=True,
                       dxfattribs={"layer": "FRAME"})
    add_belt_path(msp, [motor, fan], [r_motor, r_fan], [1, 1], form="polyline", layer="BELT")
    msp.add_text("MOTOR role=driver", height=6, dxfattribs={"layer": "LABELS", "insert": (-30, 20)})
    msp.add_text("FAN role=driven", height=8, dxfattribs={"layer": "LABELS", "insert": (420, 160)})
    doc.saveas(out / "fan_motor.dxf")
    (out / "fan_motor.spanwise.toml").write_text('''\
# Roof ventilation fan, belt-driven from a 4 kW four-pole motor.
units = "mm"

[belt]
section = "SPA"
strands = 1
install_tension = "700 N"

[pulley.MOTOR]
speed = "1450 rpm"
direction = "ccw"
speed_range = ["1300 rpm", "1500 rpm"]
rating = "4 kW"

[pulley.FAN]
power = "3.2 kW"
''', encoding="utf-8")


def bottling_conveyor(out: Path) -> None:
    """A serpentine drive of a bottle conveyor: two driven shafts, a backside idler and a
    spring-loaded tensioner on the slack side, drawn as LINE and ARC entities."""
    doc = _new()
    msp = doc.modelspace()
    pulleys = {  # id: centre, radius, turn (+1 inside, -1 back)
        "DRV": ((0.0, 0.0), 60.0, 1),
        "TEN": ((300.0, -20.0), 40.0, -1),
        "HEAD": ((620.0, 0.0), 100.0, 1),
        "CAP": ((620.0, 380.0), 80.0, 1),
        "GUIDE": ((300.0, 262.0), 35.0, -1),
    }
    order = ["DRV", "TEN", "HEAD", "CAP", "GUIDE"]
    for pid in order:
        c, r, _ = pulleys[pid]
        msp.add_circle(c, r, dxfattribs={"layer": "PULLEYS"})
        msp.add_text(pid, height=8, dxfattribs={"layer": "LABELS", "insert": (c[0] - 10, c[1] - 4)})
    add_belt_path(msp, [pulleys[p][0] for p in order], [pulleys[p][1] for p in order],
                  [pulleys[p][2] for p in order], form="lines", layer="CONVEYOR")
    doc.saveas(out / "bottling_conveyor.dxf")
    (out / "bottling_conveyor.spanwise.toml").write_text('''\
# Bottle conveyor: head and capper shafts driven from one geared motor.
units = "mm"
gravity = [0, -1]          # the drive stands upright: spans sag downwards in the drawing

[belt]
mass_per_length = "0.21 kg/m"
axial_stiffness = "60 kN"
friction = 0.35
tensioning = "fixed"
install_tension = "600 N"

[pulley.DRV]
role = "driver"
speed = "300 rpm"
direction = "ccw"
speed_range = ["100 rpm", "320 rpm"]

[pulley.HEAD]
role = "driven"
torque = "45 N*m"          # conveyor head: constant torque over the speed range

[pulley.CAP]
role = "driven"
torque = "16 N*m"

[pulley.TEN]
role = "tensioner"
force = "420 N"
''', encoding="utf-8")


def mixer_two_stage(out: Path) -> None:
    """A two-stage reduction to a dough mixer: the intermediate shaft carries two pulleys.
    Pulleys are block references carrying their id as an attribute; the belts are drawn
    as their free spans only."""
    doc = _new()
    msp = doc.modelspace()
    for name, r, bore in (("SHEAVE_100", 50.0, True), ("SHEAVE_250", 125.0, True),
                          ("SHEAVE_120", 60.0, False), ("SHEAVE_300", 150.0, True)):
        blk = doc.blocks.new(name)
        blk.add_circle((0, 0), r, dxfattribs={"layer": "0"})
        if bore:                                                       # the jackshaft has one bore
            blk.add_circle((0, 0), 10.0, dxfattribs={"layer": "0"})
        blk.add_attdef("ID", (0, -r / 3), dxfattribs={"height": 6})
    placed = [("SHEAVE_100", (0.0, 0.0), "M1"), ("SHEAVE_250", (420.0, 0.0), "J1"),
              ("SHEAVE_120", (420.0, 0.0), "J2"), ("SHEAVE_300", (420.0, 520.0), "MIX")]
    for name, at, pid in placed:
        ref = msp.add_blockref(name, at, dxfattribs={"layer": "PULLEYS"})
        ref.add_auto_attribs({"ID": pid})
    add_belt_path(msp, [(0.0, 0.0), (420.0, 0.0)], [50.0, 125.0], [1, 1], form="spans", layer="STAGE1")
    add_belt_path(msp, [(420.0, 0.0), (420.0, 520.0)], [60.0, 150.0], [1, 1], form="spans", layer="STAGE2")
    doc.saveas(out / "mixer_two_stage.dxf")
    (out / "mixer_two_stage.spanwise.toml").write_text('''\
# Dough mixer: 1440 rpm motor, two belt stages through a jackshaft.
units = "mm"
belt_layers = ["STAGE*"]

[belt]
section = "SPZ"
install_tension = "460 N"

[belt.STAGE2]
section = "SPA"
strands = 2
install_tension = "480 N"

[pulley.M1]
role = "driver"
speed = "1440 rpm"
direction = "ccw"
speed_range = ["1000 rpm", "1500 rpm"]   # on a frequency inverter

[pulley.MIX]
role = "driven"
power = "2.2 kW"
''', encoding="utf-8")


def main(argv: list[str]) -> int:
    out = Path(argv[1]) if len(argv) > 1 else HERE
    out.mkdir(parents=True, exist_ok=True)
    for make in (fan_motor, bottling_conveyor, mixer_two_stage):
        make(out)
        print(f"wrote {out / (make.__name__ + '.dxf')}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
