"""Starts and waves, computed once per event (cardgen.plan.starts): one start line per
wave across routes, one start per rider, and agreement with a rule-by-rule reference
written out here by scanning every wave and rider (the quadratic way the rules read)."""

from __future__ import annotations

import shutil
from datetime import date, datetime, timedelta
from pathlib import Path

import pytest

from cardgen.cli import main
from cardgen.config import load_config
from cardgen.errors import ConfigError
from cardgen.plan.starts import event_starts

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
ROUTES = ("riverside-loop", "hill-loop", "accessible-path")


def _site(tmp_path, waves: str, riders: str, event: str = 'start = "08:00"\nstart_interval_min = 1\n'):
    for name in ROUTES:
        shutil.copy(SAMPLES / f"{name}.gpx", tmp_path)
    text = f"[event]\n{event}" + "".join(f'[[routes]]\ngpx = "{n}.gpx"\n' for n in ROUTES) + waves + riders
    (tmp_path / "site.toml").write_text(text, encoding="utf-8")
    return load_config(tmp_path / "site.toml")


def _riders(count: int, routes=lambda i: [ROUTES[i % 3]]) -> str:
    return "".join(
        f'[[riders]]\nname = "R{i}"\nvehicle = "road-hoods"\nroutes = {routes(i)!r}\n'.replace("'", '"')
        for i in range(count)
    )


ONE_LINE = '[[waves]]\nname = "Main"\nstart = "06:45"\ninterval_min = 0.5\nroutes = {}\n'.format(
    str(list(ROUTES)).replace("'", '"')
)


def test_a_wave_is_one_start_line_across_routes_half_a_minute_apart(tmp_path, capsys):
    config = _site(tmp_path, ONE_LINE, _riders(6))
    starts = event_starts(config)
    got = [starts.of(i, i % 3) for i in range(6)]
    # six riders on three routes leave one after another: 06:45:00, 06:45:30, … 06:47:30
    assert [s.at.strftime("%H:%M:%S") for s in got] == [
        "06:45:00",
        "06:45:30",
        "06:46:00",
        "06:46:30",
        "06:47:00",
        "06:47:30",
    ]
    assert {s.wave for s in got} == {"Main"} and starts.to_second
    assert main(["check", str(config.source)]) == 0
    assert "wave Main: 6 starts, first 06:45:00, last 06:47:30" in capsys.readouterr().out


def test_a_rider_on_several_routes_has_one_start_in_the_wave(tmp_path):
    config = _site(tmp_path, ONE_LINE, _riders(3, routes=lambda i: list(ROUTES) if i == 1 else [ROUTES[0]]))
    starts = event_starts(config)
    assert {starts.of(1, k).at for k in range(3)} == {datetime(2000, 1, 1, 6, 45, 30)}
    assert starts.of(2, 0).at == datetime(2000, 1, 1, 6, 46)  # the next place, not the fourth
    assert starts.waves[0].riders == 3 and starts.waves[0].last == datetime(2000, 1, 1, 6, 46)


def test_a_wave_naming_neither_riders_nor_routes_is_an_error_with_its_line(tmp_path):
    with pytest.raises(ConfigError) as caught:
        _site(tmp_path, '[[waves]]\nname = "Everyone"\nstart = "07:00"\n', _riders(2))
    assert "line" in str(caught.value) and "names neither riders nor routes" in str(caught.value)


def _reference(config):
    """The rules read literally, scanning every wave and every earlier rider."""
    day = config.day or (config.start.date() if config.start else date(2000, 1, 1))
    out = {}
    for k, route in enumerate(config.routes):
        name = route.name or route.gpx.stem
        for i, rc in enumerate(config.riders):
            if not rc.rides(route, name):
                continue
            if rc.start is not None:
                out[(i, k)] = (datetime.combine(day, rc.start), None)
                continue

            def wave_of(j, k2):
                other, r2 = config.riders[j], config.routes[k2]
                for wave in config.waves:
                    names = {r2.gpx.name, r2.gpx.stem, r2.name}
                    if other.rider.name in wave.riders or names & set(wave.routes):
                        return wave
                return None

            wave = wave_of(i, k)
            if wave is not None:
                earlier = {
                    j
                    for j in range(i)
                    for k2, r2 in enumerate(config.routes)
                    if config.riders[j].start is None
                    and config.riders[j].rides(r2, r2.name or r2.gpx.stem)
                    and wave_of(j, k2) is wave
                }
                at = datetime.combine(day, wave.start) + timedelta(seconds=len(earlier) * wave.interval)
                out[(i, k)] = (at, wave.name)
            elif config.start is not None:
                out[(i, k)] = (config.start + timedelta(seconds=i * config.start_interval), None)
    return out


def test_starts_agree_with_the_rules_read_literally(tmp_path):
    waves = (
        '[[waves]]\nname = "Adaptive"\nstart = "07:30"\ninterval_min = 2\nriders = ["R4", "R7"]\n'
        '[[waves]]\nname = "Hills"\nstart = "08:10"\ninterval_min = 0.25\nroutes = ["hill-loop"]\n'
    )
    riders = _riders(12, routes=lambda i: [ROUTES[i % 3]] if i % 4 else [ROUTES[0], ROUTES[1]])
    riders = riders.replace('name = "R9"\n', 'name = "R9"\nstart = "10:05"\n')
    config = _site(tmp_path, waves, riders)
    starts = event_starts(config)
    want = _reference(config)
    assert {key: (s.at, s.wave) for key, s in starts.by_entry.items()} == want
    assert any(w == "Hills" for _, w in want.values()) and any(w is None for _, w in want.values())


def test_every_rider_of_a_route_has_an_entry_even_without_any_start_time(tmp_path):
    config = _site(tmp_path, "", _riders(4), event="")
    starts = event_starts(config)
    assert sorted(starts.by_entry) == [(0, 0), (1, 1), (2, 2), (3, 0)]
    assert all(s.at is None and s.wave is None for s in starts.by_entry.values())


def test_the_work_of_the_starts_grows_linearly_with_the_riders(tmp_path, monkeypatch, capsys):
    """Bounded work (issue: 10,000 entrants and one wave never finished): count how
    often a rider is matched against a route while `check` works out every start, for
    N and 2N riders in one wave. The count, not the time, is the bound: it must double,
    not quadruple, when the riders double. (Timings are in bench/bench_starts.py.)"""
    from cardgen.settings import RiderConfig

    calls = [0]
    rides = RiderConfig.rides

    def counted(self, route, name):
        calls[0] += 1
        return rides(self, route, name)

    monkeypatch.setattr(RiderConfig, "rides", counted)
    counts = []
    for n in (150, 300):
        folder = tmp_path / str(n)
        folder.mkdir()
        config = _site(folder, ONE_LINE, _riders(n))
        calls[0] = 0
        assert main(["check", str(config.source)]) == 0
        counts.append(calls[0])
    capsys.readouterr()
    # linear: twice the riders, at most twice the matches (and a little for fixed work)
    assert 0 < counts[1] <= 2.1 * counts[0], counts
