"""Packs streamed card by card: the page order, the odd-page starts and the two-up
imposition, on small made-up PDFs whose every page says which card and page it is;
and the written file read back by qpdf (pikepdf) and pypdf, two independent readers."""

from __future__ import annotations

import io
import re
from pathlib import Path

import pikepdf
import pytest
from pypdf import PdfReader

from cardgen.render.packs import A5, PackEntry, PackFiles, write_pack, write_packs, write_two_up
from cardgen.render.pdfjoin import PageWriter


def _doc(label: str, pages: int, inherit: bool = False) -> pikepdf.Pdf:
    """A PDF whose page i draws "label/i" in Helvetica (one font object for all pages).
    ``inherit``: MediaBox and Resources on the page tree's root only."""
    pdf = pikepdf.new()
    font = pdf.make_indirect(
        pikepdf.Dictionary(
            Type=pikepdf.Name.Font, Subtype=pikepdf.Name.Type1, BaseFont=pikepdf.Name.Helvetica
        )
    )
    resources = pikepdf.Dictionary(Font=pikepdf.Dictionary(F1=font))
    for i in range(pages):
        page = pdf.add_blank_page(page_size=A5)
        page.obj.Contents = pdf.make_stream(f"BT /F1 12 Tf 72 300 Td ({label}/{i + 1}) Tj ET".encode())
        page.obj.Resources = resources
    if inherit:
        pdf.Root.Pages.MediaBox = pikepdf.Array([0, 0, 300, 400])
        pdf.Root.Pages.Resources = resources
        for page in pdf.pages:
            del page.obj["/MediaBox"]
            del page.obj["/Resources"]
    return pdf


def _save(pdf: pikepdf.Pdf, path: Path) -> Path:
    pdf.save(path)
    return path


def _labels(data: bytes) -> list[str]:
    """What each page of ``data`` says ("" for a blank page), read by pypdf."""
    return [re.sub(r"\s+", "", p.extract_text()) for p in PdfReader(io.BytesIO(data)).pages]


@pytest.fixture
def cards(tmp_path):
    """A cover of 3 pages and five cards of 1, 2, 3, 4 and 5 pages."""
    cover = io.BytesIO()
    _doc("cover", 3).save(cover)
    entries = [
        PackEntry(f"R{n}", n, "", "route", _save(_doc(f"c{n}", n), tmp_path / f"c{n}.pdf"))
        for n in range(1, 6)
    ]
    return cover.getvalue(), entries


def _expected_pack() -> list[str]:
    """The rule (module notes of render/packs.py): each part padded to an even count."""
    pages = []
    for label, n in [("cover", 3)] + [(f"c{n}", n) for n in range(1, 6)]:
        pages += [f"{label}/{i + 1}" for i in range(n)] + [""] * (n % 2)
    return pages


def test_pack_keeps_order_and_starts_every_card_on_an_odd_page(cards):
    cover, entries = cards
    sink = io.BytesIO()
    write_pack(cover, entries, sink, "all-cards", A5)
    labels = _labels(sink.getvalue())
    assert labels == _expected_pack()
    firsts = [i + 1 for i, t in enumerate(labels) if t.endswith("/1")]
    assert firsts == [1, 5, 7, 9, 13, 17] and all(f % 2 == 1 for f in firsts)
    with pikepdf.open(io.BytesIO(sink.getvalue())) as pdf:  # qpdf reads it without repairs
        assert pdf.check_pdf_syntax() == []
        assert str(pdf.docinfo["/Title"]) == "all-cards"


def _sheets(data: bytes) -> list[tuple[str, str]]:
    """(left half, right half) of every sheet: which form is drawn at x = 0 and at
    x = A5 width, and what that form's page says (its content stream, read by qpdf)."""
    out = []
    with pikepdf.open(io.BytesIO(data)) as pdf:
        for page in pdf.pages:
            assert [round(float(x)) for x in page.mediabox] == [0, 0, 842, 595]
            ops = page.obj.Contents.read_bytes().decode()
            halves = {"0.00": "", f"{A5[0]:.2f}": ""}
            for x, name in re.findall(r"1 0 0 1 ([\d.]+) 0 cm (/P\d) Do", ops):
                text = page.obj.Resources.XObject[name].read_bytes().decode()
                halves[x] = re.search(r"\((.*?)\) Tj", text).group(1)
            out.append((halves["0.00"], halves[f"{A5[0]:.2f}"]))
    return out


