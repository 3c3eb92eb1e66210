"""The day sheet's rows as text, from a point's day built by hand (no build)."""

from __future__ import annotations

from datetime import datetime

from cardgen.plan.day import PointDay
from cardgen.render.day import day_csv_text, day_rows


def _point() -> PointDay:
    at = datetime(2027, 6, 12, 7, 0)
    return PointDay(
        name="Fenwold Bridge",
        kind="checkpoint",
        distance=20990.0,
        opens=datetime(2027, 6, 12, 7, 12),
        closes=datetime(2027, 6, 12, 11, 13),
        riders=4,
        first=datetime(2027, 6, 12, 7, 27, 34),
        last=datetime(2027, 6, 12, 7, 52, 36),
        quarters=((at.replace(minute=15), 1), (at.replace(minute=30), 2), (at.replace(minute=45), 1)),
        stop=300.0,
        carbs_g=200.0,
        fluid_l=2.0,
        last_leaves=datetime(2027, 6, 12, 7, 57, 36),
        sweep=datetime(2027, 6, 12, 9, 27, 27),
        people=4,
    )


def test_quarter_hours_print_without_seconds_when_starts_carry_them():
    """Starts 15 s apart print every arrival to the second, but a quarter hour has none:
    the CSV read "07:15:00=1; 07:30:00=2" where docs/contracts.md promises "07:15=1"
    (seen on a 300-rider event with waves 15 and 30 s apart)."""
    (row,) = day_rows("lakes-40", [_point()], to_second=True)
    assert row["first"] == "07:27:34" and row["last_leaves"] == "07:57:36"  # arrivals keep their seconds
    assert [q for q, _ in row["per_15_min"]] == ["07:15", "07:30", "07:45"]
    assert ",07:15=1; 07:30=2; 07:45=1," in day_csv_text([row])
    (row,) = day_rows("lakes-40", [_point()], to_second=False)
    assert row["first"] == "07:28" and [q for q, _ in row["per_15_min"]] == ["07:15", "07:30", "07:45"]


def test_stock_rounds_up_to_what_is_needed():
    """What a feed point must stock rounds up (a need, as the cards round a battery's):
    Python's round, which the sheet used, is half to even and rounds down below it, so
    312.5 g printed 312 and 4.04 L printed 4.0, under the sum of the riders' plans."""
    import dataclasses

    (row,) = day_rows(
        "lakes-40", [dataclasses.replace(_point(), carbs_g=312.5, fluid_l=4.04)], to_second=False
    )
    assert row["carbs_g"] == 313 and row["fluid_l"] == 4.1
    (row,) = day_rows(
        "lakes-40", [dataclasses.replace(_point(), carbs_g=312.0, fluid_l=4.0)], to_second=False
    )
    assert row["carbs_g"] == 312 and row["fluid_l"] == 4.0  # a whole amount stays as it is
    (row,) = day_rows("lakes-40", [dataclasses.replace(_point(), carbs_g=0.0, fluid_l=0.0)], to_second=False)
    assert row["carbs_g"] == 0 and row["fluid_l"] == 0.0
