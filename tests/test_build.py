"""The build: configuration errors, atomic publishing, incremental rebuilds, locks."""

import os
import re
import shutil
import signal
import subprocess
import time
from pathlib import Path

import pytest
from buildkit import cardgen_command, leftovers, serving, snapshot, wait_until_rendering

from cardgen.build import BuildError, build_site
from cardgen.build import pipeline as build_module
from cardgen.build.publish import Lock
from cardgen.config import folder_config, load_config
from cardgen.errors import ConfigError

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


def _small_site(tmp_path: Path, routes=("riverside-loop", "accessible-path")) -> Path:
    src = tmp_path / "src"
    src.mkdir()
    for name in routes:
        shutil.copy(SAMPLES / f"{name}.gpx", src)
    body = "".join(f'[[routes]]\ngpx = "{name}.gpx"\n' for name in routes)
    (src / "site.toml").write_text(
        '[site]\ntitle = "Small"\n'
        + body
        + '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n'
        + '[[riders]]\nname = "B"\nvehicle = "handcycle"\n',
        encoding="utf-8",
    )
    return src


def test_demo_builds_end_to_end(demo_site):
    config, out, report = demo_site
    riders = sum(1 for rc in config.routes for r in config.riders if r.rides(rc, rc.name or rc.gpx.stem))
    assert report.routes == 4 and report.cards_rendered == riders + 4  # and a coach sheet per route
    assert (out / "index.html").is_file()
    for route in ("riverside-loop", "hill-loop", "day-ride", "accessible-path"):
        for name in ("index.html", "profile.svg", "route.gpx", "plan.json", "climbs.csv", "coach.pdf"):
            assert (out / route / name).is_file(), (route, name)


def test_no_change_rebuild_skips_every_card_and_keeps_the_bytes(tmp_path):
    src = _small_site(tmp_path)
    out = tmp_path / "out"
    config = load_config(src / "site.toml")
    first = build_site(config, out, jobs=1)
    assert first.cards_rendered == 6  # 2 routes × (2 riders + coach sheet)
    before = snapshot(out)
    again = build_site(load_config(src / "site.toml"), out, jobs=1)
    assert again.up_to_date and again.cards_rendered == 0 and again.cards_reused == 6
    assert snapshot(out) == before


def test_changing_one_route_rerenders_only_its_cards(tmp_path):
    src = _small_site(tmp_path)
    out = tmp_path / "out"
    build_site(load_config(src / "site.toml"), out, jobs=1)
    before = snapshot(out)
    text = (src / "accessible-path.gpx").read_text().replace("Reedbed Accessible Path", "Reedbed Path")
    (src / "accessible-path.gpx").write_text(text)
    report = build_site(load_config(src / "site.toml"), out, jobs=1)
    assert report.cards_rendered == 3 and report.cards_reused == 3
    after = snapshot(out)
    assert all(after[k] == v for k, v in before.items() if k.startswith("riverside-loop/"))


def test_same_inputs_same_bytes_whatever_the_jobs(tmp_path):
    src = _small_site(tmp_path, routes=("riverside-loop",))
    a, b = tmp_path / "a", tmp_path / "b"
    build_site(load_config(src / "site.toml"), a, jobs=1)
    build_site(load_config(src / "site.toml"), b, jobs=2)
    assert snapshot(a) == snapshot(b)


def test_three_mistakes_are_reported_together(tmp_path):
    (tmp_path / "site.toml").write_text(
        '[site]\nunits = "furlongs"\n[[routes]]\ngpx = "missing.gpx"\n'
        '[[riders]]\nname = "X"\nvehicle = "road-hoods"\ncp_w = 5000\n',
        encoding="utf-8",
    )
    with pytest.raises(ConfigError) as info:
        load_config(tmp_path / "site.toml")
    message = str(info.value)
    assert "3 problems" in message
    assert "site.units" in message and "line 2" in message
    assert "routes[0].gpx" in message and "missing.gpx" in message
    assert "riders[0].cp_w" in message and "line 8" in message


def test_unknown_keys_are_errors(tmp_path):
    src = _small_site(tmp_path, routes=("riverside-loop",))
    text = (src / "site.toml").read_text().replace('title = "Small"', 'title = "Small"\ncolour = "red"')
    (src / "site.toml").write_text(text)
    with pytest.raises(ConfigError, match=r"site\.colour: unknown key"):
        load_config(src / "site.toml")


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("[site\n", "not valid TOML"),
        ('[[routes]]\ngpx = "a.gpx"\n', "no [[riders]]"),
        ('[[routes]]\ngpx = 3\n[[riders]]\nname = "a"\nvehicle = "rocket"\n', "unknown vehicle"),
        (
            '[event]\nstart = "25:99"\n[[routes]]\ngpx = "x.gpx"\n[[riders]]\nname = "a"\nvehicle = "tandem"\n',
            "not a time",
        ),
        (
            '[[routes]]\ngpx = "x.gpx"\n[[riders]]\nname = "a"\nvehicle = "tandem"\nflat_w = 900\ncp_w = 300\n',
            "flat_w: 900 W on the flat is above the CP (300 W)",
        ),
    ],
)
def test_broken_configs_are_clear(tmp_path, text, fragment):
    (tmp_path / "site.toml").write_text(text, encoding="utf-8")
    with pytest.raises(ConfigError, match=re.escape(fragment)):
        load_config(tmp_path / "site.toml")