def test_two_up_pairs_cards_for_cut_and_stack(cards):
    """Cards in pairs (A, B), the cover a card: a sheet's front carries A's page on the
    left and B's on the right, its back B's on the left and A's on the right (a
    short-edge flip); the pair takes the longer card's (padded) count of sheets."""
    cover, entries = cards
    sink = io.BytesIO()
    write_two_up(cover, entries, sink, "all-cards-2up")
    docs = [("cover", 3)] + [(f"c{n}", n) for n in range(1, 6)]
    expected = []
    for (a, na), (b, nb) in zip(docs[::2], docs[1::2], strict=True):
        for i in range(max(na + na % 2, nb + nb % 2)):
            pa = f"{a}/{i + 1}" if i < na else ""
            pb = f"{b}/{i + 1}" if i < nb else ""
            expected.append((pa, pb) if i % 2 == 0 else (pb, pa))
    assert _sheets(sink.getvalue()) == expected
    assert expected[:4] == [("cover/1", "c1/1"), ("", "cover/2"), ("cover/3", ""), ("", "")]


def test_a_card_left_alone_gets_sheets_of_its_own(cards):
    cover, entries = cards
    sink = io.BytesIO()
    write_two_up(cover, entries[:2], sink, "all-cards-2up")  # cover, c1 | c2 alone
    assert _sheets(sink.getvalue())[-2:] == [("c2/1", ""), ("", "c2/2")]


def test_inherited_attributes_move_onto_the_page_and_shared_objects_are_written_once(tmp_path):
    sink = io.BytesIO()
    writer = PageWriter(sink)
    with _doc("x", 3, inherit=True) as pdf:
        assert writer.add_pages(pdf) == 3
    writer.add_blank(A5)
    writer.finish("t")
    with pikepdf.open(io.BytesIO(sink.getvalue())) as out:
        assert len(out.pages) == 4
        assert [round(float(x)) for x in out.pages[0].obj.MediaBox] == [0, 0, 300, 400]
        fonts = {page.obj.Resources.Font.F1.objgen for page in out.pages[:3]}
        assert len(fonts) == 1  # one font object, as in the source
        assert [round(float(x)) for x in out.pages[3].mediabox] == [0, 0, 420, 595]
    assert _labels(sink.getvalue()) == ["x/1", "x/2", "x/3", ""]


def test_a_link_to_another_page_points_at_that_page_in_the_output():
    with _doc("y", 2) as pdf:
        target = pdf.pages[1].obj
        link = pikepdf.Dictionary(
            Type=pikepdf.Name.Annot,
            Subtype=pikepdf.Name.Link,
            Rect=[0, 0, 10, 10],
            Dest=pikepdf.Array([target, pikepdf.Name.Fit]),
        )
        pdf.pages[0].obj.Annots = pdf.make_indirect(pikepdf.Array([pdf.make_indirect(link)]))
        sink = io.BytesIO()
        writer = PageWriter(sink)
        writer.add_pages(pdf)
        writer.finish("t")
    with pikepdf.open(io.BytesIO(sink.getvalue())) as out:
        dest = out.pages[0].obj.Annots[0].Dest[0]
        assert dest.objgen == out.pages[1].obj.objgen
        assert len(out.Root.Pages.Kids) == 2  # the linked page is not added twice


def test_same_input_gives_the_same_bytes(cards):
    cover, entries = cards
    runs = []
    for _ in range(2):
        sink = io.BytesIO()
        write_pack(cover, entries, sink, "all-cards", A5)
        runs.append(sink.getvalue())
    assert runs[0] == runs[1]
    assert b"/ID [ <" in runs[0]


def test_names_and_strings_keep_their_escapes():
    """A name with a space and a string with parentheses and a backslash survive."""
    sink = io.BytesIO()
    with _doc("z", 1) as pdf:
        pdf.pages[0].obj["/Odd Key"] = pikepdf.String("a (b) \\ c")
        writer = PageWriter(sink)
        writer.add_pages(pdf)
        writer.finish("t (1)")
    with pikepdf.open(io.BytesIO(sink.getvalue())) as out:
        assert str(out.pages[0].obj["/Odd Key"]) == "a (b) \\ c"
        assert str(out.docinfo["/Title"]) == "t (1)"


