"""Zero-config sites: a folder of GPX files, or one GPX file, with the default riders."""

from __future__ import annotations

import unicodedata
from collections.abc import Sequence
from pathlib import Path

from cardgen.config.loader import plural
from cardgen.errors import CardgenError, ConfigError
from cardgen.io.gpx import read_gpx
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.settings import Conditions, RiderConfig, RouteConfig, SiteConfig

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


#: Longest title made from the routes' names [characters]; past it, a count.
TITLE_CHARS = 70
#: Separators between a shared part of the routes' names and the rest.
_SEPARATORS = " -–—:,·|"


def _gpx_name(path: Path) -> str | None:
    """The name a GPX file gives its route (``<metadata>``, ``<trk>`` or ``<rte>``
    name), as one line without control characters; None when it gives none or cannot
    be read (the build names the problem then)."""
    try:
        name = read_gpx(path).name
    except CardgenError:
        return None
    name = " ".join("".join(c for c in name if c.isspace() or unicodedata.category(c) != "Cc").split())
    return name if name and name != path.stem else None


def _listed(names: Sequence[str]) -> str:
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def _clip(text: str) -> str:
    return text if len(text) <= TITLE_CHARS else text[: TITLE_CHARS - 1].rstrip() + "…"


def routes_title(names: Sequence[str]) -> str:
    """A site's title from its routes' names: one route, its name; several sharing
    their first words ("Tarnwhistle Sportive 40 km", "… 100 km"), those words and what
    differs ("Tarnwhistle Sportive: 40 km and 100 km"); else the names listed ("Hill
    Loop and River Path"). Past :data:`TITLE_CHARS`, a count stands for the list."""
    names = list(dict.fromkeys(names))
    if len(names) == 1:
        return _clip(names[0])
    words = [n.split() for n in names]
    shared = 0
    while shared < min(len(w) for w in words) - 1 and len({w[shared].casefold() for w in words}) == 1:
        shared += 1
    head = " ".join(words[0][:shared]).rstrip(_SEPARATORS)
    rests = [" ".join(w[shared:]).lstrip(_SEPARATORS) for w in words]
    if len(head) >= 4 and all(rests):  # a shared word of more than an article
        title = f"{head}: {_listed(rests)}"
        return title if len(title) <= TITLE_CHARS else _clip(f"{head}: {len(names)} routes")
    title = _listed(names)
    return title if len(title) <= TITLE_CHARS else f"{_clip(names[0])} and {len(names) - 1} more routes"


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
    named = [_gpx_name(p) for p in gpx]
    if any(named):  # the routes' own names (a file that gives none: its file name)
        title = routes_title([n or p.stem for n, p in zip(named, gpx, strict=True)])
    else:
        title = f"Routes in {folder.name}" if len(gpx) > 1 or output is None else gpx[0].stem
    return SiteConfig(
        source=None,
        folder=folder,
        title=title,
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
