"""Air density from altitude, temperature, pressure and humidity.

References
----------
ISO 2533:1975, *Standard Atmosphere* (identical in the troposphere to ICAO Doc 7488
and the U.S. Standard Atmosphere 1976).
Buck, A. L. (1981). New equations for computing vapor pressure and enhancement
factor. *Journal of Applied Meteorology* 20(12):1527–1532.
doi:10.1175/1520-0450(1981)020<1527:NEFCVP>2.0.CO;2
"""

from __future__ import annotations

import numpy as np

from cardgen.units import ZERO_CELSIUS_K, Floats

#: Specific gas constant of dry air [J/(kg·K)], ISO 2533.
R_DRY_AIR = 287.05287
#: Specific gas constant of water vapour [J/(kg·K)].
R_WATER_VAPOUR = 461.5
#: ISA sea-level temperature [K] and pressure [Pa].
ISA_T0 = 288.15
ISA_P0 = 101325.0
#: ISA sea-level air density [kg/m³], ISO 2533 (p0/(R·T0) = 1.22500): the one still-air
#: density wherever no altitude or temperature is known.
SEA_LEVEL_AIR_DENSITY = 1.225
#: ISA tropospheric lapse rate [K/m].
ISA_LAPSE_RATE = 0.0065
#: Exponent g0·M/(R*·L) of the ISA barometric formula [-].
ISA_EXPONENT = 5.25588
#: The troposphere formula holds from the Dead Sea shore to the tropopause [m].
ALTITUDE_RANGE = (-1000.0, 11000.0)


def isa_temperature(altitude: Floats) -> Floats:
    """ISA temperature at a height in the troposphere.

    Parameters
    ----------
    altitude : float or array [m]
        Height above mean sea level (taken as geopotential height; the difference is
        below 0.05 % under 3 km).

    Returns
    -------
    float or array [K]; NaN outside -1000…11000 m.

    Notes
    -----
    T = 288.15 − 0.0065·H

    References
    ----------
    ISO 2533:1975, Standard Atmosphere.
    """
    h = np.asarray(altitude, dtype=float)
    t = ISA_T0 - ISA_LAPSE_RATE * h
    return np.where((h >= ALTITUDE_RANGE[0]) & (h <= ALTITUDE_RANGE[1]), t, np.nan)[()]


def isa_pressure(altitude: Floats) -> Floats:
    """ISA static pressure at a height in the troposphere.

    Parameters
    ----------
    altitude : float or array [m]

    Returns
    -------
    float or array [Pa]; NaN outside -1000…11000 m.

    Notes
    -----
    p = 101325·(T/288.15)^5.25588 with T from :func:`isa_temperature`.

    References
    ----------
    ISO 2533:1975, Standard Atmosphere.
    """
    return (ISA_P0 * (isa_temperature(altitude) / ISA_T0) ** ISA_EXPONENT)[()]


def saturation_vapour_pressure_buck(temperature: Floats) -> Floats:
    """Saturation vapour pressure over water.

    Parameters
    ----------
    temperature : float or array [K]

    Returns
    -------
    float or array [Pa]; NaN outside 223–323 K (−50…50 °C), where the fit is stated.

    Notes
    -----
    e_w = 611.21·exp(17.502·t/(240.97 + t)), t in °C (Buck 1981, eq. 8 "e_w3"; the
    coefficients are from memory of that paper and checked in the tests against a
    humid-air density computed independently).

    References
    ----------
    Buck, A. L. (1981). J. Appl. Meteorol. 20:1527–1532.
    """
    t = np.asarray(temperature, dtype=float) - ZERO_CELSIUS_K
    e = 611.21 * np.exp(17.502 * t / (240.97 + t))
    return np.where((t >= -50.0) & (t <= 50.0), e, np.nan)[()]


def air_density(temperature: Floats, pressure: Floats, relative_humidity: Floats = 0.0) -> Floats:
    """Density of (optionally humid) air from the ideal-gas law.

    Parameters
    ----------
    temperature : float or array [K]
    pressure : float or array [Pa]
        Total (static) pressure.
    relative_humidity : float or array [-], optional
        0…1. Zero (the default) gives dry air.

    Returns
    -------
    float or array [kg/m³]; NaN where temperature ≤ 0 K, pressure ≤ 0 or humidity
    outside 0…1.

    Notes
    -----
    ρ = p_d/(R_d·T) + p_v/(R_v·T), with p_v = RH·e_w(T) and p_d = p − p_v.

    References
    ----------
    ISO 2533:1975 (R_d); Buck (1981) for e_w.
    """
    t = np.asarray(temperature, dtype=float)
    p = np.asarray(pressure, dtype=float)
    rh = np.asarray(relative_humidity, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        vapour = np.where(rh > 0.0, rh * saturation_vapour_pressure_buck(t), 0.0)
        rho = (p - vapour) / (R_DRY_AIR * t) + vapour / (R_WATER_VAPOUR * t)
    valid = (t > 0.0) & (p > 0.0) & (rh >= 0.0) & (rh <= 1.0)
    return np.where(valid, rho, np.nan)[()]


def air_density_isa(
    altitude: Floats, temperature: Floats | None = None, relative_humidity: Floats = 0.0
) -> Floats:
    """Air density at a height, with the ISA pressure and an optional temperature.

    Parameters
    ----------
    altitude : float or array [m]
    temperature : float or array [K], optional
        The actual air temperature; the ISA temperature at that height if omitted.
    relative_humidity : float or array [-], optional

    Returns
    -------
    float or array [kg/m³]; NaN outside -1000…11000 m.

    Notes
    -----
    ρ = p_ISA(H) / (R·T), T the given temperature or T_ISA(H).

    References
    ----------
    ISO 2533:1975, Standard Atmosphere.
    """
    t = isa_temperature(altitude) if temperature is None else temperature
    return air_density(t, isa_pressure(altitude), relative_humidity)


#: Heights [m] the density along a route is taken within (beyond them the ISA
#: pressure is undefined; a damaged elevation must not make NaN air).
DENSITY_HEIGHTS = (-1000.0, 9000.0)


def density_along(elevation: Floats, temperature: float | None = None) -> np.ndarray:
    """Air density on every segment between consecutive grid nodes.

    Parameters
    ----------
    elevation : array [m] at the nodes (n values give n − 1 segments)
    temperature : float [K], optional; the ISA temperature at each height if omitted

    Returns
    -------
    array [kg/m³], at each segment's mid-height, clipped to :data:`DENSITY_HEIGHTS`.

    References
    ----------
    ISO 2533:1975, Standard Atmosphere (via :func:`air_density_isa`).
    """
    z = np.asarray(elevation, dtype=float)
    mid = 0.5 * (z[1:] + z[:-1])
    return np.asarray(air_density_isa(np.clip(mid, *DENSITY_HEIGHTS), temperature), dtype=float)
