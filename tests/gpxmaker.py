"""Synthetic GPX files with known answers, for the route tests.

Geometry is laid out in metres on a local plane (x east, y north) around an origin
in open ocean, then turned into WGS84 degrees on a sphere of the mean Earth radius.
"""

from __future__ import annotations

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
