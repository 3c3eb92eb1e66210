"""The terms of the cycling power balance.

Every function returns the power [W] a term takes from (positive) or gives to
(negative) the vehicle at ground speed ``speed``. Arguments broadcast like numpy
arrays; scalars give scalars.

References
----------
Martin, J. C., Milliken, D. L., Cobb, J. E., McFadden, K. L. & Coggan, A. R. (1998).
Validation of a mathematical model for road cycling power. *Journal of Applied
Biomechanics* 14(3):276–291. doi:10.1123/jab.14.3.276
Dahn, K., Mai, L., Poland, J. & Jenkins, C. (1991). Frictional resistance in bicycle
wheel bearings. *Cycling Science* 3:28–32 (the bearing term as used by Martin et al.).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.physics.atmosphere import SEA_LEVEL_AIR_DENSITY
from cardgen.units import G0, Floats, scalar_or_array

#: Wheel-bearing friction, P = v·(91 + 8.7·v)·1e-3 [W] (Dahn et al. 1991 via Martin 1998).
BEARING_A = 0.091  # [N]
BEARING_B = 0.0087  # [N·s/m]


def _slope(grade: Floats) -> tuple[np.ndarray, np.ndarray]:
    """cos and sin of the road angle for a grade (rise/run), exact trigonometry."""
    g = np.asarray(grade, dtype=float)
    inv = 1.0 / np.sqrt(1.0 + g * g)
    return inv, g * inv


def rolling_power(speed: Floats, mass: Floats, crr: Floats, grade: Floats = 0.0) -> Floats:
    """Power lost to tyre rolling resistance.

    Parameters
    ----------
    speed : float or array [m/s] ground speed
    mass : float or array [kg] total moving mass
    crr : float or array [-] coefficient of rolling resistance
    grade : float or array [-] rise/run

    Returns
    -------
    float or array [W]

    Notes
    -----
    P_RR = v·Crr·m·g·cos(arctan G)

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    cos_a, _ = _slope(grade)
    return scalar_or_array(np.asarray(speed, dtype=float) * crr * mass * G0 * cos_a)


def gravity_power(speed: Floats, mass: Floats, grade: Floats) -> Floats:
    """Power against gravity; negative on a descent (gravity pushes).

    Parameters
    ----------
    speed : float or array [m/s]
    mass : float or array [kg]
    grade : float or array [-]

    Returns
    -------
    float or array [W]

    Notes
    -----
    P_PE = v·m·g·sin(arctan G)

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    _, sin_a = _slope(grade)
    return scalar_or_array(np.asarray(speed, dtype=float) * mass * G0 * sin_a)


def aero_power(speed: Floats, cda: Floats, air_density: Floats, headwind: Floats = 0.0) -> Floats:
    """Power against air drag, with wind along the direction of travel.

    Parameters
    ----------
    speed : float or array [m/s] ground speed
    cda : float or array [m²] drag area (include any wheel/spoke drag area)
    air_density : float or array [kg/m³]
    headwind : float or array [m/s]
        Wind component against the direction of travel; negative is a tailwind.

    Returns
    -------
    float or array [W]; negative when a tailwind faster than the rider pushes.

    Notes
    -----
    P_AT = ½·ρ·CdA·v_a·|v_a|·v with v_a = v + headwind. Martin et al. write
    V_A² for the usual case v_a > 0; the signed form keeps a following wind that is
    faster than the rider a push, not a drag.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    v = np.asarray(speed, dtype=float)
    air_speed = v + headwind
    return scalar_or_array(0.5 * air_density * cda * air_speed * np.abs(air_speed) * v)


def bearing_power(speed: Floats) -> Floats:
    """Power lost in the wheel bearings.

    Parameters
    ----------
    speed : float or array [m/s]

    Returns
    -------
    float or array [W]

    Notes
    -----
    P_WB = v·(91 + 8.7·v)·10⁻³

    References
    ----------
    Dahn et al. (1991), as used by Martin et al. (1998).
    """
    v = np.asarray(speed, dtype=float)
    return (v * (BEARING_A + BEARING_B * v))[()]