def test_failing_route_leaves_the_previous_site_byte_identical(tmp_path):
    src = _small_site(tmp_path)
    out = tmp_path / "out"
    build_site(load_config(src / "site.toml"), out, jobs=1)
    before = snapshot(out)
    (src / "riverside-loop.gpx").write_text("<gpx><trk><trkseg><trkpt lat='1'", encoding="utf-8")
    with pytest.raises(BuildError, match="riverside-loop.gpx"):
        build_site(load_config(src / "site.toml"), out, jobs=1)
    assert snapshot(out) == before
    assert leftovers(out) == []


_RENDER_PDFS = build_module._render_pdfs


def _disk_full_after_one_card(cards):
    """Cards rendered in a worker process: one reaches the disk, then the disk is full
    (module level, so that the worker can find it)."""
    _RENDER_PDFS(cards[:1])
    raise OSError(28, "No space left on device")


def test_render_failing_midway_leaves_the_previous_site(tmp_path, monkeypatch):
    src = _small_site(tmp_path)
    out = tmp_path / "out"
    build_site(load_config(src / "site.toml"), out, jobs=1)
    before = snapshot(out)
    # rider A changes: A's card and the coach sheet of each route are rendered again
    (src / "site.toml").write_text((src / "site.toml").read_text().replace('"road-hoods"', '"road-drops"'))
    monkeypatch.setattr(build_module, "_render_pdfs", _disk_full_after_one_card)
    with pytest.raises(OSError):
        build_site(load_config(src / "site.toml"), out, jobs=1)
    assert snapshot(out) == before
    assert leftovers(out) == []


def test_keep_going_publishes_the_good_routes(tmp_path):
    src = _small_site(tmp_path)
    (src / "accessible-path.gpx").write_text("not xml", encoding="utf-8")
    out = tmp_path / "out"
    report = build_site(load_config(src / "site.toml"), out, jobs=1, keep_going=True)
    assert len(report.failed) == 1
    assert (out / "riverside-loop" / "index.html").is_file()
    assert not (out / "accessible-path").exists()


