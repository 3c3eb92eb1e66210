"""Zero-config sites: a folder of GPX files, or one GPX file, with the default riders."""

from __future__ import annotations

from pathlib import Path

from cardgen.config.loader import plural
from cardgen.errors import ConfigError
from cardgen.physics.atmosphere import Conditions
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.settings import RiderConfig, RouteConfig, SiteConfig

#: Riders of a zero-config build (a folder of GPX files without site.toml).
DEFAULT_RIDERS = (
    ("Upright bike", "city-upright"),
    ("Road bike", "road-hoods"),
    ("E-assist bike", "e-assist-city"),
    ("Handcycle", "handcycle"),
)

#: Route files cardgen does not read, by suffix: named when a folder holds only these.
OTHER_ROUTE_FILES = {
    ".kml": "KML",
    ".kmz": "KMZ",
    ".fit": "FIT",
    ".tcx": "TCX",
    ".crs": "CRS",
    ".geojson": "GeoJSON",
}


def folder_config(folder: Path) -> SiteConfig:
    """A site for a folder of GPX files without site.toml: every route, default riders."""
    folder = Path(folder).resolve()
    files = sorted(p for p in folder.iterdir() if p.is_file())
    gpx = [p for p in files if p.suffix.lower() == ".gpx"]
    other = [p for p in files if p.suffix.lower() in OTHER_ROUTE_FILES]
    if not gpx:
        if other:
            listed = ", ".join(f"{p.name} ({OTHER_ROUTE_FILES[p.suffix.lower()]})" for p in other[:5])
            raise ConfigError(
                f"{folder}: no .gpx files; cardgen reads GPX only and found {listed}: "
                "export them as GPX from the program that made them"
            )
        raise ConfigError(f"{folder}: no site.toml and no .gpx files; add routes or a site.toml")
    return _default_site(folder, gpx, f"{folder}: no site.toml", other)


def gpx_config(path: Path) -> SiteConfig:
    """A one-route site for a GPX file given where a site.toml was expected."""
    path = Path(path).resolve()
    return _default_site(
        path.parent,
        [path],
        f"{path} is a GPX file, not a site.toml",
        [],
        output=path.with_suffix("").parent / f"{path.stem}-site",
    )


def _default_site(
    folder: Path, gpx: list[Path], why: str, other: list[Path], output: Path | None = None
) -> SiteConfig:
    lib = builtin_vehicles()
    riders = tuple(RiderConfig(Rider.for_vehicle(lib[v], name=n)) for n, v in DEFAULT_RIDERS)
    warnings = [
        f"{why}; building {plural(len(gpx), 'route')} with the default riders: "
        + ", ".join(f"{n} ({v})" for n, v in DEFAULT_RIDERS)
    ]
    if other:
        warnings.append(f"{folder}: left out {', '.join(p.name for p in other[:5])}: cardgen reads GPX only")
    return SiteConfig(
        source=None,
        folder=folder,
        title=f"Routes in {folder.name}" if len(gpx) > 1 or output is None else gpx[0].stem,
        units="metric",
        card_size="A5",
        large_print=False,
        output=output or (folder / "site").resolve(),
        base_url="",
        templates=None,
        start=None,
        start_interval=0.0,
        checkpoint_margin=15 * 60.0,
        conditions=Conditions(),
        routes=tuple(RouteConfig(p) for p in gpx),
        riders=riders,
        inputs=(folder, *gpx),
        warnings=tuple(warnings),
    )