def pedal_power(wheel_power: Floats, efficiency: Floats) -> Floats:
    """Power the rider must put in for a power needed at the wheel.

    Parameters
    ----------
    wheel_power : float or array [W]
    efficiency : float or array [-] drivetrain efficiency, 0 < E ≤ 1

    Returns
    -------
    float or array [W]. Where the wheel needs no power (coasting or braking) the
    drivetrain carries nothing and the value passes through unchanged.

    Notes
    -----
    P = P_wheel / E_C for P_wheel > 0.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    w = np.asarray(wheel_power, dtype=float)
    return np.where(w > 0.0, w / efficiency, w)[()]


def wheel_power(power: Floats, efficiency: Floats) -> Floats:
    """Power that reaches the wheel for a rider's power (inverse of :func:`pedal_power`).

    Parameters
    ----------
    power : float or array [W] at the pedals (or hand cranks); negative is braking
    efficiency : float or array [-]

    Returns
    -------
    float or array [W]

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    p = np.asarray(power, dtype=float)
    return np.where(p > 0.0, p * efficiency, p)[()]


@dataclass(frozen=True)
class Breakdown:
    """Steady-state power split by term [W] (arrays or floats of one shape).

    ``total`` is at the pedals: ``rolling + bearings + aero + gravity + drivetrain``.
    """

    rolling: Floats
    bearings: Floats
    aero: Floats
    gravity: Floats
    drivetrain: Floats
    total: Floats


def steady_breakdown(
    speed: Floats,
    *,
    mass: Floats,
    crr: Floats,
    cda: Floats,
    efficiency: Floats = 1.0,
    grade: Floats = 0.0,
    headwind: Floats = 0.0,
    air_density: Floats = SEA_LEVEL_AIR_DENSITY,
    bearings: Floats = True,
) -> Breakdown:
    """Every term of the steady (no acceleration) power balance at a speed.

    Parameters
    ----------
    speed : float or array [m/s]
    mass : float or array [kg]
    crr : float or array [-]
    cda : float or array [m²]
    efficiency : float or array [-] drivetrain efficiency
    grade : float or array [-]
    headwind : float or array [m/s]
    air_density : float or array [kg/m³]
    bearings : bool
        Include the wheel-bearing term of Dahn et al. (1991).

    Returns
    -------
    Breakdown

    Notes
    -----
    P = (P_AT + P_RR + P_WB + P_PE) / E_C where that sum is positive (Martin et al.
    1998, without the kinetic term).

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    roll = rolling_power(speed, mass, crr, grade)
    bear = bearing_power(speed) if bearings else scalar_or_array(np.zeros_like(np.asarray(roll)))
    aero = aero_power(speed, cda, air_density, headwind)
    grav = gravity_power(speed, mass, grade)
    at_wheel = roll + bear + aero + grav
    total = pedal_power(at_wheel, efficiency)
    return Breakdown(roll, bear, aero, grav, scalar_or_array(total - at_wheel), total)


def headwind(heading: Floats, wind_speed: Floats, wind_from: Floats) -> Floats:
    """Wind component against the direction of travel.

    Parameters
    ----------
    heading : float or array [rad] direction of travel, clockwise from north
    wind_speed : float or array [m/s]
    wind_from : float or array [rad] direction the wind blows from, clockwise from north

    Returns
    -------
    float or array [m/s]; negative is a tailwind.

    Notes
    -----
    V_W·cos(D_W − D_B)

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    return scalar_or_array(
        np.asarray(wind_speed, dtype=float) * np.cos(np.asarray(wind_from) - np.asarray(heading))
    )