def test_sigkill_midway_keeps_the_previous_site_and_the_next_build_works(tmp_path):
    src = _small_site(tmp_path)
    out = tmp_path / "out"
    build_site(load_config(src / "site.toml"), out, jobs=1)
    before = snapshot(out)
    text = (src / "site.toml").read_text().replace("Small", "Changed").replace('"road-hoods"', '"road-drops"')
    (src / "site.toml").write_text(text)  # a new title (on every card) and a change to rider A
    proc = subprocess.Popen(
        [*cardgen_command(), "build", str(src / "site.toml"), "-o", str(out), "--jobs", "1"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        start_new_session=True,
    )
    wait_until_rendering(out)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    assert snapshot(out) == before
    report = build_site(load_config(src / "site.toml"), out, jobs=1)
    assert (report.cards_rendered, report.cards_reused) == (6, 0)  # the title is on every card
    assert "Changed" in (out / "index.html").read_text()
    assert leftovers(out) == []


def test_two_builds_into_one_folder(tmp_path):
    src = _small_site(tmp_path, routes=("riverside-loop",))
    out = tmp_path / "out"
    with Lock(out):
        with pytest.raises(BuildError, match="another cardgen build"):
            build_site(load_config(src / "site.toml"), out, jobs=1)


@pytest.mark.parametrize("where", ["src", "parent", "root"])
def test_output_may_not_hold_the_sources(tmp_path, where):
    src = _small_site(tmp_path, routes=("riverside-loop",))
    out = {"src": src, "parent": tmp_path, "root": Path("/")}[where]
    with pytest.raises(BuildError, match="output folder"):
        build_site(load_config(src / "site.toml"), out, jobs=1)


def test_folder_without_site_toml_uses_default_riders(tmp_path, cli):
    src = tmp_path / "gpx"
    src.mkdir()
    shutil.copy(SAMPLES / "riverside-loop.gpx", src)
    config = folder_config(src)
    assert [r.rider.vehicle.name for r in config.riders] == [
        "city-upright",
        "road-hoods",
        "e-assist-city",
        "handcycle",
    ]
    code, out, err = cli("build", str(src), "-o", str(tmp_path / "out"), "--no-pdf")
    assert code == 0, err
    assert "no site.toml" in err
    assert (tmp_path / "out" / "riverside-loop" / "index.html").is_file()


def test_check_writes_nothing(tmp_path, cli):
    src = _small_site(tmp_path)
    before = sorted(p.name for p in tmp_path.rglob("*"))
    code, out, err = cli("check", str(src / "site.toml"))
    assert code == 0, err
    assert "nothing was written" in out
    assert sorted(p.name for p in tmp_path.rglob("*")) == before


def test_serve_stays_inside_the_site(tmp_path):
    import urllib.error
    import urllib.request

    site = tmp_path / "site"
    site.mkdir()
    (site / "index.html").write_text("<!DOCTYPE html><title>x</title>")
    (tmp_path / "secret.txt").write_text("secret")
    with serving(str(site)) as url:
        with urllib.request.urlopen(url + "index.html", timeout=10) as response:
            assert response.status == 200
        for bad in ("../secret.txt", "%2e%2e/secret.txt", "..%2fsecret.txt"):
            try:
                with urllib.request.urlopen(url + bad, timeout=10) as response:
                    assert b"secret" not in response.read()
            except urllib.error.HTTPError as exc:
                assert exc.code == 404


def test_serve_watch_rebuilds_on_change(tmp_path):
    import urllib.request

    src = _small_site(tmp_path, routes=("riverside-loop",))
    out = tmp_path / "out"
    with serving(str(out), "--watch", str(src / "site.toml"), "--no-pdf") as url:
        with urllib.request.urlopen(url + "index.html", timeout=10) as response:
            assert b"Small" in response.read()
        (src / "site.toml").write_text((src / "site.toml").read_text().replace('"Small"', '"Renamed"'))
        deadline = time.time() + 90
        page = b""
        while time.time() < deadline and b"Renamed" not in page:
            time.sleep(0.5)
            with urllib.request.urlopen(url + "index.html", timeout=10) as response:
                page = response.read()
        assert b"Renamed" in page


def test_template_digest_ignores_python_byte_code(tmp_path):
    from cardgen.build.cache import templates_digest

    src = _small_site(tmp_path, routes=("riverside-loop",))
    theme = tmp_path / "theme"
    theme.mkdir()
    (theme / "style.css").write_text("body { color: #1a1a1a; }")
    config = load_config(src / "site.toml")
    config = type(config)(**{**config.__dict__, "templates": theme})
    before = templates_digest([config.templates])
    (theme / "__pycache__").mkdir()
    (theme / "__pycache__" / "x.cpython-311.pyc").write_bytes(b"\0\1")
    assert templates_digest([config.templates]) == before
    (theme / "style.css").write_text("body { color: #000000; }")
    assert templates_digest([config.templates]) != before


def test_riders_whose_names_slug_alike_get_their_own_cards(tmp_path):
    src = _small_site(tmp_path, routes=("riverside-loop",))
    text = (
        (src / "site.toml")
        .read_text()
        .replace('name = "A"', 'name = "Ann B"')
        .replace('name = "B"', 'name = "Ann-B"')
    )
    (src / "site.toml").write_text(text)
    out = tmp_path / "out"
    report = build_site(load_config(src / "site.toml"), out, jobs=1)
    cards = sorted(
        p.name for p in (out / "riverside-loop").glob("*.pdf") if not p.name.startswith("all-cards")
    )
    assert cards == ["ann-b-2.pdf", "ann-b.pdf", "coach.pdf"]
    assert report.cards_rendered == 3


def test_changing_one_mid_field_rider_re_renders_only_their_card(tmp_path):
    """Four riders; the second-fastest changes power. Their card and the coach sheet
    are rendered again; the other three cards keep their PDF files (same inode)."""
    src = tmp_path / "src"
    src.mkdir()
    shutil.copy(SAMPLES / "riverside-loop.gpx", src)
    riders = [("A", 260), ("B", 200), ("C", 150), ("D", 120)]

    def write(power_b: int) -> None:
        text = '[event]\nstart = "09:00"\n[[routes]]\ngpx = "riverside-loop.gpx"\n'
        for name, power in riders:
            watts = power_b if name == "B" else power
            text += f'[[riders]]\nname = "{name}"\nvehicle = "road-hoods"\nflat_w = {watts}\ncp_w = {watts + 40}\n'
        (src / "site.toml").write_text(text, encoding="utf-8")

    out = tmp_path / "site"
    write(200)
    first = build_site(load_config(src / "site.toml"), out, jobs=1)
    assert first.cards_rendered == 5
    inodes = {p.name: p.stat().st_ino for p in (out / "riverside-loop").glob("*.pdf")}
    write(205)
    second = build_site(load_config(src / "site.toml"), out, jobs=1)
    assert second.cards_rendered == 2  # B's card and the coach sheet
    after = {p.name: p.stat().st_ino for p in (out / "riverside-loop").glob("*.pdf")}
    assert [n for n in ("a.pdf", "c.pdf", "d.pdf") if after[n] == inodes[n]] == ["a.pdf", "c.pdf", "d.pdf"]
    assert after["b.pdf"] != inodes["b.pdf"]
