"""Vehicle profiles: the built-in library and users' own TOML files.

A profile file holds one table per vehicle (see ``cardgen/data/vehicles.toml`` for
every key with its unit and source). A user's file may start from a built-in vehicle
with ``base = "road-hoods"`` and change only some keys.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from cardgen.errors import VehicleError
from cardgen.physics.forces import G0

#: Below this speed a two-wheeler is walked, not ridden: common practice (≈5–6 km/h),
#: no published source; it matches the 6 km/h walk-assist limit of EN 15194.
TWO_WHEEL_MIN_SPEED = 5.5 / 3.6  # [m/s]

# key in the file → (attribute, factor to SI, lowest allowed, highest allowed)
_NUMBERS = {
    "vehicle_mass_kg": ("vehicle_mass", 1.0, 0.0, 400.0),
    "rider_mass_kg": ("rider_mass", 1.0, 0.0, 400.0),
    "cda_m2": ("cda", 1.0, 0.05, 3.0),
    "crr": ("crr", 1.0, 0.0005, 0.1),
    "efficiency": ("efficiency", 1.0, 0.5, 1.0),
    "wheel_inertia_kg": ("wheel_inertia_mass", 1.0, 0.0, 20.0),
    "gross_efficiency": ("gross_efficiency", 1.0, 0.05, 0.35),
    "typical_power_w": ("typical_power", 1.0, 1.0, 2000.0),
    "climb_speed_kmh": ("climb_speed", 1 / 3.6, 1.0, 60.0),
    "max_descent_speed_kmh": ("max_descent_speed", 1 / 3.6, 5.0, 120.0),
    "curve_accel_g": ("curve_accel", G0, 0.05, 1.0),
}
_TEXT = {"label", "propulsion", "base", "motor"}
_KNOWN = set(_NUMBERS) | _TEXT | {"wheels", "sources"}


@dataclass(frozen=True)
class Vehicle:
    """A vehicle with its rider(s), in SI units.

    Attributes
    ----------
    name : str  key in the library or file
    label : str  plain description
    wheels : int  2 or 3
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

    @property
    def mass(self) -> float:
        """Total moving mass [kg]."""
        return self.vehicle_mass + self.rider_mass

    @property
    def min_stable_speed(self) -> float:
        """Speed below which the vehicle is walked [m/s]; 0 for three-wheelers."""
        return TWO_WHEEL_MIN_SPEED if self.wheels == 2 else 0.0

    @classmethod
    def from_table(cls, name: str, table: Mapping[str, Any], where: str) -> Vehicle:
        """Build and validate a vehicle from one table of a profile file.

        Every problem in the table is collected and reported together, each naming
        ``where`` (the file) and the key.
        """
        problems = []
        values: dict[str, Any] = {}
        for key in table:
            if key not in _KNOWN:
                problems.append(f"unknown key '{key}' (allowed: {', '.join(sorted(_KNOWN))})")
        for key, (attr, factor, low, high) in _NUMBERS.items():
            raw = table.get(key)
            if raw is None:
                problems.append(f"missing key '{key}'")
                continue
            if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
                problems.append(f"'{key}' must be a number, not {raw!r}")
                continue
            if not low <= raw <= high:
                problems.append(f"'{key}' = {raw} is outside {low}…{high}")
                continue
            values[attr] = float(raw) * factor
        wheels = table.get("wheels")
        if wheels not in (2, 3) or isinstance(wheels, bool):
            problems.append(f"'wheels' must be 2 or 3, not {wheels!r}")
        propulsion = table.get("propulsion", "legs")
        if propulsion not in ("legs", "arms"):
            problems.append(f"'propulsion' must be \"legs\" or \"arms\", not {propulsion!r}")
        motor = table.get("motor")
        if motor is not None:
            from cardgen.physics.assist import builtin_motors

            if motor not in builtin_motors():
                problems.append(f"'motor' = {motor!r} is not a known envelope "
                                f"(allowed: {', '.join(builtin_motors())})")
        if values.get("vehicle_mass", 1.0) + values.get("rider_mass", 1.0) < 20.0:
            problems.append("vehicle_mass_kg + rider_mass_kg must be at least 20 kg")
        if problems:
            lines = "\n  ".join(problems)
            raise VehicleError(f"{where}: vehicle '{name}':\n  {lines}")
        sources = table.get("sources", {})
        return cls(
            name=name, label=str(table.get("label", name)), wheels=int(wheels),
            propulsion=str(propulsion), motor=motor, sources=dict(sources), **values,
        )


