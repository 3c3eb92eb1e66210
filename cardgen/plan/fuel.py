"""Food and fluids per leg between feed points: time, food energy, and a guide to
carbohydrate and fluid per hour.

Carbohydrate during exercise, by the duration of the whole ride (Thomas, Erdman &
Burke 2016, joint position statement of the Academy of Nutrition and Dietetics,
Dietitians of Canada and the American College of Sports Medicine, "Nutrition and
Athletic Performance", Med Sci Sports Exerc 48(3):543–568, Table 4): under about
45 min none is needed; 45–75 min small amounts (or a mouth rinse); 1–2.5 h
30–60 g/h; longer than 2.5–3 h up to 90 g/h.

Fluids: sweat losses of 0.4 to 1.8 L/h are usual, and the aim is to lose no more than
about 2 % of body mass; a starting point of 0.4–0.8 L/h is adjusted to the person and
the weather (Sawka et al. 2007, ACSM position stand "Exercise and Fluid Replacement",
Med Sci Sports Exerc 39(2):377–390; the 0.4–0.8 L/h figure from memory of that stand).
How cardgen splits that range by air temperature (:data:`FLUID_BANDS`) is its own
choice: common practice, no published source.

Both guides are for one person (the position statements speak of an athlete): on a
vehicle with more riders (a tandem, ``Vehicle.riders``) each of them eats and drinks
by the guide, so a leg's carbohydrate and fluid are per person and a feed stocks
them once per person (:attr:`Leg.people`). The leg's food energy is the whole
vehicle's: its riders' work together.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from cardgen.plan.model import Plan
from cardgen.units import S_PER_H

#: (longest whole-ride duration [h], carbohydrate g/h low, high), in order. The 45–75 min
#: band's "small amounts" is the statement's; its 0–30 g/h is cardgen's own figure
#: (common practice, no published source), and the card says so.
CARB_BANDS = ((0.75, 0.0, 0.0), (1.25, 0.0, 30.0), (2.5, 30.0, 60.0), (float("inf"), 60.0, 90.0))
#: (air temperature up to [°C], fluid L/h low, high): the published 0.4–0.8 L/h split
#: by temperature (cardgen's own banding; see the module notes).
FLUID_BANDS = ((15.0, 0.4, 0.6), (25.0, 0.5, 0.7), (float("inf"), 0.6, 0.8))
#: Without a configured temperature, the middle band.
DEFAULT_TEMPERATURE_C = 20.0


@dataclass(frozen=True)
class Leg:
    """One leg: from ``start`` to ``end`` [m], ending at ``to`` (a feed or the finish);
    riding ``time`` [s], ``food_energy`` [J] metabolic, all the vehicle's riders
    together; ``carbs`` and ``fluid`` are (low, high) totals for the leg in g and L
    for each person, and ``people`` how many ride the vehicle (2 on a tandem)."""

    start: float
    end: float
    to: str
    time: float
    food_energy: float
    carbs: tuple[float, float] | None  # None where the leg cannot be finished
    fluid: tuple[float, float] | None
    people: int = 1

    def stock(self) -> tuple[float, float] | None:
        """Carbohydrate [g] and fluid [L] for everyone on the vehicle over the leg, at
        the top of each guide (what a feed stocks for them); None where the leg cannot
        be finished."""
        if self.carbs is None or self.fluid is None:
            return None
        return self.carbs[1] * self.people, self.fluid[1] * self.people


def carb_rate(ride_hours: float) -> tuple[float, float]:
    """Carbohydrate [g/h] (low, high) for a ride of this many hours."""
    return next((low, high) for limit, low, high in CARB_BANDS if ride_hours <= limit)


def fluid_rate(temperature_c: float | None) -> tuple[float, float]:
    """Fluid [L/h] (low, high) at this air temperature."""
    t = DEFAULT_TEMPERATURE_C if temperature_c is None else temperature_c
    return next((low, high) for limit, low, high in FLUID_BANDS if t <= limit)


def legs(plan: Plan, feeds: Sequence[tuple[float, str]], temperature_c: float | None) -> list[Leg]:
    """The legs between the feed points ``feeds`` ((where [m], name)) and the finish."""
    terrain, ride = plan.terrain, plan.ride
    ends = sorted((d, n) for d, n in feeds if 0 < d < terrain.length) + [(terrain.length, "Finish")]
    total = plan.finish_elapsed / S_PER_H
    carbs = carb_rate(total if np.isfinite(total) else float("inf"))
    fluid = fluid_rate(temperature_c)
    finite = np.isfinite(ride.time)
    done = np.where(finite, np.maximum(ride.rider_power, 0) * np.where(finite, ride.time, 0.0), 0.0)
    work = np.concatenate(([0.0], np.cumsum(done)))
    out, start = [], 0.0
    for end, name in ends:
        seconds = float(
            np.interp(end, terrain.distance, ride.elapsed) - np.interp(start, terrain.distance, ride.elapsed)
        )
        joules = float(np.interp(end, terrain.distance, work) - np.interp(start, terrain.distance, work))
        hours = seconds / S_PER_H
        known = bool(np.isfinite(hours))
        out.append(
            Leg(
                start,
                end,
                name,
                seconds,
                joules / plan.rider.vehicle.gross_efficiency,
                (carbs[0] * hours, carbs[1] * hours) if known else None,
                (fluid[0] * hours, fluid[1] * hours) if known else None,
                plan.rider.vehicle.riders,
            )
        )
        start = end
    return out
