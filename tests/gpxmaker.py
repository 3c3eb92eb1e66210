"""Synthetic GPX files with known answers, for the route tests.

Geometry is laid out in metres on a local plane (x east, y north) around an origin
in open ocean, then turned into WGS84 degrees on a sphere of the mean Earth radius.
"""

from __future__ import annotations

import math
from pathlib import Path
from xml.sax.saxutils import escape, quoteattr

import numpy as np

ORIGIN = (-40.5, -140.3)  # open South Pacific: no real place
R = 6371008.8


def to_latlon(x, y, origin=ORIGIN):
    lat0, lon0 = origin
    lat = lat0 + np.degrees(np.asarray(y, dtype=float) / R)
    lon = lon0 + np.degrees(np.asarray(x, dtype=float) / (R * np.cos(np.radians(lat0))))
    return lat, lon


def straight(length: float, spacing: float = 10.0, heading_deg: float = 90.0):
    """x, y, distance of points along a straight line."""
    s = np.arange(0.0, length + spacing / 2, spacing)
    h = np.radians(heading_deg)
    return s * np.sin(h), s * np.cos(h), s


def write_gpx(
    path: Path, lat, lon, ele=None, *, name="Synthetic", waypoints=(), version="1.1", times=None, route=False
) -> Path:
    """Write a GPX file; ``ele`` entries that are None or NaN are left out."""
    ns = "http://www.topografix.com/GPX/1/1" if version == "1.1" else "http://www.topografix.com/GPX/1/0"
    lines = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<gpx version="{version}" creator="cardgen tests" xmlns="{ns}">',
    ]
    for w in waypoints:
        lines.append(
            f'<wpt lat="{w["lat"]:.8f}" lon="{w["lon"]:.8f}"><name>{escape(w["name"])}</name>'
            + (f'<desc>{escape(w["desc"])}</desc>' if "desc" in w else "")
            + (f'<link href={quoteattr(w["link"])}/>' if "link" in w else "")
            + "</wpt>"
        )
    outer, inner, pt = ("rte", "", "rtept") if route else ("trk", "trkseg", "trkpt")
    lines.append(f"<{outer}><name>{escape(name)}</name>" + (f"<{inner}>" if inner else ""))
    for i, (a, b) in enumerate(zip(lat, lon, strict=True)):
        body = ""
        if ele is not None and ele[i] is not None and np.isfinite(ele[i]):
            body += f"<ele>{ele[i]:.2f}</ele>"
        if times is not None:
            body += f"<time>{times[i]}</time>"
        lines.append(f'<{pt} lat="{a:.8f}" lon="{b:.8f}">{body}</{pt}>')
    lines.append((f"</{inner}>" if inner else "") + f"</{outer}></gpx>")
    path.write_text("\n".join(lines), encoding="utf-8")
    return path


def profile_gpx(path: Path, distance, elevation, heading_deg: float = 90.0, **kw) -> Path:
    """A straight route whose elevation follows ``elevation`` at ``distance``."""
    h = np.radians(heading_deg)
    lat, lon = to_latlon(np.asarray(distance) * np.sin(h), np.asarray(distance) * np.cos(h))
    return write_gpx(path, lat, lon, elevation, **kw)


def long_route(
    path: Path, km: float = 200.0, turns: int = 40, climbs: int = 12, spacing: float = 20.0
) -> Path:
    """A long invented route for print tests: ``turns`` + 1 straight legs joined by
    right and left turns, every seventh a hairpin that turns back along the same road
    (out and back), ``climbs`` climbs of 150 m at 5 %, and feed points, one of them
    on an out-and-back leg (passed twice)."""
    leg = km * 1000.0 / (turns + 1)
    heading, x, y = 90.0, [0.0], [0.0]
    corners = []
    for i in range(turns + 1):
        n = int(leg // spacing)
        h = math.radians(heading)
        for _ in range(n):
            x.append(x[-1] + spacing * math.sin(h))
            y.append(y[-1] + spacing * math.cos(h))
        corners.append((x[-1], y[-1]))
        if i % 7 == 6:
            # a hairpin: 16 m across, then straight back along the same line
            side = math.radians(heading + 90)
            x.append(x[-1] + 16 * math.sin(side))
            y.append(y[-1] + 16 * math.cos(side))
            heading += 180.0
        else:
            heading += 90.0 if i % 2 else -90.0
    x, y = np.array(x), np.array(y)
    s = np.concatenate(([0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))))
    e = np.full(s.size, 100.0)
    period = s[-1] / climbs
    for k in range(climbs):
        foot = k * period + 0.2 * period
        e += np.clip((s - foot) * 0.05, 0, 150) - np.clip((s - foot - 3000 - 500) * 0.05, 0, 150)
    lat, lon = to_latlon(x, y)
    feeds = [(int(len(x) * f), f"Feed {j + 1}") for j, f in enumerate((0.25, 0.5, 0.75))]
    out_back = int(np.searchsorted(s, 6.5 * leg))  # on the leg before the first hairpin
    feeds.append((out_back, "Feed on the out-and-back"))
    waypoints = [{"lat": float(lat[i]), "lon": float(lon[i]), "name": name} for i, name in feeds]
    return write_gpx(path, lat, lon, e, waypoints=waypoints, name="Invented long route")


def town_route(path: Path, km: float = 30.0, spacing: float = 10.0, seed: int = 21) -> Path:
    """An invented 30 km ride through a town's street grid: blocks of 150–450 m
    joined by right-angle turns at single track points (junctions, as a route planner
    draws them), points every ``spacing`` m between them, and gentle rolling
    elevation (grades under 3 %). Fixed ``seed``: the same file every time."""
    rng = np.random.default_rng(seed)
    heading, x, y = 90.0, [0.0], [0.0]
    total = 0.0
    while total < km * 1000.0:
        block = float(rng.uniform(150.0, 450.0))
        n = max(1, int(block // spacing))
        h = math.radians(heading)
        for _ in range(n):
            x.append(x[-1] + spacing * math.sin(h))
            y.append(y[-1] + spacing * math.cos(h))
        total += n * spacing
        heading += 90.0 if rng.random() < 0.5 else -90.0
    x, y = np.array(x), np.array(y)
    s = np.concatenate(([0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))))
    e = 40.0 + 12.0 * np.sin(s / 1500.0) + 5.0 * np.sin(s / 430.0)  # steepest about 2 %
    lat, lon = to_latlon(x, y)
    return write_gpx(path, lat, lon, e, name="Invented town ride")


def switchback_climb(path: Path, grade: float = 0.09, leg: float = 600.0, spacing: float = 10.0) -> Path:
    """An invented climb that zig-zags: ``leg`` m east, a U-turn drawn as one track
    point onto a road 10 m to the north, ``leg`` m west, all at ``grade``, with 300 m
    of flat before and after. The U-turn sits inside the climb."""
    x = list(np.arange(-300.0, leg + 0.1, spacing))
    y = [0.0] * len(x)
    x.append(leg + 5.0)  # the U-turn: one point
    y.append(5.0)
    back = np.arange(leg, -300.0 - 0.1, -spacing)
    x += list(back)
    y += [10.0] * back.size
    x, y = np.array(x), np.array(y)
    s = np.concatenate(([0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))))
    climb_end = s[-1] - 300.0
    e = 100.0 + grade * np.clip(s - 300.0, 0.0, climb_end - 300.0)
    lat, lon = to_latlon(x, y)
    return write_gpx(path, lat, lon, e, name="Invented switchback climb")
