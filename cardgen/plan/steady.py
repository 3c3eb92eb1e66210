"""One steady state of a vehicle on a road: the speed for a power or the power for a
speed, with every term of the power balance and the motor's share (``cardgen solve``)."""

from __future__ import annotations

from dataclasses import dataclass

from cardgen.physics.assist import Motor, assisted_speed, motor_power, rider_power_for_speed
from cardgen.physics.atmosphere import air_density_isa
from cardgen.physics.forces import Air, Resistance
from cardgen.physics.steady import steady_speed, steady_terms


@dataclass(frozen=True)
class SteadyState:
    """The numbers of one steady state, SI.

    ``speed`` [m/s] (NaN when no steady speed exists), ``power`` [W] the rider's at
    the pedals, ``motor_power`` [W] at the wheel, ``air_density`` [kg/m³], and the
    terms of the balance [W]: ``rolling`` (wheel bearings included), ``aero``,
    ``gravity``, ``drivetrain`` (the loss on the rider's power alone when a motor
    helps: the motor drives the wheel past the chain's losses).
    """

    speed: float
    power: float
    motor_power: float
    air_density: float
    rolling: float
    aero: float
    gravity: float
    drivetrain: float


def steady_state(
    *,
    mass: float,
    crr: float,
    cda: float,
    efficiency: float,
    bearings: bool,
    grade: float,
    headwind: float,
    air_density: float | None = None,
    altitude: float = 0.0,
    power: float | None = None,
    speed: float | None = None,
    motor: Motor | None = None,
    ratio: float = 0.0,
) -> SteadyState:
    """Speed for a rider's ``power`` [W], or power for a ``speed`` [m/s] (give one).

    ``mass`` [kg], ``crr`` [-], ``cda`` [m²], drivetrain ``efficiency`` [-],
    ``bearings`` (the wheel-bearing term of Dahn et al. 1991); ``grade`` [-],
    ``headwind`` [m/s]; ``air_density`` [kg/m³], else the standard atmosphere's at
    ``altitude`` [m]; ``motor`` and its assist ``ratio`` (0: off). The command line
    gives plain SI numbers; they become a :class:`Resistance` and an :class:`Air` here.
    """
    resistance = Resistance(mass=mass, crr=crr, cda=cda, efficiency=efficiency, bearings=bearings)
    if (power is None) == (speed is None):
        raise ValueError("steady_state needs a power or a speed, not both")
    air = Air(headwind, float(air_density_isa(altitude)) if air_density is None else float(air_density))
    assisted = motor is not None and ratio > 0
    if power is not None:
        if assisted:
            assert motor is not None
            speed = float(assisted_speed(motor, ratio, power, resistance=resistance, grade=grade, air=air))
        else:
            speed = float(steady_speed(power, resistance=resistance, grade=grade, air=air))
    assert speed is not None
    parts = steady_terms(speed, resistance=resistance, grade=grade, air=air)
    if power is None:
        if assisted:
            power = float(
                rider_power_for_speed(motor, ratio, speed, resistance=resistance, grade=grade, air=air)
            )
        else:
            power = float(parts.total)
    motor_w = float(motor_power(motor, ratio, speed, power)) if motor is not None and assisted else 0.0
    drivetrain = power * (1 - resistance.efficiency) if motor_w > 0 and power > 0 else float(parts.drivetrain)
    return SteadyState(
        speed=speed,
        power=float(power),
        motor_power=motor_w,
        air_density=float(air.air_density),
        rolling=float(parts.rolling + parts.bearings),
        aero=float(parts.aero),
        gravity=float(parts.gravity),
        drivetrain=float(drivetrain),
    )
