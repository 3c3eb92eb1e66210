"""The "Watch for" box stays short however many walking stretches a plan has."""

from __future__ import annotations

from types import SimpleNamespace

from cardgen.plan.model import Notice
from cardgen.render.pages import WALK_PLACES, watch_list


def _walk(at: float, length: float) -> Notice:
    return Notice("walk", "warning", (("length", length), ("speed", 1.4)), at=at)


def test_walking_names_the_longest_stretches_and_counts_the_rest():
    # 40 stretches of 50 m every km, and three long ones: 900 m at 5 km, 700 m at 20 km, 800 m at 30 km
    walks = [_walk(1000.0 * k + 500.0, 50.0) for k in range(40)]
    walks += [_walk(5000.0, 900.0), _walk(20000.0, 700.0), _walk(30000.0, 800.0)]
    plan = SimpleNamespace(warnings=walks, climbs=[], descents=[])
    items = [i["text"] for i in watch_list(plan, "metric") if i["text"].startswith("walking")]
    assert WALK_PLACES == 3 and len(items) == 1
    # worked by hand: the three longest in route order; 43 stretches, 2000 + 2400 m = 4.4 km
    assert items[0] == (
        "walking may be needed: 900 m from 5.0 km, 700 m from 20.0 km, 800 m from 30.0 km "
        "(43 stretches, 4.4 km in all, in the tables)"
    )


def test_condensed_notes_put_many_walking_stretches_in_one_line():
    from cardgen.render.pages import warnings_brief

    walks = [_walk(1000.0 * k, 50.0) for k in range(10)] + [_walk(20000.0, 300.0)]
    lines = warnings_brief(walks, "metric")
    # worked by hand: 11 stretches, 10 × 50 m + 300 m = 800 m = 0.8 km; 1.4 m/s = 5.04 km/h → 5.0
    assert lines == [
        "11 stretches below 5.0 km/h away from the climbs, 0.8 km in all, the longest 300 m from 20.0 km: "
        "hard to balance on two wheels; walking may be needed"
    ]
    # one stretch keeps its own words
    assert warnings_brief(walks[:1], "metric") == [
        "below 5.0 km/h for about 50 m: hard to balance on two wheels; walking may be needed"
    ]
