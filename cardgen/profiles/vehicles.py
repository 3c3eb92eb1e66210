"""Vehicle profiles: the built-in library and users' own TOML files.

A profile file holds one table per vehicle (see ``cardgen/data/vehicles.toml`` for
every key with its unit and source). A user's file may start from a built-in vehicle
with ``base = "road-hoods"`` and change only some keys.
"""

from __future__ import annotations

import dataclasses
import functools
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from cardgen.errors import VehicleError, close_matches
from cardgen.io.files import read_package_toml, read_toml
from cardgen.physics.assist import Motor
from cardgen.physics.forces import Resistance
from cardgen.profiles.limits import LIMITS
from cardgen.profiles.motors import builtin_motors, find_motor
from cardgen.profiles.tables import check_numbers, unknown_keys
from cardgen.units import KMH_PER_MS

#: Below this speed a two-wheeler is walked, not ridden: common practice (≈5–6 km/h),
#: no published source; it matches the 6 km/h walk-assist limit of EN 15194.
TWO_WHEEL_MIN_SPEED = 5.5 / KMH_PER_MS  # [m/s]

# key in the file → attribute (ranges and units: cardgen.profiles.limits)
NUMBERS = {
    "vehicle_mass_kg": "vehicle_mass",
    "rider_mass_kg": "rider_mass",
    "cda_m2": "cda",
    "crr": "crr",
    "efficiency": "efficiency",
    "wheel_inertia_kg": "wheel_inertia_mass",
    "gross_efficiency": "gross_efficiency",
    "typical_power_w": "typical_power",
    "climb_speed_kmh": "climb_speed",
    "max_descent_speed_kmh": "max_descent_speed",
    "curve_accel_g": "curve_accel",
}
_TEXT = {"label", "propulsion", "base", "motor"}
#: Optional numbers: key → attribute (None when not given).
OPTIONAL = {"battery_wh": "battery"}
_KNOWN = set(NUMBERS) | set(OPTIONAL) | _TEXT | {"wheels", "riders", "sources"}
#: The most people one vehicle carries (a quad tandem).
MAX_RIDERS = 4


@dataclass(frozen=True)
class Vehicle:
    """A vehicle with its rider(s), in SI units.

    Attributes
    ----------
    name : str  key in the library or file
    label : str  plain description
    wheels : int  2 or 3
    riders : int  people riding it (2 on a tandem): food and fluid are per person
    propulsion : str  "legs" or "arms"
    vehicle_mass : float [kg]  vehicle and its load
    rider_mass : float [kg]
    cda : float [m²]
    crr : float [-]
    efficiency : float [-]  drivetrain
    wheel_inertia_mass : float [kg]  I/r² of all wheels
    gross_efficiency : float [-]  mechanical work / food energy
    typical_power : float [W]
    climb_speed : float [m/s]
    max_descent_speed : float [m/s]
    curve_accel : float [m/s²]
    motor : str or None  name of an e-assist envelope (see cardgen/data/motors.toml)
    sources : mapping of file key → where the value comes from
    """

    name: str
    label: str
    wheels: int
    propulsion: str
    vehicle_mass: float
    rider_mass: float
    cda: float
    crr: float
    efficiency: float
    wheel_inertia_mass: float
    gross_efficiency: float
    typical_power: float
    climb_speed: float
    max_descent_speed: float
    curve_accel: float
    motor: str | None = None
    sources: Mapping[str, str] = field(default_factory=dict, compare=False)
    battery: float | None = None  # [J] the battery fitted, when it differs from the motor catalogue's
    riders: int = 1  # people on the vehicle (a tandem's two eat and drink each)

    @property
    def mass(self) -> float:
        """Total moving mass [kg]."""
        return self.vehicle_mass + self.rider_mass

    @property
    def min_stable_speed(self) -> float:
        """Speed below which the vehicle is walked [m/s]; 0 for three-wheelers."""
        return TWO_WHEEL_MIN_SPEED if self.wheels == 2 else 0.0

    @property
    def resistance(self) -> Resistance:
        """The vehicle's resistances for the physics functions."""
        return Resistance(
            mass=self.mass,
            crr=self.crr,
            cda=self.cda,
            efficiency=self.efficiency,
            wheel_inertia_mass=self.wheel_inertia_mass,
        )

    def fitted_motor(self) -> Motor | None:
        """The motor's envelope with the battery fitted to this vehicle (the catalogue's
        battery where the vehicle names none); None without a motor."""
        if self.motor is None:
            return None
        motor = find_motor(self.motor)
        return motor if self.battery is None else dataclasses.replace(motor, battery=self.battery)

    @classmethod
    def from_table(cls, name: str, table: Mapping[str, Any], where: str) -> Vehicle:
        """Build and validate a vehicle from one table of a profile file.

        Every problem in the table is collected and reported together, each naming
        ``where`` (the file) and the key.
        """
        problems = unknown_keys(table, _KNOWN)
        values, number_problems = check_numbers(table, NUMBERS)
        optional, optional_problems = check_numbers(table, OPTIONAL, required=False)
        problems += number_problems + optional_problems
        values.update(optional)
        wheels = table.get("wheels")
        if wheels not in (2, 3) or isinstance(wheels, bool):
            problems.append(f"'wheels' must be 2 or 3, not {wheels!r}")
        riders = table.get("riders", 1)
        if not isinstance(riders, int) or isinstance(riders, bool) or not 1 <= riders <= MAX_RIDERS:
            problems.append(f"'riders' must be a whole number from 1 to {MAX_RIDERS}, not {riders!r}")
        propulsion = table.get("propulsion", "legs")
        if propulsion not in ("legs", "arms"):
            problems.append(f'\'propulsion\' must be "legs" or "arms", not {propulsion!r}')
        motor = table.get("motor")
        if motor is not None:
            if not isinstance(motor, str) or motor not in builtin_motors():
                problems.append(
                    f"'motor' = {motor!r} is not a known envelope "
                    f"(allowed: {', '.join(builtin_motors())})"
                )
        if values.get("vehicle_mass", 1.0) + values.get("rider_mass", 1.0) < 20.0:
            problems.append("vehicle_mass_kg + rider_mass_kg must be at least 20 kg")
        if "battery" in values and motor is None:
            problems.append("'battery_wh' is given but the vehicle has no 'motor'")
        if problems or not isinstance(wheels, int):
            lines = "\n  ".join(problems)
            raise VehicleError(f"{where}: vehicle '{name}':\n  {lines}")
        sources = table.get("sources", {})
        if not isinstance(sources, dict):
            raise VehicleError(f"{where}: vehicle '{name}': 'sources' must be a table of key = \"source\"")
        return cls(
            name=name,
            label=str(table.get("label", name)),
            wheels=int(wheels),
            riders=int(riders),
            propulsion=str(propulsion),
            motor=motor,
            sources=dict(sources),
            **values,
        )


