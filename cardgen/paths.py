"""Where cardgen's own files are: the default templates and the demo event.

Installed, they ship inside the package (``cardgen.templates``,
``cardgen.sample_routes``); in a checkout they sit at the top of the repository.
Either way the same folders are found.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path


def _shipped(package: str, folder: str) -> Path:
    try:
        return Path(str(resources.files(package)))
    except ModuleNotFoundError:  # a checkout: the folder beside the package
        return Path(__file__).resolve().parents[1] / folder


def default_templates() -> Path:
    """The templates shipped with cardgen."""
    return _shipped("cardgen.templates", "templates")


def demo_site() -> Path:
    """The bundled demo event's site.toml."""
    return _shipped("cardgen.sample_routes", "sample_routes") / "site.toml"
