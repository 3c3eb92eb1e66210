"""The straight-piece elevation fit: each step against an independent least-squares
computation (numpy.linalg.lstsq), the noise model against a simulation, and clean
step profiles against the generator's own geometry."""

import numpy as np
import pytest

from cardgen.route import profile_fit as pf
from cardgen.route.terrain import remove_spikes, smooth_elevation


def _rss(design, y):
    coef = np.linalg.lstsq(design, y, rcond=None)[0]
    return float(np.sum((y - design @ coef) ** 2))


def test_a_knot_cuts_what_least_squares_says():
    """The cut of one knot at every node, against the sums of squares of the line and
    of the line with a hinge, each fitted by numpy.linalg.lstsq."""
    rng = np.random.default_rng(3)
    y = np.cumsum(rng.normal(0.1, 1.0, 40))
    x = np.arange(y.size, dtype=float)
    line = np.column_stack((np.ones_like(x), x))
    gains = pf._hinge_gains(y)
    for t in range(1, y.size - 1):
        hinge = np.column_stack((line, np.clip(x - t, 0.0, None)))
        assert gains[t] == pytest.approx(_rss(line, y) - _rss(hinge, y), rel=1e-7, abs=1e-9)
    assert gains[0] == gains[-1] == 0.0


def test_linear_spline_is_the_least_squares_fit_on_its_knots():
    """Against numpy.linalg.lstsq on the hat functions written out (np.interp of each
    unit vector), with knots on and between nodes."""
    rng = np.random.default_rng(4)
    y = rng.normal(0.0, 1.0, 60).cumsum()
    x = np.arange(y.size, dtype=float)
    for knots in (np.array([0, 7, 20, 41, 59]), np.array([0.0, 7.4, 20.0, 40.6, 59.0])):
        hats = np.column_stack([np.interp(x, knots, np.eye(knots.size)[j]) for j in range(knots.size)])
        expected = hats @ np.linalg.lstsq(hats, y, rcond=None)[0]
        np.testing.assert_allclose(pf.fit_linear_spline(y, knots), expected, atol=1e-9)


@pytest.mark.parametrize("offset", [0.0, 0.3, 0.5])
def test_clean_steps_in_grade_come_back_unchanged(offset):
    """Flat, 500 m at 10 %, 300 m at 15 %, −6 %, flat (steps between nodes too): every
    node within 10 cm of the drawn profile, every grade of a whole step within 0.05
    points, the gain that of the drawn profile at the nodes to 0.1 %."""
    step = 10.0
    x = (np.arange(0, 401) + offset) * step
    knots_d = [0, 1000, 1500, 1800, 2300, 4010]
    knots_e = [100, 100, 150, 195, 165, 165]
    drawn = np.interp(x, knots_d, knots_e)
    fit = smooth_elevation(drawn, step)
    assert np.max(np.abs(fit - drawn)) <= 0.1
    steps = np.diff(fit) / step
    drawn_steps = np.diff(drawn) / step
    whole = np.abs(np.diff(drawn_steps, prepend=drawn_steps[0])) < 1e-12  # not at a knot
    assert np.max(np.abs(steps[whole] - drawn_steps[whole])) <= 0.0005
    gain = np.sum(np.clip(np.diff(fit), 0, None))
    assert gain == pytest.approx(np.sum(np.clip(np.diff(drawn), 0, None)), rel=0.001)  # 95 m at the nodes


def test_noise_at_the_points_is_measured():
    """White noise σ = 2.5 m at uneven spacing (5–25 m) is measured within 10 %; on a
    clean profile with steps in grade the floor is returned."""
    rng = np.random.default_rng(9)
    d = np.cumsum(rng.uniform(5.0, 25.0, 3000))
    drawn = np.interp(d, [0, 10000, 20000, d[-1]], [0, 0, 600, 600])
    assert pf.point_noise(d, drawn + rng.normal(0, 2.5, d.size)) == pytest.approx(2.5, rel=0.1)
    assert pf.point_noise(d, drawn) == pf.NOISE_FLOOR


