"""Golden numbers for a hairpin whose printed radius the legs' separation decides.

The demo's hairpins (12 m and 14 m, tests/test_golden.py) are longer than the 20 m
over which the windowed radius of ``route/terrain.py`` reads the heading, so that
radius is printed and a change to the hairpin rule of ``route/corners.py`` (radius =
half the legs' separation) moves no printed figure. A U-turn of radius R is πR long;
below R = 20/π ≈ 6.4 m it is shorter than that window, which then reads at least
6.4 m whatever the real radius, and the separation rule alone gives the radius.

Here a flat out-and-back is drawn with a semicircular hairpin of radius R (5.5 m and
6 m, points every metre on the arc, no noise): its legs are 2R apart by
construction, so its radius is R. Expected figures are worked in the test from that
geometry, never from cardgen's code:
- radius printed rounded down to 1 m below 30 m (docs/contracts.md: the card's
  rounding toward caution);
- slow-to speed v = √(a·R), a the vehicle's lateral acceleration: the curve-speed
  rule of FHWA-HRT-04-103 (2004), friction factor f = v²/(g·R) taken by trail users
  (docs/sources.md §7), printed rounded down to 0.5 km/h.
A radius of separation/1.8 (or /2.2) instead of /2 changes the printed radius or the
slow-to speed of these hairpins, and fails this test.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from gpxmaker import to_latlon, write_gpx  # noqa: E402

from cardgen.io.gpx import read_gpx  # noqa: E402
from cardgen.plan import analyse, make_plan  # noqa: E402
from cardgen.profiles.riders import Rider  # noqa: E402
from cardgen.profiles.vehicles import builtin_vehicles  # noqa: E402
from cardgen.render import exports  # noqa: E402
from cardgen.route.terrain import build_terrain  # noqa: E402

#: Length [m] of each straight leg: long enough for the rider to reach their own speed.
LEG = 400.0


def _hairpin_route(path: Path, radius: float) -> Path:
    """East along y = 0, a semicircle of ``radius`` [m] turning left, west along
    y = 2·radius; flat at 20 m."""
    x1 = np.arange(0.0, LEG + 1e-9, 5.0)
    t = np.linspace(0.0, np.pi, int(np.pi * radius) + 1)[1:-1]  # about 1 m apart on the arc
    x = np.concatenate((x1, LEG + radius * np.sin(t), x1[::-1]))
    y = np.concatenate((np.zeros_like(x1), radius - radius * np.cos(t), np.full_like(x1, 2 * radius)))
    lat, lon = to_latlon(x, y)
    return write_gpx(path, lat, lon, np.full(x.size, 20.0), name="Hairpin")


def _down(value: float, step: float) -> float:
    return math.floor(value / step + 1e-9) * step


@pytest.mark.parametrize("radius", [5.5, 6.0])
@pytest.mark.parametrize("vehicle", ["road-hoods", "city-upright"])
def test_a_short_hairpin_prints_half_its_legs_separation(tmp_path, radius, vehicle):
    track = read_gpx(_hairpin_route(tmp_path / "hairpin.gpx", radius))
    analysis = analyse(track, build_terrain(track))
    v = builtin_vehicles()[vehicle]
    plan = exports.plan_dict(make_plan(analysis, rider=Rider.for_vehicle(v)))
    (curve,) = [w for w in plan["warnings"] if w["code"] == "curve"]
    assert abs(curve["at_m"] - (LEG + math.pi * radius / 2)) < 30  # at the hairpin
    printed_radius = _down(radius, 1.0)  # legs 2R apart: the radius is R
    kmh = _down(math.sqrt(v.curve_accel * radius) * 3.6, 0.5)  # FHWA-HRT-04-103: v = √(a·R)
    assert curve["radius_m"] == printed_radius
    # plan.json's m/s is the printed km/h, cut to the millimetre per second below it
    assert kmh / 3.6 - 0.001 <= curve["slow_to_m_s"] <= kmh / 3.6
    assert f"curve of {printed_radius:.0f} m radius" in curve["text"], curve["text"]
    assert f"slow to {kmh:.1f} km/h" in curve["text"], (curve["text"], kmh)
