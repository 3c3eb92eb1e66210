"""Card options: imperial units, large print, A4 and the pocket strip."""

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from buildkit import font_sizes
from pypdf import PdfReader

from cardgen.build import build_site
from cardgen.config import load_config

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
needs_poppler = pytest.mark.skipif(shutil.which("pdfinfo") is None, reason="poppler-utils is not installed")


def _site(tmp_path: Path, site: str) -> Path:
    src = tmp_path / "src"
    src.mkdir(parents=True)
    shutil.copy(SAMPLES / "hill-loop.gpx", src)
    (src / "site.toml").write_text(
        f'[site]\n{site}\n[[routes]]\ngpx = "hill-loop.gpx"\n'
        '[[riders]]\nname = "Rider"\nvehicle = "road-hoods"\n',
        encoding="utf-8",
    )
    out = tmp_path / "out"
    build_site(load_config(src / "site.toml"), out, jobs=1)
    return out


def _page_size_mm(pdf: Path):
    box = PdfReader(pdf).pages[0].mediabox
    return float(box.width) * 25.4 / 72, float(box.height) * 25.4 / 72


@needs_poppler
def test_imperial_units_on_page_and_card(tmp_path):
    out = _site(tmp_path, 'units = "imperial"')
    page = (out / "hill-loop" / "index.html").read_text(encoding="utf-8")
    assert " mi" in page and " mph" in page and " ft" in page
    assert " km/h" not in page
    text = subprocess.run(
        ["pdftotext", str(out / "hill-loop" / "rider.pdf"), "-"], capture_output=True, text=True, check=True
    ).stdout
    assert "mph" in text and re.search(r"\d+\.\d mi", text)
    # no metric unit anywhere: every page and every PDF (card, coach sheet, packs)
    metric = re.compile(r"\d\s?(km|m|kph)\b|km/h|\(km\)|\(m\)")
    for html in out.rglob("*.html"):
        shown = re.sub(r"<[^>]+>", " ", html.read_text(encoding="utf-8"))
        assert not metric.search(shown), (html, metric.search(shown))
    for pdf in out.rglob("*.pdf"):
        words = subprocess.run(
            ["pdftotext", str(pdf), "-"], capture_output=True, text=True, check=True
        ).stdout
        assert not metric.search(words), (pdf, metric.search(words))


@pytest.mark.parametrize("size, mm", [("A4", (210, 297)), ("pocket", (99, 210)), ("A5", (148, 210))])
def test_card_sizes(tmp_path, size, mm):
    out = _site(tmp_path, f'card_size = "{size}"')
    assert _page_size_mm(out / "hill-loop" / "rider.pdf") == pytest.approx(mm, abs=0.5)


def test_large_print_body_is_at_least_14_pt(tmp_path):
    normal = font_sizes(_site(tmp_path / "n", "large_print = false") / "hill-loop" / "rider.pdf")
    large_pdf = _site(tmp_path / "l", "large_print = true") / "hill-loop" / "rider.pdf"
    large = font_sizes(large_pdf)
    # the body: the size that carries most of the text (cautions included on large print)
    assert large.most_common(1)[0][0] >= 14
    assert normal.most_common(1)[0][0] < 14
    # table headings are a little smaller than the body, never below 11.5 pt
    share_small = sum(n for size, n in large.items() if size < 11.5) / sum(large.values())
    assert share_small < 0.1, large
    text = subprocess.run(
        ["pdftotext", str(large_pdf), "-"], capture_output=True, text=True, check=True
    ).stdout
    assert "medical condition" in text and "road rules apply" in text  # (no motor: no e-assist caution)


def test_base_url_puts_a_qr_code_on_each_card(tmp_path):
    out = _site(tmp_path, 'base_url = "https://rides.example.invalid/spring"')
    qr = out / "hill-loop" / "qr.svg"
    assert qr.is_file() and "<svg" in qr.read_text()
    # the card embeds it: the PDF grows by the code's drawing compared with a card without one
    plain = _site(tmp_path / "plain", "") / "hill-loop" / "rider.pdf"
    assert (out / "hill-loop" / "rider.pdf").stat().st_size > plain.stat().st_size
    text = (out / "hill-loop" / "index.html").read_text()
    assert "qr.svg" not in text  # the page itself needs no code to its own address
