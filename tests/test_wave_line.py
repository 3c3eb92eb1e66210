"""The index's start line names each wave's first and last start, riders and interval."""

from __future__ import annotations

from datetime import date, datetime, time
from types import SimpleNamespace

from cardgen.plan.starts import Starts, WaveStarts
from cardgen.render.pages import site_context


def _config():
    return SimpleNamespace(
        day=date(2027, 6, 12),
        start=None,
        start_interval=0.0,
        contact="",
        emergency="",
        title="t",
        units="metric",
        large_print=False,
        card_size="A5",
    )


def test_each_wave_with_its_interval():
    """Four waves of a 300-rider event as `check` counted them: the index said
    "wave Long 07:00:00–07:31:00 (63 riders)", leaving the reader to work out the
    30 s between riders from 31 min over 62 gaps."""
    day = date(2027, 6, 12)
    waves = (
        WaveStarts(
            "Adaptive", 42, datetime.combine(day, time(6, 45)), datetime.combine(day, time(7, 26)), 60.0
        ),
        WaveStarts("Long", 63, datetime.combine(day, time(7, 0)), datetime.combine(day, time(7, 31)), 30.0),
        WaveStarts(
            "Forty", 95, datetime.combine(day, time(9, 30)), datetime.combine(day, time(9, 53, 30)), 15.0
        ),
        WaveStarts(
            "Together", 3, datetime.combine(day, time(10, 0)), datetime.combine(day, time(10, 0)), 0.0
        ),
        WaveStarts("Alone", 1, datetime.combine(day, time(11, 0)), datetime.combine(day, time(11, 0)), 90.0),
    )
    starts = Starts({}, waves, True, 0)
    line = site_context(_config(), starts)["event_line"]
    assert line == (
        "Start Saturday 12 June 2027: wave Adaptive 06:45:00–07:26:00 (42 riders, 1 min apart); "
        "wave Long 07:00:00–07:31:00 (63 riders, 30 s apart); "
        "wave Forty 09:30:00–09:53:30 (95 riders, 15 s apart); "
        "wave Together 10:00:00 (3 riders, together); wave Alone 11:00:00 (1 rider)"
    )