def _read_toml(path: Path, what: str) -> dict:
    try:
        with open(path, "rb") as handle:
            return tomllib.load(handle)
    except FileNotFoundError:
        raise VehicleError(f"{path}: no such {what} file; check the path") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise VehicleError(f"{path}: cannot read the {what} file ({exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise VehicleError(f"{path}: not valid TOML: {exc}; fix the syntax there") from None


def builtin_vehicles() -> dict[str, Vehicle]:
    """The built-in library, by name, in file order."""
    source = resources.files("cardgen") / "data" / "vehicles.toml"
    data = tomllib.loads(source.read_text(encoding="utf-8"))
    return {name: Vehicle.from_table(name, table, "built-in library") for name, table in data.items()}


def load_vehicles(path: str | Path) -> dict[str, Vehicle]:
    """Every vehicle in a user's profile file.

    A table may set ``base = "NAME"`` to start from a built-in vehicle; its own keys
    then replace the base's, and ``sources`` of replaced keys become "user file".
    """
    path = Path(path)
    data = _read_toml(path, "vehicle profile")
    if not data:
        raise VehicleError(f"{path}: no vehicle tables; add one like [my-bike] with its keys")
    library = builtin_vehicles()
    found = {}
    for name, table in data.items():
        if not isinstance(table, dict):
            raise VehicleError(f"{path}: '{name}' must be a table like [{name}], not a value")
        merged: dict[str, Any] = {}
        base = table.get("base")
        if base is not None:
            if base not in library:
                raise VehicleError(
                    f"{path}: vehicle '{name}': base '{base}' is not a built-in vehicle "
                    f"(allowed: {', '.join(library)})"
                )
            merged = _as_table(library[base])
        sources = dict(merged.get("sources", {}))
        sources.update({k: f"user file {path.name}" for k in table if k in _NUMBERS})
        sources.update(table.get("sources", {}))
        merged.update({k: v for k, v in table.items() if k != "base"})
        merged["sources"] = sources
        found[name] = Vehicle.from_table(name, merged, str(path))
    return found


def _as_table(vehicle: Vehicle) -> dict[str, Any]:
    """The file form of a vehicle (inverse of :meth:`Vehicle.from_table`)."""
    table: dict[str, Any] = {
        "label": vehicle.label, "wheels": vehicle.wheels, "propulsion": vehicle.propulsion,
        "sources": dict(vehicle.sources),
    }
    if vehicle.motor is not None:
        table["motor"] = vehicle.motor
    for key, (attr, factor, _, _) in _NUMBERS.items():
        table[key] = getattr(vehicle, attr) / factor
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
        f"unknown vehicle '{name_or_path}'; use one of: {', '.join(library)}, "
        "or the path of a .toml profile file"
    )


#: An all-day effort is held at about this share of critical power: common practice,
#: no published source. Sets the default CP from the vehicle's typical power.
ALL_DAY_SHARE_OF_CP = 0.70
#: Default W′ as seconds of CP: from memory (recreational riders ≈ 10–20 kJ on the
#: legs, ≈ 5–8 kJ on the arms), no published source checked.
W_PRIME_SECONDS_OF_CP = 70.0
#: Default cap on climbing power, as a share above CP.
CLIMB_SHARE_ABOVE_CP = 0.10


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
    cruise_level : int  assist level away from climbs (vehicles with a motor)

    Notes
    -----
    Defaults (:meth:`for_vehicle`): flat power = the vehicle's typical power, CP =
    flat power / 0.70, W′ = 70 s × CP, climb power = CP. For a handcycle (typical
    60 W) that gives CP ≈ 86 W, inside the maximum race power of 55 ± 25 W (arm
    impairment) to 129 ± 26 W (none) measured by Janssen, Dallmeijer & van der Woude
    (2001), J. Rehabil. Res. Dev. 38:33–40.
    """

    name: str
    vehicle: Vehicle
    cp: float
    w_prime: float
    flat_power: float
    climb_power: float
    climb_share: float
    target_speed: float
    cruise_level: int = 1

    def __post_init__(self):
        problems = []
        if not 10.0 <= self.cp <= 700.0:
            problems.append(f"critical power {self.cp:g} W is outside 10…700 W")
        if not 500.0 <= self.w_prime <= 60000.0:
            problems.append(f"W′ {self.w_prime:g} J is outside 500…60000 J")
        if not 1.0 <= self.flat_power <= self.cp:
            problems.append(f"flat power {self.flat_power:g} W must be between 1 W and the CP "
                            f"({self.cp:g} W): efforts above CP cannot be held for long")
        if not 1.0 <= self.climb_power <= 2000.0:
            problems.append(f"climb power {self.climb_power:g} W is outside 1…2000 W")
        if not 0.0 <= self.climb_share <= 0.5:
            problems.append(f"climb share above CP {self.climb_share:g} is outside 0…0.5")
        if not 1 / 3.6 <= self.target_speed <= 60 / 3.6:
            problems.append(f"target climbing speed {self.target_speed * 3.6:g} km/h is outside 1…60 km/h")
        if self.vehicle.motor is not None:
            from cardgen.physics.assist import find_motor

            levels = len(find_motor(self.vehicle.motor).levels)
            if not 0 <= self.cruise_level <= levels:
                problems.append(f"cruise assist level {self.cruise_level} is outside 0…{levels}")
        if problems:
            raise VehicleError(f"rider '{self.name}': " + "; ".join(problems))

    @property
    def climb_power_used(self) -> float:
        """Power actually used on climbs [W]: the wanted power, capped above CP."""
        return min(self.climb_power, self.cp * (1.0 + self.climb_share))

    @classmethod
    def for_vehicle(cls, vehicle: Vehicle, name: str | None = None, **given) -> Rider:
        """A rider with the defaults of the Notes, any of them replaced by ``given``."""
        flat = given.get("flat_power", vehicle.typical_power)
        cp = given.get("cp", max(flat, vehicle.typical_power) / ALL_DAY_SHARE_OF_CP)
        values = dict(
            cp=cp, w_prime=W_PRIME_SECONDS_OF_CP * cp, flat_power=flat, climb_power=cp,
            climb_share=CLIMB_SHARE_ABOVE_CP, target_speed=vehicle.climb_speed,
        )
        values.update(given)
        return cls(name=name or vehicle.label, vehicle=vehicle, **values)
