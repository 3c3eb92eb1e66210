"""Untrusted text from GPX files is escaped, and nothing outside the build is fetched."""

from pathlib import Path

import numpy as np
import pytest
from gpxmaker import straight, to_latlon, write_gpx

from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.render.pdf import pdf_bytes

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check

EVIL = "<script>alert(1)</script>"


def _evil_site(tmp_path: Path) -> Path:
    src = tmp_path / "src"
    src.mkdir()
    x, y, d = straight(3000, spacing=10)
    lat, lon = to_latlon(x, y)
    e = 20 + 0.04 * np.clip(d - 1000, 0, 1000)
    write_gpx(
        src / "evil.gpx",
        lat,
        lon,
        e,
        name=EVIL,
        waypoints=[
            {
                "lat": lat[100],
                "lon": lon[100],
                "name": f"Stop {EVIL}",
                "desc": '<img src="file:///etc/passwd">',
                "link": "file:///etc/passwd",
            }
        ],
    )
    (src / "site.toml").write_text(
        '[site]\ntitle = "T <b>bold</b>"\n[[routes]]\ngpx = "evil.gpx"\n'
        '[[riders]]\nname = "R <i>x</i>"\nvehicle = "road-hoods"\n',
        encoding="utf-8",
    )
    return src


def test_gpx_text_is_escaped_and_links_are_text(tmp_path):
    src = _evil_site(tmp_path)
    out = tmp_path / "out"
    build_site(load_config(src / "site.toml"), out, jobs=1)
    for page in out.rglob("*.html"):
        text = page.read_text(encoding="utf-8")
        assert "<script>" not in text and "<b>bold</b>" not in text and "<i>x</i>" not in text
        assert 'src="file:' not in text and 'href="file:' not in text
    route = next(out.glob("*/index.html")).read_text(encoding="utf-8")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in route
    assert "link: file:///etc/passwd" in route  # shown as text


def test_pdf_renderer_fetches_only_build_files(tmp_path):
    base = tmp_path / "build"
    base.mkdir()
    (base / "ok.svg").write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"/>')
    outside = tmp_path / "secret.png"
    outside.write_bytes(b"not an image")
    html = (
        f'<img src="ok.svg"><img src="file:///etc/passwd"><img src="{outside.as_uri()}">'
        '<img src="http://127.0.0.1:9/x.png"><img src="../secret.png"><link rel="stylesheet" href="https://example.invalid/x.css">'
    )
    data, refused = pdf_bytes(html, base)
    assert len(data) > 500
    assert any("etc/passwd" in url for url in refused)
    assert any("secret.png" in url for url in refused)
    assert len(refused) >= 4
    assert not any(url.endswith("ok.svg") for url in refused)
