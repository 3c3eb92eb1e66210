"""Riders: critical power, W′ and the efforts they ride at, on a vehicle."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

from cardgen.errors import VehicleError
from cardgen.physics.assist import rider_power_for_speed
from cardgen.physics.forces import STILL_AIR
from cardgen.profiles.limits import LIMITS
from cardgen.profiles.motors import find_motor
from cardgen.profiles.vehicles import Vehicle
from cardgen.units import KMH_PER_MS

#: An all-day effort is held at about this share of critical power: common practice,
#: no published source. The one link between a rider's flat effort and their CP: the
#: default CP is the flat power (given in watts, derived from a speed, or the
#: vehicle's typical power) divided by this share.
ALL_DAY_SHARE_OF_CP = 0.70
#: Default W′ as seconds of CP: from memory (recreational riders ≈ 10–20 kJ on the
#: legs, ≈ 5–8 kJ on the arms), no published source checked.
W_PRIME_SECONDS_OF_CP = 70.0
#: Assist level away from climbs when the rider names none (vehicles with a motor).
DEFAULT_ASSIST_LEVEL = 1
#: Default cap on climbing power, as a share above CP.
CLIMB_SHARE_ABOVE_CP = 0.10
#: Pacing styles (:mod:`cardgen.plan.pacing`): "best" spends W′ where it saves the most
#: time; "steady" never rides above CP.
PACING_STYLES = ("best", "steady")


@dataclass(frozen=True)
class Rider:
    """A rider on a vehicle, with a chosen effort.

    Attributes
    ----------
    name : str
    vehicle : Vehicle
    cp : float [W] critical power
    w_prime : float [J] work capacity above CP
    flat_power : float [W] held on flats (at most CP)
    climb_power : float [W] wanted on climbs; used up to ``cp·(1 + climb_share)``
    climb_share : float [-] largest share above CP allowed on climbs
    target_speed : float [m/s] climbing speed for the "watts to hold it" column
    assist_between_climbs : int  assist level away from climbs (vehicles with a motor)
    effort_given : bool  ``flat_power`` is the rider's own setting (flat_w, flat_kmh);
        else the plan chooses the day's effort from the ride's length
    climb_given : bool  ``climb_power`` is the rider's own setting (climb_w): the
        pacing plan never asks for more on any climb
    pacing : str  a pacing style of :data:`PACING_STYLES`, or "" for the vehicle's
        default (:attr:`pacing_style`)

    Notes
    -----
    Defaults (:meth:`for_vehicle`): flat power = the vehicle's typical power, CP =
    flat power / 0.70 (whether the flat power is the typical one, given in watts or
    derived from a flat speed by :func:`flat_power_for_speed`), W′ = 70 s × CP, climb
    power = CP. For a handcycle (typical 60 W) that gives CP ≈ 86 W, inside the maximum
    race power of 55 ± 25 W (arm impairment) to 129 ± 26 W (none) measured by Janssen,
    Dallmeijer & van der Woude (2001), J. Rehabil. Res. Dev. 38:33–40; a handcyclist who
    rides the flat at 44 W gets CP ≈ 63 W, in the arm-impairment group, rather than the
    typical rider's CP.
    """

    name: str
    vehicle: Vehicle
    cp: float
    w_prime: float
    flat_power: float
    climb_power: float
    climb_share: float
    target_speed: float
    assist_between_climbs: int = DEFAULT_ASSIST_LEVEL
    pacing: str = ""
    effort_given: bool = True
    climb_given: bool = False

    def __post_init__(self) -> None:
        problems = []
        for what, key, value in (
            ("critical power", "cp_w", self.cp),
            ("W′", "w_prime_kj", self.w_prime / 1000),
            ("climb power", "climb_w", self.climb_power),
            ("climb share above CP", "climb_share", self.climb_share),
            ("target climbing speed", "target_kmh", self.target_speed * KMH_PER_MS),
        ):
            problem = LIMITS[key].problem(value)
            if problem:
                problems.append(f"{what} {problem.removeprefix('= ')}")
        if not 1.0 <= self.flat_power <= self.cp:
            problems.append(
                f"flat power {self.flat_power:g} W must be between 1 W and the CP "
                f"({self.cp:g} W): efforts above CP cannot be held for long"
            )
        if self.pacing and self.pacing not in PACING_STYLES:
            problems.append(f"pacing {self.pacing!r} is not one of {', '.join(PACING_STYLES)}")
        if self.vehicle.motor is not None:
            levels = len(find_motor(self.vehicle.motor).levels)
            if not 0 <= self.assist_between_climbs <= levels:
                problems.append(
                    f"assist level between climbs {self.assist_between_climbs} is outside 0…{levels}"
                )
        if problems:
            raise VehicleError(f"rider '{self.name}': " + "; ".join(problems))

    @property
    def climb_power_used(self) -> float:
        """Power actually used on climbs [W]: the wanted power, capped above CP."""
        return min(self.climb_power, self.cp * (1.0 + self.climb_share))

    @property
    def pacing_style(self) -> str:
        """The pacing style planned: the rider's, else "steady" on arm-powered vehicles
        and "best" on the others.

        Arm-powered riders get the even style by default: many ride with a spinal
        cord injury, where heart rate and temperature may not tell them how hard
        they are going, and clinicians often advise them to stay below their
        threshold (from memory, no figure taken from a source); they can choose
        "best" themselves."""
        if self.pacing:
            return self.pacing
        return "steady" if self.vehicle.propulsion == "arms" else "best"

    @classmethod
    def for_vehicle(cls, vehicle: Vehicle, name: str | None = None, **given: Any) -> Rider:
        """A rider with the defaults of the Notes, any of them replaced by ``given``.

        Defaults follow what is given: W′ and the climbing power from the CP, the CP
        from the flat power (:data:`ALL_DAY_SHARE_OF_CP`)."""
        # with a CP and no effort given, the effort follows the CP (the one rule)
        typical = vehicle.typical_power if "cp" not in given else ALL_DAY_SHARE_OF_CP * given["cp"]
        flat = given.get("flat_power", typical)
        cp = given.get("cp", flat / ALL_DAY_SHARE_OF_CP)
        values = dict(
            cp=cp,
            w_prime=W_PRIME_SECONDS_OF_CP * cp,
            flat_power=flat,
            climb_power=cp,
            climb_share=CLIMB_SHARE_ABOVE_CP,
            target_speed=vehicle.climb_speed,
            effort_given="flat_power" in given,
            climb_given="climb_power" in given,
        )
        values.update(given)
        return cls(name=name or vehicle.label, vehicle=vehicle, **values)


def flat_power_for_speed(vehicle: Vehicle, speed: float, assist_level: int = 1) -> float:
    """The rider's own power [W] at the pedals to hold ``speed`` on level ground in
    still air at sea level, with the motor (if any) at ``assist_level``.

    Parameters
    ----------
    vehicle : Vehicle (its motor, if it has one, at its continuous rating)
    speed : float [m/s]
    assist_level : int, 0 = off; ignored without a motor

    Returns
    -------
    float [W], at least 1 W.

    Notes
    -----
    At the wheel P_need(v) = P·E + min(r·P, P_rated)·taper(v) (Martin et al. 1998 for
    P_need; the assist share r of the level, tapered to zero at the cut-off as in
    Regulation (EU) No 168/2013, Art. 2(2)(h)). An all-day flat speed is held far
    longer than the motor's thermal time, so its continuous rating, not its peak, caps
    the assist. Air density :data:`~cardgen.physics.atmosphere.SEA_LEVEL_AIR_DENSITY`
    (ISO 2533).
    """
    motor, ratio = None, 0.0
    if vehicle.motor is not None:
        motor = find_motor(vehicle.motor)
        if not 0 <= assist_level <= len(motor.levels):
            raise VehicleError(f"assist level {assist_level} is outside 0…{len(motor.levels)}")
        motor = dataclasses.replace(motor, peak_power=min(motor.peak_power, motor.rated_power))
        ratio = motor.levels[assist_level - 1] if assist_level > 0 else 0.0
    watts = rider_power_for_speed(
        motor, ratio, speed, resistance=vehicle.resistance, grade=0.0, air=STILL_AIR
    )
    return max(1.0, float(watts))
