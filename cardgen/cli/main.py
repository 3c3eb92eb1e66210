"""The ``cardgen`` script: parse the command line, run the command, and turn errors
into exit codes. The only place that sets them.

Exit codes: 0 success, 1 the input is wrong (one clear message on stderr), 2 usage.
"""

from __future__ import annotations

import os
import sys

from cardgen.cli.common import _print
from cardgen.cli.parser import build_parser
from cardgen.errors import CardgenError


def _check_source_date_epoch() -> None:
    """SOURCE_DATE_EPOCH (reproducible builds) must be whole seconds from 1970 to 9999;
    anything else is ignored, with a warning, rather than crashing the plot writer."""
    value = os.environ.get("SOURCE_DATE_EPOCH")
    if value is None:
        return
    if not (value.strip().isdigit() and int(value) <= 253402300799):
        _print(
            f"cardgen: warning: SOURCE_DATE_EPOCH={value[:30]!r} is not whole seconds since 1970 "
            "(up to the year 9999); ignored",
            file=sys.stderr,
        )
        del os.environ["SOURCE_DATE_EPOCH"]


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    _check_source_date_epoch()
    try:
        code: int = args.run(args)
        return code
    except CardgenError as exc:
        _print(f"cardgen: error: {exc}", file=sys.stderr)
        return 1
    except OSError as exc:  # the machine's side: disk full, permissions, a vanished folder
        where = f"{exc.filename}: " if exc.filename else ""
        _print(
            f"cardgen: error: {where}{exc.strerror or exc}; nothing was published, the previous output is "
            "unchanged",
            file=sys.stderr,
        )
        return 1
    except KeyboardInterrupt as exc:
        return _interrupted(exc)
    except RuntimeError as exc:
        # Ctrl-C inside a class body being made (a library's first import) reaches us
        # wrapped: "Error calling __set_name__", caused by the KeyboardInterrupt
        if isinstance(exc.__cause__, KeyboardInterrupt):
            return _interrupted(exc.__cause__)
        raise


def _interrupted(exc: KeyboardInterrupt) -> int:
    """The one line for Ctrl-C, and the shell's exit code for SIGINT (130)."""
    message = getattr(exc, "message", "interrupted; nothing was published, the previous output is unchanged")
    _print(f"cardgen: {message}", file=sys.stderr)
    return 130
