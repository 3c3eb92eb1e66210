"""Property-based fuzzing: no input makes cardgen crash, print NaN, report a
negative time or a speed above the vehicle's limit. Example counts are fixed
(derandomised profile in conftest.py) so every run tries the same inputs."""

import math
import shutil
from pathlib import Path
from xml.sax.saxutils import escape, quoteattr

import numpy as np
import pytest
from hypothesis import HealthCheck, find, given, settings
from hypothesis import strategies as st

from cardgen.config.loader import _from_data
from cardgen.errors import CardgenError, ConfigError, GpxError
from cardgen.io.gpx import read_gpx
from cardgen.physics.atmosphere import air_density_isa
from cardgen.physics.steady import power_for_speed, speed_for_power
from cardgen.plan import analyse, make_plan
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.route.terrain import build_terrain

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check

VEHICLES = builtin_vehicles()
SLOW = settings(
    max_examples=120, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture]
)

numberish = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.floats(-200, 200).map(lambda x: f"{x:.6f}"),
    st.text(max_size=8),
    st.sampled_from(["", " ", "1e999", "-0", "0x10", "١٢", "NaN", "nan", "+inf", "12,5"]),
)
attr_value = st.one_of(st.none(), numberish)
text = st.text(max_size=20)


@st.composite
def gpx_documents(draw):
    ns = draw(st.sampled_from(["http://www.topografix.com/GPX/1/1", "http://www.topografix.com/GPX/1/0", ""]))
    parts = [f'<gpx version="1.1"{" xmlns=" + quoteattr(ns) if ns else ""}>']
    for _ in range(draw(st.integers(0, 3))):
        kind = draw(st.sampled_from(["trk", "rte", "wpt", "junk"]))
        if kind == "wpt":
            parts.append(
                f"<wpt lat={quoteattr(draw(numberish))} lon={quoteattr(draw(numberish))}>"
                f"<name>{escape(draw(text))}</name></wpt>"
            )
        elif kind == "junk":
            parts.append(f"<extensions><a>{escape(draw(text))}</a></extensions>")
        else:
            pt = "trkpt" if kind == "trk" else "rtept"
            points = []
            for _ in range(draw(st.integers(0, 25))):
                attrs = "".join(
                    f" {k}={quoteattr(v)}"
                    for k, v in (("lat", draw(attr_value)), ("lon", draw(attr_value)))
                    if v is not None
                )
                ele = draw(st.one_of(st.none(), numberish))
                when = draw(st.one_of(st.none(), text))
                body = ("" if ele is None else f"<ele>{escape(ele)}</ele>") + (
                    "" if when is None else f"<time>{escape(when)}</time>"
                )
                points.append(f"<{pt}{attrs}>{body}</{pt}>")
            inner = "".join(points)
            parts.append(
                f"<trk><name>{escape(draw(text))}</name><trkseg>{inner}</trkseg></trk>"
                if kind == "trk"
                else f"<rte>{inner}</rte>"
            )
    parts.append("</gpx>")
    return "".join(parts)


@given(doc=gpx_documents())
@settings(max_examples=400)
def test_fuzz_gpx_reader_structured(tmp_path_factory, doc):
    path = tmp_path_factory.mktemp("fuzz") / "f.gpx"
    path.write_text(doc, encoding="utf-8")
    try:
        track = read_gpx(path)
    except GpxError as exc:
        assert str(path) in str(exc)
        return
    assert track.points >= 2
    assert np.isfinite(track.lat).all() and (np.abs(track.lat) <= 90).all()
    assert np.isfinite(track.lon).all() and (np.abs(track.lon) <= 180).all()
    assert np.isfinite(track.elevation).all()


