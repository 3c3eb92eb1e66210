"""Building a site: the pipeline (:mod:`~cardgen.build.pipeline`), what a rebuild
may reuse (:mod:`~cardgen.build.cache`) and where and how it is published
(:mod:`~cardgen.build.publish`)."""

from cardgen.build.pipeline import BuildReport, Interrupted, build_site
from cardgen.build.publish import BuildError

__all__ = ["BuildError", "BuildReport", "Interrupted", "build_site"]
