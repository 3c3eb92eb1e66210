"""Make the demo event's GPX files from invented terrain.

Everything here is invented: the Tarnwhistle Valley Cycling Circle, its place
names and its routes. The geometry is laid out in metres on a local plane and placed
in open ocean (no real place's coordinates); elevations come from grade profiles
written below, with a little GPS-like noise so that the analysis meets realistic
data. Deterministic: the same files every run.

    python sample_routes/make_routes.py [OUT]   # writes OUT/*.gpx (default: beside this file)
"""

from __future__ import annotations

import math
import sys
from pathlib import Path
from xml.sax.saxutils import escape

import numpy as np

HERE = Path(__file__).resolve().parent
OUT = HERE
ORIGIN = (-40.5, -140.3)  # open South Pacific
EARTH_RADIUS = 6371008.8
STEP = 5.0  # [m] between trackpoints


def _latlon(x, y):
    lat = ORIGIN[0] + np.degrees(y / EARTH_RADIUS)
    lon = ORIGIN[1] + np.degrees(x / (EARTH_RADIUS * math.cos(math.radians(ORIGIN[0]))))
    return lat, lon


class Path2D:
    """A route drawn as straights and bends, each with a grade."""

    def __init__(self, heading_deg: float, elevation: float):
        self.x, self.y, self.z = [0.0], [0.0], [elevation]
        self.heading = math.radians(heading_deg)
        self.marks: dict[str, int] = {}

    def _advance(self, length: float, grade: float, turn_per_m: float = 0.0):
        steps = max(1, int(round(length / STEP)))
        ds = length / steps
        for _ in range(steps):
            self.heading += turn_per_m * ds / 2
            self.x.append(self.x[-1] + ds * math.sin(self.heading))
            self.y.append(self.y[-1] + ds * math.cos(self.heading))
            self.heading += turn_per_m * ds / 2
            self.z.append(self.z[-1] + ds * grade)
        return self

    def straight(self, length: float, grade: float = 0.0):
        return self._advance(length, grade)

    def bend(self, angle_deg: float, radius: float, grade: float = 0.0):
        """Turn right (positive angle) or left on a circular arc."""
        length = abs(math.radians(angle_deg)) * radius
        return self._advance(length, grade, math.copysign(1.0 / radius, angle_deg))

    def mark(self, name: str):
        self.marks[name] = len(self.x) - 1
        return self

    def home(self, grade_to_start: bool = True, radius: float = 15.0):
        """Turn toward the start and ride back to it, closing the loop."""
        for _ in range(2):
            dx, dy = -self.x[-1], -self.y[-1]
            want = math.atan2(dx, dy)
            turn = (want - self.heading + math.pi) % (2 * math.pi) - math.pi
            self.bend(math.degrees(turn), radius)
        dist = math.hypot(self.x[-1], self.y[-1])
        grade = (self.z[0] - self.z[-1]) / dist if grade_to_start else 0.0
        return self.straight(dist, grade)


def write(path2d: Path2D, filename: str, name: str, description: str, waypoints, seed: int):
    rng = np.random.default_rng(seed)
    x = np.asarray(path2d.x) + rng.normal(0, 0.8, len(path2d.x))
    y = np.asarray(path2d.y) + rng.normal(0, 0.8, len(path2d.y))
    z = np.asarray(path2d.z) + rng.normal(0, 1.0, len(path2d.z))
    lat, lon = _latlon(x, y)
    out = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        '<gpx version="1.1" creator="cardgen sample_routes/make_routes.py" '
        'xmlns="http://www.topografix.com/GPX/1/1">',
        f"<metadata><name>{escape(name)}</name><desc>{escape(description)}</desc></metadata>",
    ]
    for label, kind, desc in waypoints:
        i = path2d.marks[label]
        out.append(
            f'<wpt lat="{lat[i]:.7f}" lon="{lon[i]:.7f}"><ele>{z[i]:.1f}</ele>'
            f"<name>{escape(label)}</name><desc>{escape(desc)}</desc><type>{kind}</type></wpt>"
        )
    out.append(f"<trk><name>{escape(name)}</name><trkseg>")
    for a, b, c in zip(lat, lon, z, strict=True):
        out.append(f'<trkpt lat="{a:.7f}" lon="{b:.7f}"><ele>{c:.1f}</ele></trkpt>')
    out.append("</trkseg></trk></gpx>")
    (OUT / filename).write_text("\n".join(out) + "\n", encoding="utf-8")


