"""The hostile-input corpus: GPX files that try to break cardgen, each with the
outcome it must have. Made here, in code, rather than committed as files.

    python tests/hostile/make_corpus.py OUT        # writes OUT/<case>.gpx
    python tests/hostile/make_corpus.py --readme   # prints the table of tests/hostile/README.md

Outcomes: ("error", text) — exit code 1 and one line on stderr containing the text;
("ok", text) — exit 0, and the route's warnings (or name) contain the text ("" = none
required).
"""

from __future__ import annotations

import sys
from pathlib import Path

HEAD = '<?xml version="1.0" encoding="UTF-8"?>\n'
GPX = '<gpx version="1.1" creator="hostile" xmlns="http://www.topografix.com/GPX/1/1">'
#: The 300 MB case is a sparse file: its size is real, its contents are not read.
BIG_BYTES = 300 * 1024 * 1024


def _points(n=60, lat0=-40.5, lon0=-140.3, step=0.0002, ele=lambda i: 10 + 0.5 * i, extra=lambda i: ""):
    out = []
    for i in range(n):
        e = ele(i)
        body = "" if e is None else f"<ele>{e}</ele>"
        out.append(f'<trkpt lat="{lat0 + i * step:.7f}" lon="{lon0:.7f}">{body}{extra(i)}</trkpt>')
    return "".join(out)


def _track(points, name="Hostile", head=HEAD, extra=""):
    return f"{head}{GPX}{extra}<trk><name>{name}</name><trkseg>{points}</trkseg></trk></gpx>"


def _bomb():
    entities = '<!ENTITY a0 "lol">' + "".join(
        f'<!ENTITY a{i} "{("&a" + str(i - 1) + ";") * 10}">' for i in range(1, 10)
    )
    return _track(
        _points().replace("<ele>10.0</ele>", "<ele>&a9;</ele>"), head=HEAD + f"<!DOCTYPE gpx [{entities}]>\n"
    )


def _script_everywhere():
    evil = "<script>alert(1)</script><img src=x onerror=alert(2)>"
    from xml.sax.saxutils import escape

    e = escape(evil)
    wpt = (
        f'<wpt lat="-40.5" lon="-140.3"><name>{e}</name><desc>{e}</desc><type>{e}</type>'
        f'<link href="javascript:alert(3)"><text>{e}</text></link></wpt>'
    )
    return _track(_points(), name=e, extra=f"<metadata><name>{e}</name><desc>{e}</desc></metadata>{wpt}")


