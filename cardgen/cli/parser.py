"""The ``cardgen`` command line: one subcommand per module of :mod:`cardgen.cli`."""

from __future__ import annotations

import argparse

from cardgen import __version__
from cardgen.cli import build, check, route, serve, solve, vehicles


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="cardgen",
        description="Route power cards and pages from GPX routes.",
    )
    parser.add_argument("--version", action="version", version=f"cardgen {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for command in (build, check, solve, route, serve, vehicles):
        command.add_parser(sub)
    return parser
