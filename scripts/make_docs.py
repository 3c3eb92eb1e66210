"""The pictures in docs/, made from the demo (never by hand): `make docs`.

Builds the bundled demo three times (A5, large print, pocket) into a temporary
folder, then draws with poppler's pdftoppm: both pages of an A5 card, page 1 of a
large-print card and of a pocket card; and, with headless Chromium where it is
installed, the demo's route page.
"""

from __future__ import annotations

import dataclasses
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from cardgen.build import build_site
from cardgen.config import load_config

DOCS = Path(__file__).resolve().parents[1] / "docs"
ROUTE, RIDER = "hill-loop", "priya-e-assist-cargo"


def _pages(pdf: Path, stem: str, first: int, last: int) -> None:
    subprocess.run(
        ["pdftoppm", "-png", "-r", "110", "-f", str(first), "-l", str(last), str(pdf), str(DOCS / stem)],
        check=True,
    )


def main() -> int:
    if shutil.which("pdftoppm") is None:
        print("make docs needs poppler-utils (pdftoppm)", file=sys.stderr)
        return 1
    demo = DOCS.parent / "sample_routes" / "site.toml"
    base = load_config(demo)
    with tempfile.TemporaryDirectory() as tmp:
        for label, changes in (
            ("a5", {}),
            ("large-print", {"large_print": True}),
            ("pocket", {"card_size": "pocket"}),
        ):
            out = Path(tmp) / label
            config = dataclasses.replace(base, **changes)
            build_site(config, out, jobs=2)
            card = out / ROUTE / f"{RIDER}.pdf"
            if label == "a5":
                _pages(card, "card-a5", 1, 2)  # card-a5-1.png, card-a5-2.png
                chromium = shutil.which("chromium") or shutil.which("chromium-browser")
                if chromium:
                    subprocess.run(
                        [
                            chromium,
                            "--headless",
                            "--no-sandbox",
                            "--disable-gpu",
                            "--hide-scrollbars",
                            "--window-size=1200,1800",
                            f"--screenshot={DOCS / 'route-page.png'}",
                            (out / ROUTE / "index.html").as_uri(),
                        ],
                        check=True,
                        capture_output=True,
                    )
            else:
                _pages(card, f"card-{label}", 1, 1)
    for old in ("card-page-1.png",):
        (DOCS / old).unlink(missing_ok=True)
    print("docs/: " + ", ".join(sorted(p.name for p in DOCS.glob("*.png"))))
    return 0


if __name__ == "__main__":
    sys.exit(main())