@dataclass(frozen=True)
class Resistance:
    """What a vehicle with its rider(s) resists motion with, in SI units.

    ``mass`` [kg] total moving mass, ``crr`` [-], ``cda`` [m²], ``efficiency`` [-]
    drivetrain, ``wheel_inertia_mass`` [kg] I/r² of the wheels, ``bearings``: include
    the wheel-bearing term of Dahn et al. (1991).
    """

    mass: float
    crr: float
    cda: float
    efficiency: float = 1.0
    wheel_inertia_mass: float = 0.0
    bearings: bool = True


@dataclass(frozen=True)
class Air:
    """The air a vehicle moves through, in SI units: ``headwind`` [m/s] the wind
    against the direction of travel (negative: a tailwind) and ``air_density``
    [kg/m³]. Each is a float or an array with one value per segment, broadcast with
    the grade. With :class:`Resistance` it is the one argument form of every function
    above the solver core (:mod:`cardgen.physics.steady`)."""

    headwind: Floats = 0.0
    air_density: Floats = SEA_LEVEL_AIR_DENSITY

    def over(self, index: slice | np.ndarray | int) -> Air:
        """The air on the segments ``index`` (a float stays as it is)."""
        return Air(_take(self.headwind, index), _take(self.air_density, index))

    def mean(self) -> Air:
        """The mean headwind and air density, as floats."""
        return Air(float(np.mean(self.headwind)), float(np.mean(self.air_density)))


#: Still air at the ISA sea-level density (ISO 2533).
STILL_AIR = Air()


def _take(values: Floats, index: slice | np.ndarray | int) -> Floats:
    array = np.asarray(values, dtype=float)
    return values if array.ndim == 0 else scalar_or_array(array[index])


@dataclass(frozen=True)
class ForceLaw:
    """The one resisting force along the direction of travel, F(v), and dF/dv.

    F(v) = ½ρCdA(v + w)|v + w| + m·g·(Crr·cos θ + sin θ) + a + b·v, with w the
    headwind, θ = arctan(grade), and a + b·v the wheel-bearing friction of Dahn et
    al. (1991). Arrays ``k`` = ½ρCdA, ``const`` and ``wind`` are per element; ``b``
    is shared. Used by the steady solver and the ride simulation alike.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """

    k: np.ndarray
    const: np.ndarray
    wind: np.ndarray
    b: float

    @classmethod
    def build(
        cls,
        *,
        mass: Floats,
        crr: Floats,
        cda: Floats,
        grade: Floats,
        headwind: Floats,
        air_density: Floats,
        bearings: bool = True,
    ) -> ForceLaw:
        """Precompute the law for every element (arguments broadcast together)."""
        g, m, c_rr, c_da, w, rho = np.broadcast_arrays(
            *(np.asarray(x, dtype=float) for x in (grade, mass, crr, cda, headwind, air_density))
        )
        cos_a, sin_a = _slope(g)
        const = m * G0 * (c_rr * cos_a + sin_a) + (BEARING_A if bearings else 0.0)
        return cls(0.5 * rho * c_da, const, w, BEARING_B if bearings else 0.0)

    @classmethod
    def of(cls, resistance: Resistance, *, grade: Floats, air: Air) -> ForceLaw:
        """The law of a vehicle (:class:`Resistance`) on ``grade`` [-] in ``air``."""
        return cls.build(
            mass=resistance.mass,
            crr=resistance.crr,
            cda=resistance.cda,
            grade=grade,
            headwind=air.headwind,
            air_density=air.air_density,
            bearings=resistance.bearings,
        )

    def __call__(self, speed: Floats, idx: Any = None) -> tuple[np.ndarray, np.ndarray]:
        """(F [N], dF/dv [N·s/m]) at ``speed`` for the elements ``idx`` (all when None)."""
        if idx is None:
            idx = slice(None)
        air = speed + self.wind[idx]
        return (
            self.k[idx] * air * np.abs(air) + self.const[idx] + self.b * speed,
            2.0 * self.k[idx] * np.abs(air) + self.b,
        )