def riverside_loop():
    p = Path2D(80, 42.0).mark("Tarnwhistle Green")
    p.straight(1200, 0.001).bend(35, 120).straight(2600, 0.0005).mark("Ferry Steps")
    p.bend(-20, 200).straight(3100, 0.0008).bend(90, 25).straight(400, 0.004)
    p.mark("Weir Bridge").bend(90, 20).straight(2800, -0.0006).bend(25, 150)
    p.straight(2900, -0.0008).mark("Boathouse Café").bend(-40, 90).straight(1500).home()
    write(
        p,
        "riverside-loop.gpx",
        "Riverside Loop",
        "A flat loop along both banks of the river, crossing at Weir Bridge.",
        [
            ("Tarnwhistle Green", "start", "Start and finish by the bandstand"),
            ("Ferry Steps", "landmark", "Cobbled ramp on the right: keep left"),
            ("Weir Bridge", "checkpoint", "Narrow bridge: give way to walkers"),
            ("Boathouse Café", "food", "Toilets and water"),
        ],
        seed=11,
    )


def hill_loop():
    p = Path2D(10, 60.0).mark("Tarnwhistle Green")
    p.straight(3000, 0.004).bend(60, 40).straight(1500, 0.02).mark("Foot of Pellowind Bank")
    p.straight(600, 0.07).bend(-30, 60, 0.09).straight(500, 0.11).bend(40, 30, 0.13)
    p.straight(300, 0.14).bend(-30, 50, 0.10).straight(400, 0.08).mark("Pellowind Bank top")
    p.straight(2500, 0.005).bend(90, 30).straight(2000, -0.01).mark("Corvenna Gap")
    p.straight(800, -0.07).bend(170, 12, -0.06).straight(700, -0.08).bend(-165, 14, -0.07)
    p.straight(1200, -0.075).bend(30, 80, -0.04).straight(1500, -0.03).mark("Millpond Lane")
    p.straight(2500, -0.002).home()
    write(
        p,
        "hill-loop.gpx",
        "Pellowind Bank Hill Loop",
        "One steep climb up Pellowind Bank and a fast descent through the Corvenna Gap hairpins.",
        [
            ("Tarnwhistle Green", "start", "Start and finish by the bandstand"),
            ("Foot of Pellowind Bank", "climb", "Change down before the first bend"),
            ("Pellowind Bank top", "landmark", "Viewpoint; regroup here"),
            ("Corvenna Gap", "danger", "Two hairpins below: brake before them, not in them"),
            ("Millpond Lane", "landmark", "Narrow lane, oncoming farm traffic"),
        ],
        seed=12,
    )


def day_ride():
    p = Path2D(120, 42.0).mark("Tarnwhistle Green")
    p.straight(6000, 0.001).bend(-45, 60).straight(4000, 0.012).straight(1800, 0.045)
    p.mark("Checkpoint 1: Brenquist Cross").straight(5000, 0.002).bend(70, 30)
    p.straight(2200, 0.055).straight(1800, 0.035).bend(-20, 100).straight(4000, -0.01)
    p.straight(2500, -0.04).mark("Checkpoint 2: Ossivel Hall").bend(90, 20).straight(8000, 0.0)
    p.bend(-30, 150).straight(6000, 0.0015).straight(3000, 0.06).mark("Checkpoint 3: Yarrowvane Top")
    p.straight(3500, -0.05).bend(60, 40).straight(9000, -0.001).mark("Checkpoint 4: Quillmarrow Lock")
    p.bend(40, 80).straight(7000, 0.0005).home()
    write(
        p,
        "day-ride.gpx",
        "Tarnwhistle Day Ride",
        "A long day out over the northern moors with four staffed checkpoints.",
        [
            ("Tarnwhistle Green", "start", "Start and finish by the bandstand"),
            ("Checkpoint 1: Brenquist Cross", "checkpoint", "Stamp your card; water"),
            ("Checkpoint 2: Ossivel Hall", "checkpoint", "Lunch stop"),
            ("Checkpoint 3: Yarrowvane Top", "checkpoint", "Windy top: bring a layer"),
            ("Checkpoint 4: Quillmarrow Lock", "checkpoint", "Last checkpoint; mechanic on hand"),
        ],
        seed=13,
    )


def accessible_path():
    p = Path2D(200, 45.0).mark("Tarnwhistle Green")
    p.straight(1500, 0.002).bend(45, 60).straight(2500, 0.012).mark("Reedbed Hide")
    p.straight(1800, 0.005).bend(-60, 40).straight(1200, -0.015).mark("Orchard Rest")
    p.straight(2000, 0.0).bend(100, 30).straight(1500, -0.004).home()
    write(
        p,
        "accessible-path.gpx",
        "Reedbed Accessible Path",
        "A smooth, gentle path with wide gates, chosen for handcycles, trikes and tandems.",
        [
            ("Tarnwhistle Green", "start", "Accessible toilets and parking"),
            ("Reedbed Hide", "landmark", "Level boardwalk; rest area"),
            ("Orchard Rest", "food", "Café with step-free access"),
        ],
        seed=14,
    )


def main(out: Path = HERE) -> None:
    global OUT
    OUT = Path(out)
    OUT.mkdir(parents=True, exist_ok=True)
    for make in (riverside_loop, hill_loop, day_ride, accessible_path):
        make()


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE)
    print("wrote the demo routes to", OUT)