@functools.cache
def _library() -> dict[str, Vehicle]:
    data = read_package_toml("cardgen.profiles", "data", "vehicles.toml")
    return {name: Vehicle.from_table(name, table, "built-in library") for name, table in data.items()}


def builtin_vehicles() -> dict[str, Vehicle]:
    """The built-in library, by name, in file order (read once per process)."""
    return dict(_library())


def load_vehicles(path: str | Path) -> dict[str, Vehicle]:
    """Every vehicle in a user's profile file.

    A table may set ``base = "NAME"`` to start from a built-in vehicle; its own keys
    then replace the base's, and ``sources`` of replaced keys become "user file".
    """
    path = Path(path)
    data, _ = read_toml(path, "vehicle profile", VehicleError)
    if not data:
        raise VehicleError(f"{path}: no vehicle tables; add one like [my-bike] with its keys")
    return vehicles_from_tables(data, str(path), f"user file {path.name}")


def vehicles_from_tables(data: Mapping[str, Any], where: str, origin: str) -> dict[str, Vehicle]:
    """Vehicles from tables by name, each starting from a built-in one with ``base``
    (its own keys replace the base's; their sources become ``origin``)."""
    library = builtin_vehicles()
    found = {}
    for name, table in data.items():
        if not isinstance(table, dict):
            raise VehicleError(f"{where}: '{name}' must be a table like [{name}], not a value")
        merged: dict[str, Any] = {}
        base = table.get("base")
        if base is not None:
            if not isinstance(base, str) or base not in library:
                raise VehicleError(
                    f"{where}: vehicle '{name}': base {base!r} is not a built-in vehicle"
                    f"{close_matches(str(base), library)} (allowed: {', '.join(library)})"
                )
            merged = _as_table(library[base])
        sources = dict(merged.get("sources", {}))
        sources.update({k: origin for k in table if k in NUMBERS or k in OPTIONAL})
        own = table.get("sources", {})
        if not isinstance(own, dict):
            raise VehicleError(f"{where}: vehicle '{name}': 'sources' must be a table of key = \"source\"")
        sources.update(own)
        merged.update({k: v for k, v in table.items() if k != "base"})
        merged["sources"] = sources
        found[name] = Vehicle.from_table(name, merged, where)
    return found


def _as_table(vehicle: Vehicle) -> dict[str, Any]:
    """The file form of a vehicle (inverse of :meth:`Vehicle.from_table`)."""
    table: dict[str, Any] = {
        "label": vehicle.label,
        "wheels": vehicle.wheels,
        "riders": vehicle.riders,
        "propulsion": vehicle.propulsion,
        "sources": dict(vehicle.sources),
    }
    if vehicle.motor is not None:
        table["motor"] = vehicle.motor
    for key, attr in NUMBERS.items():
        table[key] = getattr(vehicle, attr) / LIMITS[key].to_si
    if vehicle.battery is not None:
        table["battery_wh"] = vehicle.battery / LIMITS["battery_wh"].to_si
    return table


def find_vehicle(name_or_path: str) -> Vehicle:
    """A built-in vehicle by name, or the single vehicle in a TOML profile file."""
    library = builtin_vehicles()
    if name_or_path in library:
        return library[name_or_path]
    path = Path(name_or_path)
    if path.suffix.lower() == ".toml" or path.exists():
        found = load_vehicles(path)
        if len(found) != 1:
            raise VehicleError(
                f"{path}: holds {len(found)} vehicles ({', '.join(found)}); "
                "a single vehicle is expected here"
            )
        return next(iter(found.values()))
    raise VehicleError(
        f"unknown vehicle '{name_or_path}'{close_matches(name_or_path, library)}; use one of: {', '.join(library)}, "
        "or the path of a .toml profile file"
    )
