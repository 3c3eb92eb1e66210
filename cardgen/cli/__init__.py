"""Command line: the only place that prints and turns errors into exit codes.

``main`` is the ``cardgen`` script's entry point (and ``python -m cardgen``'s).
"""

from cardgen.cli.main import main

__all__ = ["main"]