CASES = {
    # name: (bytes or text or callable(path), outcome, what it is)
    "zero-byte": (b"", ("error", "the file is empty"), "a file of zero bytes"),
    "empty-gpx": (HEAD + GPX + "</gpx>", ("error", "at least two"), "a GPX element with nothing in it"),
    "truncated": (_track(_points())[:700], ("error", "not well-formed"), "XML cut off mid-element"),
    "not-xml": ("PK\x03\x04 this is a zip, not XML", ("error", "not well-formed"), "binary junk"),
    "html": ("<!doctype html><html><body>hello</body></html>", ("error", "not well-formed"), "an HTML page"),
    "not-gpx-root": (HEAD + "<kml><Document/></kml>", ("error", "not a GPX file"), "another XML format"),
    "one-point": (_track(_points(1)), ("error", "at least two"), "a single trackpoint"),
    "identical-points": (_track(_points(50, step=0.0)), ("error", "long"), "all points the same"),
    "no-elevation": (
        _track(_points(ele=lambda i: None)),
        ("error", "no trackpoint has an elevation"),
        "no <ele> anywhere",
    ),
    "partial-elevation": (
        _track(_points(ele=lambda i: None if 10 <= i < 20 else 10 + 0.5 * i)),
        ("ok", "10 of 60 trackpoints had no usable elevation"),
        "a gap in the elevations",
    ),
    "nan-coordinate": (
        _track(_points().replace('lat="-40.4980000"', 'lat="NaN"', 1)),
        ("error", "not a finite number"),
        'lat="NaN"',
    ),
    "inf-coordinate": (
        _track(_points().replace('lon="-140.3000000"', 'lon="inf"', 1)),
        ("error", "not a finite number"),
        'lon="inf"',
    ),
    "lat-out-of-range": (
        _track(_points().replace('lat="-40.4990000"', 'lat="-91.5"', 1)),
        ("error", "outside ±90°"),
        "latitude −91.5",
    ),
    "lon-out-of-range": (
        _track(_points().replace('lon="-140.3000000"', 'lon="540"', 1)),
        ("error", "outside ±180°"),
        "longitude 540",
    ),
    "missing-lon": (
        _track(_points().replace(' lon="-140.3000000"', "", 1)),
        ("error", "lon is None"),
        "a trackpoint without lon",
    ),
    "elevation-100km": (
        _track(_points(ele=lambda i: 100000.0 if i == 7 else -100000.0 if i == 30 else 5.0)),
        ("ok", "2 of 60 trackpoints had no usable elevation"),
        "elevations of ±100 km",
    ),
    "time-backwards": (
        _track(_points(extra=lambda i: f"<time>2026-05-01T08:{59 - i % 60:02d}:00Z</time>")),
        ("ok", "timestamps go backwards"),
        "time running backwards",
    ),
    "duplicated-points": (
        _track("".join(p + "</trkpt>" + p + "</trkpt>" for p in _points(40).split("</trkpt>") if p)),
        ("ok", ""),
        "every point twice",
    ),
    "grade-200pct": (
        _track(
            _points(30)
            + '<trkpt lat="-40.4941910" lon="-140.3000000"><ele>26.5</ele></trkpt>'
            + _points(30, lat0=-40.4941)
        ),
        ("ok", ""),
        "a 2 m rise between points 1 m apart (200 % grade)",
    ),
    "entity-bomb": (_bomb(), ("error", "document type"), "billion laughs entity expansion"),
    "external-entity": (
        _track(
            _points().replace("<ele>10.0</ele>", "<ele>&x;</ele>"),
            head=HEAD + '<!DOCTYPE gpx [<!ENTITY x SYSTEM "file:///etc/passwd">]>\n',
        ),
        ("error", "document type"),
        "an external entity pointing at /etc/passwd",
    ),
    "dtd-only": (
        _track(_points(), head=HEAD + '<!DOCTYPE gpx SYSTEM "http://127.0.0.1:9/gpx.dtd">\n'),
        ("error", "document type"),
        "a DTD fetched from a URL",
    ),
    "undefined-entity": (
        _track(_points().replace("<ele>10.0</ele>", "<ele>&nope;</ele>")),
        ("error", "undefined entity"),
        "an entity that is not declared",
    ),
    "script-in-every-field": (
        _script_everywhere(),
        ("ok", ""),
        "HTML and script in names, descriptions, " "types and links (escaped on pages; see test_safe_render)",
    ),
    "rtl-and-emoji": (
        _track(_points(), name="\u202eרכיבה 🚲🏔️ طريق\u202c"),
        ("ok", "🚲"),
        "right-to-left text, a direction override and emoji in the name",
    ),
    "huge-300mb": (
        lambda path: _sparse(path),
        ("error", "larger than the 100 MiB"),
        "a 300 MB file (sparse): refused by its size before reading",
    ),
    "latin-1": (
        (
            '<?xml version="1.0" encoding="ISO-8859-1"?>\n'
            + GPX
            + "<trk><name>Caf\xe9 Col</name><trkseg>"
            + _points()
            + "</trkseg></trk></gpx>"
        ).encode("latin-1"),
        ("ok", "Café Col"),
        "an ISO-8859-1 file with accented names",
    ),
    "utf8-declared-latin1-bytes": (
        (HEAD + GPX + "<trk><name>Caf\xe9</name><trkseg>" + _points() + "</trkseg></trk></gpx>").encode(
            "latin-1"
        ),
        ("error", "not well-formed"),
        "bytes that are not the declared UTF-8",
    ),
    "utf16": (
        (_track(_points()).replace('encoding="UTF-8"', 'encoding="UTF-16"')).encode("utf-16"),
        ("ok", ""),
        "a UTF-16 file with a byte-order mark",
    ),
    "gpx-1.0": (
        _track(_points()).replace("GPX/1/1", "GPX/1/0").replace('version="1.1"', 'version="1.0"'),
        ("ok", ""),
        "GPX 1.0",
    ),
    "route-points-only": (
        HEAD + GPX + "<rte><name>R</name>" + _points().replace("trkpt", "rtept") + "</rte></gpx>",
        ("ok", ""),
        "only <rte>/<rtept>",
    ),
    "several-tracks": (
        HEAD
        + GPX
        + "".join(
            f"<trk><name>T{k}</name><trkseg>{_points(20, lat0=-40.5 + k * 0.004)}" "</trkseg></trk>"
            for k in range(3)
        )
        + "</gpx>",
        ("ok", "3 tracks were joined"),
        "three tracks in one file",
    ),
    "deep-nesting": (
        HEAD
        + GPX
        + "<extensions>"
        + "<x>" * 5000
        + "</x>" * 5000
        + "</extensions>"
        + "<trk><trkseg>"
        + _points()
        + "</trkseg></trk></gpx>",
        ("ok", ""),
        "5,000 nested unknown elements",
    ),
    "negative-zero-and-exponents": (
        _track(_points().replace('lat="-40.4990000"', 'lat="-4.04990000e1"', 1)),
        ("ok", ""),
        "numbers written with exponents",
    ),
    "encoding-shift_jis": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="Shift_JIS"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the Shift_JIS encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-utf-7": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="UTF-7"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the UTF-7 encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-big5": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="big5"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the big5 encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-rot13": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="rot13"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the rot13 encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-base64": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="base64"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the base64 encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-zlib": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="zlib"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the zlib encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-hex": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="hex"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the hex encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "encoding-punycode": (
        _track(_points()).replace('encoding="UTF-8"', 'encoding="punycode"'),
        ("error", "declares the encoding"),
        "an XML declaration naming the punycode encoding (only UTF-8/16, ASCII and Latin-1 are read)",
    ),
    "segments-500km-apart": (
        _track("</trkseg><trkseg>".join((_points(40), _points(40, lat0=-36.0)))),
        ("ok", "gap(s) between track segments"),
        "two track segments 500 km apart (joined without the gap's straight line)",
    ),
    "gap-with-elevation-jump": (
        _track(
            "</trkseg><trkseg>".join(
                (_points(40), _points(40, lat0=-40.5 + 40 * 0.0002 + 0.00017, ele=lambda i: 60 + 0.5 * i))
            )
        ),
        ("ok", "gap(s) between track segments"),
        "a 19 m gap with a 32 m elevation jump (no false climb)",
    ),
    "across-180-meridian": (
        _track(
            "".join(
                f'<trkpt lat="-16.5" lon="{(179.99 + i * 0.0003 + 180) % 360 - 180:.7f}"><ele>5</ele></trkpt>'
                for i in range(60)
            )
        ),
        ("ok", ""),
        "a route that crosses the 180° meridian (no point across the globe, no false turn)",
    ),
    "lat-underflow": (
        _track(_points().replace('lat="-40.4990000"', 'lat="1e-400"', 1)),
        ("error", "too small to be a coordinate"),
        'lat="1e-400" (reads as 0)',
    ),
    "huge-attribute": (
        lambda path: _huge_token(path),
        ("error", "runs over 1 MiB without a break"),
        "a 3 MiB waypoint name (the XML parser is quadratic in one token's length)",
    ),
    "too-many-waypoints": (
        _track(
            _points(),
            extra="".join(f'<wpt lat="-40.5" lon="-140.3"><name>w{i}</name></wpt>' for i in range(2100)),
        ),
        ("error", "more than 2,000 waypoints"),
        "2,100 waypoints (a cue sheet cannot hold them)",
    ),
    "pole-to-pole-zigzag": (
        _track(
            "".join(
                f'<trkpt lat="{80 if i % 2 else -80}" lon="{i * 0.001:.3f}"><ele>5</ele></trkpt>'
                for i in range(300)
            )
        ),
        ("error", "cardgen plans routes up to 10,000 km"),
        "300 points alternating between latitudes 80 and −80: 5.3 million km, refused before resampling",
    ),
}


