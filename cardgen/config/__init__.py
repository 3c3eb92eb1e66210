"""Site configuration: ``site.toml`` checked against a declared schema in one pass.

The package's interface: :func:`load_config` (a ``site.toml``), :func:`folder_config`
and :func:`gpx_config` (zero-config sites), :func:`rider_start`, and the schema with
its README table.
"""

from cardgen.config.defaults import folder_config, gpx_config
from cardgen.config.loader import load_config, one_or_listed, plural, rider_start
from cardgen.config.schema import SCHEMA, SECTIONS, reference_table

__all__ = [
    "SCHEMA",
    "SECTIONS",
    "folder_config",
    "gpx_config",
    "load_config",
    "one_or_listed",
    "plural",
    "reference_table",
    "rider_start",
]
