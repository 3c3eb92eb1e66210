"""``cardgen build``: the site and its cards, with a progress bar on a terminal."""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Callable
from typing import TYPE_CHECKING

from cardgen.cli.common import _print, _ranged
from cardgen.errors import CardgenError

if TYPE_CHECKING:
    from pathlib import Path

    from cardgen.settings import SiteConfig


def _site_config(target: str | None) -> tuple[SiteConfig, bool]:
    """The configuration for ``build``/``check``: the bundled demo, a site.toml, or a
    folder (with or without site.toml)."""
    from pathlib import Path

    from cardgen.config import folder_config, gpx_config, load_config

    if target is None:
        from cardgen.paths import demo_site

        return load_config(demo_site()), True
    path = Path(target)
    if path.is_dir():
        return (
            load_config(path / "site.toml") if (path / "site.toml").is_file() else folder_config(path)
        ), False
    if not path.exists():
        raise CardgenError(f"{path}: no such file or folder; give a site.toml or a folder of .gpx files")
    if path.suffix.lower() == ".gpx":
        return gpx_config(path), False
    return load_config(path), False


def _progress_printer() -> tuple[Callable[[int, int, str], None], Callable[[], None]]:
    """A rich progress bar on a terminal, plain lines otherwise. Returns (callback, close)."""
    if sys.stderr.isatty():
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

        bar = Progress(
            TextColumn("cards"),
            BarColumn(),
            MofNCompleteColumn(),
            TextColumn("{task.description}"),
            transient=True,
        )
        task = None

        def update(done: int, total: int, label: str) -> None:
            nonlocal task
            if task is None:
                bar.start()
                task = bar.add_task(label, total=total)
            bar.update(task, completed=done, description=label)

        return update, bar.stop

    def plain(done: int, total: int, label: str) -> None:
        _print(f"card {done}/{total}: {label}", file=sys.stderr)

    return plain, lambda: None


def output_folder(config: SiteConfig, demo: bool, given: str | None = None) -> Path:
    """Where a build writes: ``-o``, else ``[site] output`` (relative to its site.toml,
    so a build run from any folder lands beside the event), else ``./site`` for the
    bundled demo, whose site.toml lies inside the installed package."""
    from pathlib import Path

    if given:
        return Path(given)
    return Path.cwd() / "site" if demo else config.output


def cmd_build(args: argparse.Namespace) -> int:
    from cardgen.build import build_site

    config, demo = _site_config(args.site)
    _say_config(config)
    out = output_folder(config, demo, args.output)
    jobs = args.jobs or min(os.cpu_count() or 1, 64)
    progress, close = _progress_printer()
    try:
        report = build_site(
            config,
            out,
            jobs=jobs,
            pdf=not args.no_pdf,
            keep_going=args.keep_going,
            say=lambda text: _print(text, file=sys.stderr),
            progress=progress,
        )
    finally:
        close()
    if not report.up_to_date:
        _print(
            f"built {out}: {report.routes - len(report.failed)} of {report.routes} routes "
            f"({report.routes_reused} unchanged), {report.cards_rendered} cards rendered, {report.cards_reused} reused"
        )
    if report.failed:
        _print(f"cardgen: {len(report.failed)} route(s) failed and were left out:", file=sys.stderr)
        for failure in report.failed:
            _print(f"  {failure}", file=sys.stderr)
    _print(f"open {out / 'index.html'}")
    return 1 if report.failed else 0


def _say_config(config: SiteConfig) -> None:
    """The configuration's warnings and what the model changed, once each."""
    for warning in config.warnings:
        _print(f"cardgen: warning: {warning}", file=sys.stderr)
    for note in config.notes:
        _print(f"cardgen: note: {note}", file=sys.stderr)


def add_parser(sub: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``build`` command's options."""
    build = sub.add_parser(
        "build",
        help="build the site and PDF cards (no argument: the demo event)",
        description="Build the site and PDF cards. No argument: the bundled demo event into ./site.",
    )
    build.add_argument("site", nargs="?", metavar="SITE.toml|FOLDER")
    build.add_argument("-o", "--output", metavar="OUT", help="output folder")
    build.add_argument(
        "--jobs",
        type=_ranged(1, 64, "worker processes"),
        metavar="N",
        help="card-rendering processes (default: the number of cores)",
    )
    build.add_argument("--no-pdf", action="store_true", help="pages only, no PDF cards")
    build.add_argument(
        "--keep-going", action="store_true", help="publish the good routes when some fail (exit 1)"
    )
    build.set_defaults(run=cmd_build)
