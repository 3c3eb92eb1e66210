"""``cardgen serve``: preview a built site, and rebuild it when its files change."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from cardgen.cli.build import _site_config
from cardgen.cli.common import _ensure, _print, _ranged
from cardgen.errors import CardgenError

if TYPE_CHECKING:
    from cardgen.settings import SiteConfig


def _watch_paths(config: SiteConfig) -> list[Path]:
    """What a watched site is made of: every file its configuration reads, and its
    templates."""
    paths = [Path(p) for p in config.inputs if Path(p).is_file()]
    if config.templates:
        paths.extend(p for p in Path(config.templates).rglob("*") if p.is_file())
    return paths


def cmd_serve(args: argparse.Namespace) -> int:
    import ipaddress
    import threading
    from pathlib import Path

    from cardgen.serve import PreviewServer, watch

    if args.watch is not None:
        from cardgen.build import build_site

        config, demo = _site_config(args.watch)
        paths = _watch_paths(config)  # before building: a change from now on is caught
        folder = Path(args.folder).resolve() if args.folder else config.output
        build_site(config, folder, jobs=1, pdf=not args.no_pdf)
    else:
        folder = Path(args.folder or "site").resolve()
    _ensure(folder.is_dir(), f"{folder}: no such folder; build the site first (cardgen build)")
    try:
        server = PreviewServer((args.host, args.port), folder)
    except (OSError, OverflowError) as exc:
        raise CardgenError(
            f"cannot listen on {args.host}:{args.port} ({getattr(exc, 'strerror', exc)}); "
            "try another --port or --host"
        ) from None
    try:
        local = ipaddress.ip_address(args.host).is_loopback
    except ValueError:
        local = args.host == "localhost"
    if not local:
        _print(
            f"cardgen: warning: serving on {args.host}: anyone on that network can see the site",
            file=sys.stderr,
        )
    stop = threading.Event()
    if args.watch is not None:

        def say(text: str) -> None:
            _print(text, file=sys.stderr, flush=True)

        threading.Thread(
            target=watch,
            args=(
                lambda: _site_config(args.watch)[0],
                _watch_paths,
                lambda c: build_site(c, folder, jobs=1, pdf=not args.no_pdf),
                say,
                stop,
                paths,
            ),
            daemon=True,
        ).start()
    host, port = str(server.server_address[0]), server.server_address[1]
    _print(f"serving {folder} at http://{host}:{port}/ (Ctrl-C stops)", flush=True)
    try:
        server.serve_forever()
    except KeyboardInterrupt:
        pass
    finally:
        stop.set()
        server.server_close()
    return 0


def add_parser(sub: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``serve`` command's options."""
    serve = sub.add_parser(
        "serve",
        help="preview a built site over HTTP (127.0.0.1 unless --host)",
        description="Serve a built site for preview, on 127.0.0.1 unless --host says otherwise.",
    )
    serve.add_argument("folder", nargs="?", metavar="OUT", help="the built site (default: site)")
    serve.add_argument(
        "--port",
        type=_ranged(0, 65535, "0: any free port"),
        default=8000,
        metavar="N",
        help="port to listen on (0: any free)",
    )
    serve.add_argument(
        "--host",
        default="127.0.0.1",
        metavar="ADDRESS",
        help="address to listen on (default 127.0.0.1; 0.0.0.0 shows the site to your network)",
    )
    serve.add_argument(
        "--watch",
        metavar="SITE.toml|FOLDER",
        help="build this site first, then rebuild it whenever its files change",
    )
    serve.add_argument("--no-pdf", action="store_true", help="with --watch: pages only, for quick previews")
    serve.set_defaults(run=cmd_serve)
