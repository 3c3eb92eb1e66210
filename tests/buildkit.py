"""Helpers shared by the build, print and failure tests."""

from __future__ import annotations

import contextlib
import hashlib
import subprocess
import sys
import time
from collections import Counter
from pathlib import Path


def cardgen_command() -> list[str]:
    """The command that runs the cardgen these tests import: the installed ``cardgen``
    script, or ``python -m cardgen`` when the suite runs against a checkout
    (make check, with PYTHONPATH pointing at it)."""
    import cardgen

    here = Path(cardgen.__file__).resolve()
    exe = Path(sys.executable).with_name("cardgen")
    if "site-packages" in here.parts and exe.is_file():
        return [str(exe)]
    return [sys.executable, "-m", "cardgen"]


def snapshot(folder: Path) -> dict:
    """Every file under ``folder`` by its SHA-256: equal snapshots are equal bytes."""
    return {
        p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


def leftovers(out: Path) -> list[str]:
    """Temporary or moved-aside folders a build left beside ``out``."""
    return [p.name for p in out.parent.iterdir() if ".cardgen-tmp-" in p.name or ".cardgen-old-" in p.name]


def wait_until_rendering(out: Path, timeout: float = 60.0) -> None:
    """Return once a build has created its temporary folder beside ``out`` (plus a
    moment, so that it is busy rendering)."""
    deadline = time.time() + timeout
    while time.time() < deadline and not any(".cardgen-tmp-" in p.name for p in out.parent.iterdir()):
        time.sleep(0.01)
    time.sleep(0.2)


@contextlib.contextmanager
def serving(*args: str):
    """Run ``cardgen serve ARGS --port 0``; yield its base URL; stop it afterwards."""
    proc = subprocess.Popen(
        [*cardgen_command(), "serve", *args, "--port", "0"],
        stdout=subprocess.PIPE,
        stderr=subprocess.DEVNULL,
        text=True,
    )
    try:
        line = proc.stdout.readline()
        assert "http://127.0.0.1:" in line, line
        yield line.split("at ")[1].split(" ")[0]
    finally:
        proc.terminate()
        proc.wait(timeout=10)
        proc.stdout.close()


def font_sizes(pdf: Path) -> Counter:
    """Effective font sizes [pt] of the text on a PDF's pages, counted by characters
    (pypdf's text visitor: the font size × the text and current matrices' scale)."""
    from pypdf import PdfReader

    sizes: Counter = Counter()
    for page in PdfReader(pdf).pages:

        def visit(text, cm, tm, font, size):
            if text.strip():
                sizes[round(size * (abs(tm[3] * cm[3]) or 1.0), 1)] += len(text.strip())

        page.extract_text(visitor_text=visit)
    return sizes


def pdf_text(pdf: Path, layout: bool = False) -> str:
    """A PDF's text with every run of white space one space: in reading order
    (pdftotext), or as laid out (``layout``, pdftotext -layout)."""
    mode = ["-layout"] if layout else []
    raw = subprocess.run(
        ["pdftotext", *mode, str(pdf), "-"], capture_output=True, text=True, check=True
    ).stdout
    return " ".join(raw.split())