def _huge_token(path: Path) -> None:
    name = "x" * (3 << 20)
    path.write_text(_track(_points(), extra=f'<wpt lat="-40.5" lon="-140.3"><name>{name}</name></wpt>'))


def _sparse(path: Path) -> None:
    with open(path, "wb") as handle:
        handle.write(_track(_points()).encode())
        handle.truncate(BIG_BYTES)


def write_case(name: str, folder: Path) -> Path:
    content = CASES[name][0]
    path = folder / f"{name}.gpx"
    if callable(content):
        content(path)
    elif isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8")
    return path


def readme_table() -> str:
    rows = ["| case | what it is | expected outcome |", "|---|---|---|"]
    for name, (_, (kind, text), what) in CASES.items():
        outcome = (
            f"exit 1, message contains “{text}”"
            if kind == "error"
            else (f"analysed; output contains “{text}”" if text else "analysed, finite numbers")
        )
        rows.append(f"| `{name}` | {what} | {outcome} |")
    return "\n".join(rows)


if __name__ == "__main__":
    if sys.argv[1:] == ["--readme"]:
        print(readme_table())
    else:
        out = Path(sys.argv[1])
        out.mkdir(parents=True, exist_ok=True)
        for case in CASES:
            write_case(case, out)
        print(f"wrote {len(CASES)} cases to {out}")
