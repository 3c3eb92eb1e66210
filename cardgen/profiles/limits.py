"""One table of the numbers a user may give, with their allowed ranges.

The command line, the site configuration and the profile files all read their limits
here, so a range is declared once. Beyond a range the model is not trustworthy (or
the value is a typo); inside it every computation stays finite.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from cardgen.units import G0, J_PER_WH, KMH_PER_MS


@dataclass(frozen=True)
class Limit:
    """The allowed range of one input, in the unit the user writes it in.

    ``low``/``high`` in ``unit``; ``to_si`` converts a given value to SI; ``help`` says
    what it is.
    """

    low: float
    high: float
    unit: str = ""
    to_si: float = 1.0
    help: str = ""

    def problem(self, value: object) -> str | None:
        """None when ``value`` is a finite number inside the range, else the reason."""
        if isinstance(value, bool) or not isinstance(value, int | float):
            return f"must be a number, not {value!r}"
        try:
            finite = math.isfinite(value)
        except OverflowError:  # an integer too large for a float
            finite = False
        if not finite:
            return "must be a finite number"
        if not self.low <= value <= self.high:
            unit = f" {self.unit}" if self.unit else ""
            return f"= {value:g}{unit} is outside {self.low:g}…{self.high:g}{unit}"
        return None


#: Every number a user can give, by the key it has in files (and the CLI's name).
LIMITS: dict[str, Limit] = {
    # the rider
    "cp_w": Limit(10, 700, "W", help="critical power"),
    "w_prime_kj": Limit(0.5, 60, "kJ", 1000.0, "work capacity above CP"),
    "flat_w": Limit(1, 2000, "W", help="power on flats"),
    "climb_w": Limit(
        1,
        2000,
        "W",
        help="power on climbs: the most the pacing plan asks on any climb (unset: up to CP × (1 + `climb_share`))",
    ),
    "climb_share": Limit(0, 0.5, help="largest share above CP on climbs"),
    "target_kmh": Limit(1, 60, "km/h", 1 / KMH_PER_MS, "climbing speed for the watts column"),
    "assist_between_climbs": Limit(0, 10, help="assist level away from climbs (0 = off)"),
    "flat_kmh": Limit(3, 60, "km/h", 1 / KMH_PER_MS, "average speed on the flat, instead of flat_w"),
    "body_mass_kg": Limit(20, 250, "kg", help="the rider's own mass (replaces the vehicle's rider mass)"),
    "load_kg": Limit(0, 300, "kg", help="luggage or cargo carried, added to the vehicle"),
    # the vehicle
    "vehicle_mass_kg": Limit(0, 400, "kg", help="vehicle and its load"),
    "rider_mass_kg": Limit(0, 400, "kg", help="rider(s)"),
    "mass_kg": Limit(20, 600, "kg", help="total moving mass, rider + vehicle"),
    "cda_m2": Limit(0.05, 3, "m²", help="drag area"),
    "crr": Limit(0.0005, 0.1, help="rolling-resistance coefficient"),
    "efficiency": Limit(0.5, 1, help="drivetrain efficiency"),
    "wheel_inertia_kg": Limit(0, 20, "kg", help="I/r² of all wheels"),
    "gross_efficiency": Limit(0.05, 0.35, help="mechanical work / food energy"),
    "typical_power_w": Limit(1, 2000, "W", help="a steady all-day effort"),
    "climb_speed_kmh": Limit(1, 60, "km/h", 1 / KMH_PER_MS, "default target speed on climbs"),
    "max_descent_speed_kmh": Limit(5, 120, "km/h", 1 / KMH_PER_MS, "speed cap on descents"),
    "curve_accel_g": Limit(0.05, 1, "g", G0, "lateral acceleration in curves"),
    # the motor
    "rated_power_w": Limit(1, 5000, "W", help="maximum continuous rated power"),
    "peak_power_w": Limit(1, 5000, "W", help="peak motor power"),
    "cutoff_kmh": Limit(1, 80, "km/h", 1 / KMH_PER_MS, "speed where assistance ends"),
    "taper_kmh": Limit(0, 20, "km/h", 1 / KMH_PER_MS, "speed span over which assistance fades"),
    "drive_efficiency": Limit(0.3, 1, help="battery to wheel"),
    "battery_wh": Limit(1, 10000, "Wh", J_PER_WH, "battery capacity"),
    "usable_share": Limit(0.1, 1, help="share of the battery that can be drawn"),
    # the event and the weather
    "start_interval_min": Limit(0, 120, "min", 60.0, "time between riders' starts"),
    "bib": Limit(1, 99999, help="the rider's number"),
    "checkpoint_margin_min": Limit(0, 240, "min", 60.0, "margin around planned arrivals"),
    "stop_min": Limit(0, 240, "min", 60.0, "planned stop at a checkpoint"),
    "min_kmh": Limit(1, 60, "km/h", 1 / KMH_PER_MS, "slowest average speed a checkpoint allows"),
    "max_kmh": Limit(1, 80, "km/h", 1 / KMH_PER_MS, "fastest average speed a checkpoint allows"),
    "wind_kmh": Limit(0, 150, "km/h", 1 / KMH_PER_MS, "wind speed"),
    "wind_from_deg": Limit(0, 360, "°", help="where the wind comes from, clockwise from north"),
    "temperature_c": Limit(-30, 50, "°C", help="air temperature"),
    # the analysis commands
    "power_w": Limit(-3000, 3000, "W", help="rider power at the pedals"),
    "route_power_w": Limit(1, 2000, "W", help="rider power held along the route"),
    "speed_kmh": Limit(0, 150, "km/h", 1 / KMH_PER_MS, "ground speed"),
    "grade_pct": Limit(-50, 50, "%", 0.01, "road grade"),
    "headwind_kmh": Limit(-150, 150, "km/h", 1 / KMH_PER_MS, "wind against the direction of travel"),
    "altitude_m": Limit(-1000, 9000, "m", help="altitude for the standard atmosphere"),
    "air_density_kg_m3": Limit(0.3, 1.6, "kg/m³", help="air density"),
    "jobs": Limit(1, 64, help="worker processes"),
}