@given(data=st.binary(max_size=400))
@settings(max_examples=300)
def test_fuzz_gpx_reader_bytes(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("fuzz") / "b.gpx"
    path.write_bytes(data)
    try:
        read_gpx(path)
    except GpxError:
        pass


@st.composite
def tracks(draw):
    """A random route: headings, step lengths (some zero) and elevations with spikes."""
    n = draw(st.integers(2, 300))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    step = rng.choice([0.0, 1.0, 5.0, 12.0, 40.0], n - 1, p=[0.05, 0.15, 0.4, 0.3, 0.1])
    heading = np.cumsum(rng.normal(0, draw(st.sampled_from([0.01, 0.3, 1.5])), n - 1))
    x = np.concatenate(([0.0], np.cumsum(step * np.sin(heading))))
    y = np.concatenate(([0.0], np.cumsum(step * np.cos(heading))))
    slope = draw(st.floats(-0.4, 0.4))
    ele = 200 + slope * np.concatenate(([0.0], np.cumsum(step))) + rng.normal(0, draw(st.floats(0, 20)), n)
    spikes = rng.random(n) < 0.02
    ele[spikes] += rng.normal(0, 500, spikes.sum())
    lat = -40.5 + np.degrees(y / 6371008.8)
    lon = -140.3 + np.degrees(x / (6371008.8 * math.cos(math.radians(-40.5))))
    return lat, lon, ele


@given(
    route=tracks(),
    vehicle=st.sampled_from(sorted(VEHICLES)),
    wind=st.floats(0, 150 / 3.6),
    wind_from=st.floats(0, 2 * math.pi),
    temperature=st.floats(243.15, 323.15),
)
@SLOW
def test_fuzz_terrain_and_plans(tmp_path_factory, route, vehicle, wind, wind_from, temperature):
    from gpxmaker import write_gpx

    from cardgen.settings import Conditions

    lat, lon, ele = route
    path = write_gpx(tmp_path_factory.mktemp("fuzz") / "r.gpx", lat, lon, ele)
    try:
        track = read_gpx(path)
        terrain = build_terrain(track)
    except GpxError:
        return
    v = VEHICLES[vehicle]
    plan = make_plan(
        analyse(track, terrain),
        rider=Rider.for_vehicle(v),
        conditions=Conditions(wind, wind_from, temperature),
    )
    ride = plan.ride
    assert np.isfinite(ride.speed).all() and (ride.speed >= 0).all()
    assert (ride.speed <= v.max_descent_speed * (1 + 1e-9)).all()
    assert np.isfinite(ride.time).all() and (ride.time > 0).all()
    for value in (plan.totals.time, plan.totals.energy, plan.totals.food_energy):
        assert math.isfinite(value) and value >= 0
    for c in plan.climbs:
        assert all(math.isfinite(x) for x in (c.power_for_target, c.speed_at_effort, c.time, c.climb.score))
        assert c.time > 0
    for d in plan.descents:
        assert math.isfinite(d.coast_speed) and d.coast_speed >= 0
    for t in plan.cues:
        assert 0 <= t.elapsed <= plan.totals.time + 1e-6


@given(
    power=st.floats(0, 2000),
    grade=st.floats(-0.4, 0.4),
    wind_kmh=st.floats(-150, 150),
    mass=st.floats(20, 500),
    altitude=st.floats(-400, 5000),
    cda=st.floats(0.1, 1.5),
    crr=st.floats(0.001, 0.05),
)
@settings(max_examples=500)
def test_fuzz_solver_guard_rails(power, grade, wind_kmh, mass, altitude, cda, crr):
    rho = air_density_isa(altitude)
    common = dict(
        mass=mass, crr=crr, cda=cda, efficiency=0.97, grade=grade, headwind=wind_kmh / 3.6, air_density=rho
    )
    v = speed_for_power(power, **common)
    assert math.isfinite(v) and v >= 0
    if grade >= 0 and wind_kmh >= 0:  # no push from gravity or wind: the rider's power bounds the speed
        assert v * (mass * 9.80665 * crr / math.sqrt(1 + grade**2)) <= power * 0.97 + 1e-6
    back = power_for_speed(v, **common)
    assert math.isfinite(back)
    if power > 0:
        assert back == pytest.approx(power, rel=1e-6, abs=1e-6)


scalar = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(-(10**6), 10**6),
    st.floats(allow_nan=True),
    st.text(max_size=12),
    st.lists(st.integers(), max_size=3),
)
keys = {
    section: list(spec) + ["bogus"]
    for section, spec in __import__("cardgen.config").config.loader.SCHEMA.items()
}


@st.composite
def configs(draw):
    """A valid site (one route, one rider) with fuzzed keys laid over it: some
    examples stay valid and must load, the rest must fail with a ConfigError."""
    data: dict = {"routes": [{"gpx": "route.gpx"}], "riders": [{"name": "A", "vehicle": "road-hoods"}]}
    for section in ("site", "event", "conditions"):
        if draw(st.booleans()):
            data[section] = {
                k: draw(scalar) for k in draw(st.lists(st.sampled_from(keys[section]), max_size=4))
            }
    for section in ("routes", "riders"):
        if draw(st.booleans()):
            for k in draw(st.lists(st.sampled_from(keys[section]), max_size=3)):
                data[section][0][k] = draw(scalar)
        if draw(st.integers(0, 9)) == 0:
            data[section] = draw(scalar)
    if draw(st.booleans()):
        data[draw(st.text(max_size=5))] = draw(scalar)
    return data


@given(data=configs())
@settings(max_examples=400)
def test_fuzz_config_loader(tmp_path_factory, data):
    folder = tmp_path_factory.mktemp("cfg")
    shutil.copy(
        Path(__file__).resolve().parents[1] / "sample_routes" / "riverside-loop.gpx", folder / "route.gpx"
    )
    try:
        config = _from_data(data, folder / "site.toml", "", folder)
    except ConfigError as exc:
        # every message names the file at fault: site.toml, or one it names beside it
        assert str(folder) in str(exc)
        return
    except CardgenError as exc:  # pragma: no cover - would be a wrong exception class
        raise AssertionError(f"not a ConfigError: {exc!r}") from exc
    assert config.routes and config.riders


def test_the_fuzzer_also_makes_configs_that_load(tmp_path):
    """The fuzz above reaches its last assertion: some of its examples load."""
    shutil.copy(
        Path(__file__).resolve().parents[1] / "sample_routes" / "riverside-loop.gpx", tmp_path / "route.gpx"
    )

    def loads(data):
        try:
            _from_data(data, tmp_path / "site.toml", "", tmp_path)
        except ConfigError:
            return False
        return True

    example = find(configs(), lambda d: loads(d) and len(d) > 2, settings=settings(max_examples=400))
    assert loads(example)
