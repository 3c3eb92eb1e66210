"""A coach sheet of many riders is laid out a few groups at a time and joined
(cardgen/render/pdf.parts_pdf): the joined PDF reads as the one-layout PDF does."""

from __future__ import annotations

import dataclasses
import io
import subprocess
from pathlib import Path

import pikepdf
import pytest

from cardgen.render.pdf import parts_pdf, pdf_bytes


def _page(title: str, words: list[str]) -> str:
    body = "".join(f'<p style="break-after: page">{w}</p>' for w in words[:-1]) + f"<p>{words[-1]}</p>"
    return f"<!DOCTYPE html><html lang='en'><head><title>{title}</title></head><body>{body}</body></html>"


def _text(data: bytes, tmp_path: Path) -> list[str]:
    path = tmp_path / "x.pdf"
    path.write_bytes(data)
    text = subprocess.run(["pdftotext", str(path), "-"], capture_output=True, text=True, check=True).stdout
    return [page.strip() for page in text.split("\f") if page.strip()]


def test_parts_join_in_order_with_the_first_parts_title_and_tags(tmp_path):
    parts = (_page("Sheet", ["alpha", "bravo"]), _page("other", ["charlie"]), _page("x", ["delta", "echo"]))
    data = parts_pdf(parts, tmp_path)
    assert _text(data, tmp_path) == ["alpha", "bravo", "charlie", "delta", "echo"]
    with pikepdf.open(io.BytesIO(data)) as pdf:
        assert len(pdf.pages) == 5
        assert "/StructTreeRoot" in pdf.Root and str(pdf.Root.Lang) == "en"
        assert str(pdf.docinfo["/Title"]) == "Sheet"
    # one part is what pdf_bytes gives, joined or not
    assert _text(parts_pdf(parts[:1], tmp_path), tmp_path) == _text(
        pdf_bytes(parts[0], tmp_path)[0], tmp_path
    )


@pytest.mark.slow
def test_a_coach_sheet_in_parts_reads_as_one_layout(tmp_path, monkeypatch):
    """The demo's hill loop with one rider to a group (a group per rider): laid out a
    group at a time and all at once, the coach sheets' text and pages are the same,
    and the group headings count on across the parts."""
    from cardgen.build import build_site
    from cardgen.config import load_config
    from cardgen.paths import demo_site
    from cardgen.render import pages

    config = load_config(demo_site())
    hill = dataclasses.replace(
        config, routes=tuple(r for r in config.routes if r.gpx.name == "hill-loop.gpx")
    )
    monkeypatch.setattr(pages, "COACH_GROUP", 1)
    sheets = {}
    for groups in (1, 100):
        monkeypatch.setattr(pages, "COACH_LAYOUT_GROUPS", groups)
        out = tmp_path / f"site-{groups}"
        build_site(hill, out, jobs=1)
        sheets[groups] = _text((out / "hill-loop" / "coach.pdf").read_bytes(), tmp_path)
    assert sheets[1] == sheets[100]
    riders = [line for page in sheets[1] for line in page.splitlines() if ": riders " in line]
    (route,) = hill.routes
    n = sum(1 for r in hill.riders if r.rides(route, route.name or route.gpx.stem))
    assert n >= 3 and len(riders) == n and riders[-1].endswith(f"riders {n}–{n} of {n}")


def test_parts_made_in_worker_processes_join_to_the_same_bytes(tmp_path):
    """With --jobs 2 the build lays each part out in a worker of its own and joins
    them (build/pipeline._render_parted): the sheet is byte for byte what parts_pdf
    makes in one process, beside a card laid out whole."""
    from cardgen.build.pipeline import PackedCard, _render_cards
    from cardgen.render.pages import CardSource

    parts = (_page("Sheet", ["alpha", "bravo"]), _page("other", ["charlie"]), _page("x", ["delta", "echo"]))
    sheet = CardSource(parts[0], str(tmp_path), str(tmp_path / "coach.pdf"), parts=parts)
    whole = CardSource(_page("Card", ["one"]), str(tmp_path), str(tmp_path / "card.pdf"))
    seen: list[str] = []
    _render_cards(
        [PackedCard.of(whole), PackedCard.of(sheet)], 2, tmp_path, lambda done, total, name: seen.append(name)
    )
    assert (tmp_path / "coach.pdf").read_bytes() == parts_pdf(parts, tmp_path)
    assert _text((tmp_path / "card.pdf").read_bytes(), tmp_path) == ["one"]
    assert sorted(seen) == ["card.pdf", "coach.pdf"]  # each card reported once