def test_a_page_of_several_content_streams_is_drawn_whole_on_its_sheet(tmp_path):
    """Content split over two streams (qpdf then makes the form): both parts drawn."""
    pdf = _doc("w", 1)
    page = pdf.pages[0].obj
    page.Contents = pikepdf.Array(
        [pdf.make_stream(b"BT /F1 12 Tf 72 300 Td"), pdf.make_stream(b"(w/1) Tj ET")]
    )
    cover = io.BytesIO()
    _doc("cover", 1).save(cover)
    entry = PackEntry("W", 1, "", "route", _save(pdf, tmp_path / "w.pdf"))
    sink = io.BytesIO()
    write_two_up(cover.getvalue(), [entry], sink, "all-cards-2up")
    assert _sheets(sink.getvalue()) == [("cover/1", "w/1"), ("", "")]


# Written by a fresh interpreter: pikepdf gives a dictionary's keys as a set, whose
# order follows the string hash, so the bytes must not depend on PYTHONHASHSEED.
SEEDED = r"""
import hashlib, io, sys
import pikepdf
from cardgen.render.packs import A5
from cardgen.render.pdfjoin import PageWriter
pdf = pikepdf.new()
for i in range(3):
    page = pdf.add_blank_page(page_size=A5)
    page.obj.Contents = pdf.make_stream(b"0 0 m 10 10 l S")
    for key in ("Alpha", "Beta", "Gamma", "Delta", "Epsilon", "Zeta", "Eta", "Theta"):
        page.obj[pikepdf.Name("/" + key + str(i))] = pdf.make_indirect(pikepdf.Dictionary(K=i))
sink = io.BytesIO()
writer = PageWriter(sink)
writer.add_pages(pdf)
writer.finish("seeded")
print(hashlib.sha256(sink.getvalue()).hexdigest())
"""


def test_the_bytes_do_not_depend_on_the_string_hash_seed():
    """The same pages written under three hash seeds: one file (DEVELOPERS: the same
    inputs give the same bytes). Failed while keys were read in pikepdf's set order."""
    import os
    import subprocess
    import sys

    root = Path(__file__).resolve().parent.parent
    digests = {
        subprocess.run(
            [sys.executable, "-c", SEEDED],
            capture_output=True,
            text=True,
            check=True,
            env={**os.environ, "PYTHONHASHSEED": seed, "PYTHONPATH": str(root)},
        ).stdout.strip()
        for seed in ("1", "2", "3")
    }
    assert len(digests) == 1


def test_one_pass_writes_each_pack_as_a_pass_of_its_own_would_and_reads_each_card_once(
    cards, tmp_path, monkeypatch
):
    """Two routes' packs and the event's (the routes' cards one after the other), each
    as it is and two-up, written together: the same bytes as each file written on
    its own, and every card file opened once (not four times)."""
    cover, entries = cards
    routes = [tuple(entries[:3]), tuple(entries[3:])]  # 3 cards (an odd count: pairs shift) and 2
    everyone = tuple(entries)
    alone = []
    for members in (*routes, everyone):
        flat, two = io.BytesIO(), io.BytesIO()
        write_pack(cover, members, flat, "all-cards", A5)
        write_two_up(cover, members, two, "all-cards-2up")
        alone += [flat.getvalue(), two.getvalue()]
    opened: list[str] = []
    real_open = pikepdf.open

    def counted(source, *args, **kwargs):
        if isinstance(source, Path):
            opened.append(source.name)
        return real_open(source, *args, **kwargs)

    monkeypatch.setattr(pikepdf, "open", counted)
    sinks = [io.BytesIO() for _ in range(6)]
    write_packs(
        [
            PackFiles(cover, members, A5, sinks[2 * k], sinks[2 * k + 1])
            for k, members in enumerate((*routes, everyone))
        ]
    )
    assert [s.getvalue() for s in sinks] == alone
    assert sorted(opened) == sorted(e.pdf.name for e in entries)


def test_a_pack_out_of_the_common_order_gets_a_pass_of_its_own(cards):
    cover, entries = cards
    backwards = tuple(reversed(entries))
    expected = io.BytesIO()
    write_pack(cover, backwards, expected, "all-cards", A5)
    sinks = [io.BytesIO(), io.BytesIO()]
    write_packs(
        [
            PackFiles(cover, tuple(entries), A5, sinks[0], None),
            PackFiles(cover, backwards, A5, sinks[1], None),
        ]
    )
    assert sinks[1].getvalue() == expected.getvalue()
    assert _labels(sinks[1].getvalue())[4:6] == ["c5/1", "c5/2"]  # after the cover of 3 pages and its blank
