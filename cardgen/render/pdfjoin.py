"""A PDF written page by page from other PDFs, holding one or two of them at a time.

Joining with a library's page copy (qpdf's, through pikepdf) keeps every source open
until the joined file is saved: a pack of 300 cards held 760 MiB, and 3,000 would
not fit in a worker's gigabyte. :class:`PageWriter` instead writes each object of a
source's pages to the output as soon as it is reached, renumbered, and forgets the
source when the caller closes it: what it keeps is one offset per object written
(8 bytes) and one number per page.

A source is read once (:class:`Source`): each object it reaches is turned into its
PDF text with the references left open, so one card goes into several packs (its
route's and the event's, each as it is and two-up) for the price of one reading;
each pack numbers the references as it writes them.

The output is a plain PDF (ISO 32000-1 §7.5: header, indirect objects, one
cross-reference table, trailer) with one flat page tree. Stream data is copied as it
is stored (still compressed, never decoded; a stream without a filter is
compressed). A page's inheritable attributes
(§7.7.3.4: Resources, MediaBox, CropBox, Rotate) are written on the page itself, as
qpdf does when it copies a page out of its tree. The file identifier is the MD5 of
the bytes before the trailer, so the same input gives the same file.
"""

from __future__ import annotations

import functools
import hashlib
import zlib
from array import array
from collections import deque
from decimal import Decimal
from typing import Any, BinaryIO

#: Page attributes a page inherits from its ancestors in the page tree.
INHERITED = ("/Resources", "/MediaBox", "/CropBox", "/Rotate")
#: Object numbers of the catalogue and the page tree's root, written last.
CATALOG, PAGES = 1, 2


class Source:
    """A PDF read once, for any number of :class:`PageWriter`: each page as a page and
    as a form XObject, and every object these reach, as PDF text whose references are
    left open (*templates*: byte strings, and the (object, generation) keys of the
    source's objects in the order they appear). The PDF (an open ``pikepdf.Pdf``) is
    read while this is made and may be closed after."""

    def __init__(self, pdf) -> None:
        self.pages: list[tuple[int, int]] = []  # each page's key
        self.page_bodies: list[list] = []  # each page as a page of the output's tree
        self.forms: list[tuple[str, Any]] = []  # each page as a form: ("body", template) or ("ref", key)
        self.objects: dict[tuple[int, int], list] = {}  # key → template of the object's body
        self._pdf = pdf
        for page in pdf.pages:
            entries = _page_dict(page.obj)
            self.pages.append(page.obj.objgen)
            self.page_bodies.append(
                [
                    b"<< /Type /Page /Parent 2 0 R ",
                    *self._entries([(k, v) for k, v in entries.items() if k != "/Type"]),
                    b" >>",
                ]
            )
            self.forms.append(self._form(page, entries))
        done: set = set()
        todo = [
            piece
            for t in (*self.page_bodies, *(f for kind, f in self.forms if kind == "body"))
            for piece in t
            if type(piece) is tuple
        ]
        todo += [f for kind, f in self.forms if kind == "ref"]
        while todo:  # every object the pages reach, each once
            key = todo.pop()
            if key in done:
                continue
            done.add(key)
            template = self.objects[key] = self._object(pdf.get_object(key))
            todo.extend(piece for piece in template if type(piece) is tuple)
        self._pdf = None

    def _form(self, page, entries: dict) -> tuple[str, Any]:
        """The page as a form XObject (ISO 32000-1 §8.10): its content stream as stored
        (not decoded), its resources, and its trim box (else crop box, else media
        box) as the form's bounding box, as qpdf's form of a page has. A page of
        several content streams or turned (/Rotate) is left to qpdf
        (``as_form_xobject``)."""
        import pikepdf

        contents = entries.get("/Contents")
        if contents is None or not _is(contents, "stream") or entries.get("/Rotate", 0) % 360:
            form = pikepdf.Page(page).as_form_xobject()
            return "ref", (form if form.is_indirect else self._pdf.make_indirect(form)).objgen
        box = next(entries[k] for k in ("/TrimBox", "/CropBox", "/MediaBox") if k in entries)
        head = [("/Type", pikepdf.Name.XObject), ("/Subtype", pikepdf.Name.Form), ("/BBox", box)]
        head += [(k, entries[k]) for k in ("/Resources",) if k in entries]
        stored = contents.stream_dict
        head += [(k, stored.get(k)) for k in ("/Filter", "/DecodeParms") if k in stored]
        data = contents.read_raw_bytes()
        return "body", [
            b"<< ",
            *self._entries(head),
            b" /Length %d >>\nstream\n%s\nendstream" % (len(data), data),
        ]

    def _object(self, obj) -> list:
        """The body of an indirect object."""
        if not _is(obj, "stream"):
            return self._direct(obj, top=True)
        data = obj.read_raw_bytes()
        entries = obj.stream_dict
        head = self._entries([(k, entries.get(k)) for k in sorted(entries.keys()) if k != "/Length"])
        if "/Filter" not in entries:  # made here (a form of a page): compress it, as qpdf saves
            data = zlib.compress(data)
            head.append(b" /Filter /FlateDecode")
        return [b"<< ", *head, b" /Length %d >>\nstream\n%s\nendstream" % (len(data), data)]

    def _entries(self, items: list[tuple[str, Any]]) -> list:
        out: list = []
        for k, v in items:
            if out:
                out.append(b" ")
            out.append(_name(k) + b" ")
            out += self._direct(v)
        return out

    def _direct(self, value, top: bool = False) -> list:
        """``value`` in PDF syntax, indirect objects inside it as open references."""
        if isinstance(value, bool):
            return [b"true" if value else b"false"]
        if isinstance(value, int):
            return [b"%d" % value]
        if isinstance(value, Decimal):
            return [_real(value)]
        if value is None:
            return [b"null"]
        if not top and value.is_indirect:
            return [value.objgen]
        text = bytes(value.unparse(resolved=True))
        if b" R" not in text:  # nothing inside refers to another object: qpdf's own syntax
            return [text]
        if _is(value, "dictionary"):
            page = value.get("/Type") == "/Page"  # a page that is not copied: no tree
            items = [(k, value.get(k)) for k in sorted(value.keys()) if not (page and k == "/Parent")]
            return [b"<< ", *self._entries(items), b" >>"]
        if _is(value, "array"):
            out: list = [b"[ "]
            for i, v in enumerate(value):
                if i:
                    out.append(b" ")
                out += self._direct(v)
            return [*out, b" ]"]
        return [text]  # a name or a string