@pytest.mark.parametrize("spacing", [5.0, 10.0, 20.0])
def test_grid_noise_moves_a_grade_as_the_resampled_noise_does(spacing):
    """Simulation: white noise σ = 2.5 m at points ``spacing`` apart, spikes removed and
    resampled to a 10 m grid; the spread of least-squares grades over 31 nodes matches
    the standard error σ·√(12/(N(N² − 1)))/Δ (ordinary least squares) with σ from
    grid_noise within 25 % (for points closer than the grid, not more than 5 %
    over it: the fit may only take noise as larger than it is)."""
    rng = np.random.default_rng(int(spacing))
    d = np.arange(0.0, 200000.0, spacing)
    grid = np.arange(0.0, d[-1], 10.0)
    raw = np.interp(grid, d, remove_spikes(rng.normal(0.0, 2.5, d.size)))
    n = 31
    xs = np.arange(n) - (n - 1) / 2
    slopes = np.lib.stride_tricks.sliding_window_view(raw, n) @ (xs / np.sum(xs * xs)) / 10.0
    sigma = pf.grid_noise(2.5, spacing, 10.0)
    expected = sigma * np.sqrt(12.0 / (n * (n * n - 1))) / 10.0
    assert expected * 0.75 <= np.std(slopes) <= expected * (1.05 if spacing < 10.0 else 1.25)


@pytest.mark.parametrize("seed", range(3))
def test_noise_alone_makes_no_knot(seed):
    """10 km of flat road with σ = 3 m of white noise at every node: the fit is one
    straight line (no knot the noise alone could explain)."""
    e = 100 + np.random.default_rng(seed).normal(0, 3.0, 1001)
    fit = smooth_elevation(e, 10.0, noise=3.0)
    assert np.ptp(np.diff(fit)) < 1e-9


def test_a_knots_range_holds_its_true_place_ninety_nine_times_in_a_hundred():
    """A 300 m wall of 15 % between flats, its steps between nodes, under σ = 2.5 m of
    white noise, 100 fixed seeds: the 99 % range of each of its two knots (Hinkley
    1971, profile likelihood) holds the drawn place in at least 97 % of the 200 cases
    (measured: 99.5 %; with χ² at 95 %, 94.5 %)."""
    x = np.arange(231) + 0.37
    drawn_knots = (100.2 - 0.37, 130.7 - 0.37)  # [node]
    held = []
    for seed in range(100):
        e = np.interp(x, [0, 100.2, 130.7, 231], [0, 0, 45.75, 45.75])
        fit = pf.fit_profile(e + np.random.default_rng(seed).normal(0, 2.5, x.size), 10.0, 2.5)
        for place in drawn_knots:
            j = int(np.argmin(np.abs(fit.knots - place)))
            held.append(fit.knot_low[j] <= place <= fit.knot_high[j])
    assert np.mean(held) >= 0.97


# -- a bound on the fit's work --------------------------------------------------------


def _rollers(km: float) -> np.ndarray:
    """2 m rollers 200 m long on a 10 m grid: two knots every 200 m."""
    d = np.arange(0.0, km * 1000.0 + 1.0, 10.0)
    phase = (d % 200.0) / 200.0
    return 50.0 + 2.0 * np.where(phase < 0.5, 2.0 * phase, 2.0 - 2.0 * phase)


def test_the_fit_stops_at_max_knots(monkeypatch):
    """The fit's work grows with its knots; past MAX_KNOTS it stops with RoughProfile
    instead of running for minutes (10,000 km of such rollers had no bound)."""
    e = _rollers(20.0)
    fitted = pf.fit_profile(e, 10.0, pf.NOISE_FLOOR)
    assert 150 <= fitted.knots.size <= 250  # about two knots per roller, 100 rollers
    monkeypatch.setattr(pf, "MAX_KNOTS", 100)
    with pytest.raises(pf.RoughProfile):
        pf.fit_profile(e, 10.0, pf.NOISE_FLOOR)


def test_a_route_past_max_knots_is_one_clear_message(monkeypatch, tmp_path, cli):
    from gpxmaker import profile_gpx

    e = _rollers(20.0)
    gpx = profile_gpx(tmp_path / "rollers.gpx", np.arange(e.size) * 10.0, e)
    monkeypatch.setattr(pf, "MAX_KNOTS", 100)
    code, out, err = cli("route", str(gpx))
    assert code == 1 and out == ""
    lines = err.strip().splitlines()
    assert (
        len(lines) == 1 and "rollers.gpx" in lines[0] and "more than 100 places over 20 km" in lines[0]
    ), err
    assert "Traceback" not in err