class PageWriter:
    """Write a PDF into ``sink`` (a binary file open for writing) one page at a time.

    Add pages with :meth:`add_pages` (all pages of a source), :meth:`add_blank` and
    :meth:`add_sheet`; then :meth:`finish`. Objects of a source are numbered in a
    table of their own (:meth:`forget` drops it once the source is done with), so
    an object shared by pages of one source is written once. A source is a
    :class:`Source` (read once, for several writers) or an open ``pikepdf.Pdf``."""

    def __init__(self, sink: BinaryIO):
        self._sink = sink
        self._md5 = hashlib.md5(usedforsecurity=False)
        self._offsets = array("Q", [0, 0, 0])  # [0] is the free entry; 1 and 2 are reserved
        self._position = 0
        self._kids: list[int] = []
        self._tables: dict[int, dict[tuple[int, int], int]] = {}
        self._queue: deque[tuple[int, list, Source]] = deque()
        self._emit(b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n")

    @property
    def pages(self) -> int:
        """Pages written so far."""
        return len(self._kids)

    def add_pages(self, source) -> int:
        """Every page of ``source``, in order; returns their count. References from
        one page to another of the same source stay pages. The source's numbering is
        dropped afterwards."""
        source = _read(source)
        table = self._tables.setdefault(id(source), {})
        for key in source.pages:  # numbered first: a link from one page to another stays a page
            self._kids.append(table.setdefault(key, self._new()))
        for key, body in zip(source.pages, source.page_bodies, strict=True):
            self._queue.append((table[key], body, source))
        self._drain()
        self.forget(source)
        return len(source.pages)

    def add_blank(self, size: tuple[float, float]) -> None:
        """An empty page of ``size`` (width, height) [pt]."""
        number = self._new()
        self._kids.append(number)
        self._object(number, b"<< /Type /Page /Parent 2 0 R /MediaBox %s /Resources << >> >>" % _box(size))

    def add_sheet(
        self, size: tuple[float, float], forms: list[tuple[str, Source, int]], content: str
    ) -> None:
        """A page of ``size`` whose ``content`` (page description operators) draws
        pages as form XObjects (:meth:`Source._form`): ``forms`` are (name under
        ``/XObject``, source, page index) each."""
        refs = [b"%s %s" % (_name(name), self._form(source, index)) for name, source, index in forms]
        stream = content.encode("ascii")
        contents = self._new()
        self._object(contents, b"<< /Length %d >>\nstream\n%s\nendstream" % (len(stream), stream))
        number = self._new()
        self._kids.append(number)
        self._object(
            number,
            b"<< /Type /Page /Parent 2 0 R /MediaBox %s /Resources << /XObject << %s >> >> /Contents %d 0 R >>"
            % (_box(size), b" ".join(refs), contents),
        )
        self._drain()

    def _form(self, source: Source, index: int) -> bytes:
        """A reference to page ``index`` of ``source`` drawn as a form XObject."""
        kind, form = source.forms[index]
        if kind == "ref":
            return self._number(form, source)
        number = self._new()
        self._object(number, self._fill(form, source))
        return b"%d 0 R" % number

    def forget(self, source) -> None:
        """Drop the numbering of ``source`` (call it when a source given to
        :meth:`add_sheet` is done with: numberings are kept by the source's identity)."""
        self._tables.pop(id(source), None)

    def finish(self, title: str) -> None:
        """The page tree, the catalogue, the document information and the trailer."""
        kids = b" ".join(b"%d 0 R" % k for k in self._kids)
        self._object(PAGES, b"<< /Type /Pages /Kids [ %s ] /Count %d >>" % (kids, len(self._kids)))
        self._object(CATALOG, b"<< /Type /Catalog /Pages 2 0 R >>")
        info = self._new()
        self._object(info, b"<< /Title %s >>" % _string(title))
        start = self._position
        lines = [b"xref\n0 %d\n0000000000 65535 f \n" % len(self._offsets)]
        lines += [b"%010d 00000 n \n" % offset for offset in self._offsets[1:]]
        self._emit(b"".join(lines))
        ident = self._md5.hexdigest().upper().encode("ascii")
        self._sink.write(
            b"trailer\n<< /Size %d /Root 1 0 R /Info %d 0 R /ID [ <%s> <%s> ] >>\nstartxref\n%d\n%%%%EOF\n"
            % (len(self._offsets), info, ident, ident, start)
        )

    # -- writing ------------------------------------------------------------------

    def _new(self) -> int:
        self._offsets.append(0)
        return len(self._offsets) - 1

    def _emit(self, data: bytes) -> None:
        self._sink.write(data)
        self._md5.update(data)
        self._position += len(data)

    def _object(self, number: int, body: bytes) -> None:
        self._offsets[number] = self._position
        self._emit(b"%d 0 obj\n%s\nendobj\n" % (number, body))

    def _drain(self) -> None:
        """Write every queued object, and what each reaches that is not written yet."""
        while self._queue:
            number, template, source = self._queue.popleft()
            self._object(number, self._fill(template, source))

    def _fill(self, template: list, source: Source) -> bytes:
        """``template`` with its references numbered (each new object numbered and
        queued once, in the order it appears)."""
        return b"".join(piece if type(piece) is bytes else self._number(piece, source) for piece in template)

    def _number(self, key: tuple[int, int], source: Source) -> bytes:
        """A reference to object ``key`` of ``source``, numbered (and queued) once."""
        table = self._tables.setdefault(id(source), {})
        if key not in table:
            table[key] = self._new()
            self._queue.append((table[key], source.objects[key], source))
        return b"%d 0 R" % table[key]


def _read(source) -> Source:
    return source if isinstance(source, Source) else Source(source)


def _page_dict(page) -> dict[str, Any]:
    """The page's own entries with its inherited ones, without its parent."""
    entries = {key: page.get(key) for key in sorted(page.keys()) if key != "/Parent"}
    node = page.get("/Parent")
    while node is not None and any(key not in entries for key in INHERITED):
        for key in INHERITED:
            if key not in entries and key in node:
                entries[key] = node.get(key)
        node = node.get("/Parent")
    return entries


def _is(obj, kind: str) -> bool:
    return getattr(obj, "_type_name", "") == kind


@functools.lru_cache(maxsize=4096)
def _name(key: str) -> bytes:
    import pikepdf

    return bytes(pikepdf.Name(key).unparse())


def _string(text: str) -> bytes:
    import pikepdf

    return bytes(pikepdf.String(text).unparse())


def _real(value: Decimal) -> bytes:
    text = format(value, "f")
    if "." in text:
        text = text.rstrip("0").rstrip(".") or "0"
    return text.encode("ascii")


def _box(size: tuple[float, float]) -> bytes:
    return b"[ 0 0 %s %s ]" % (_real(Decimal(f"{size[0]:.2f}")), _real(Decimal(f"{size[1]:.2f}")))
