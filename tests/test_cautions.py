"""Each caution where it speaks to the sheet it is on: a card without descents shows
no descent speeds, so it does not carry the descents caution; a coach sheet without an
e-assist rider does not carry the e-assist rules. Checked on the demo's printed PDFs."""

from __future__ import annotations

import json
import re
import shutil

import pytest
from buildkit import pdf_text

from cardgen.render.html import ASSIST_CAUTION, DESCENT_CAUTION, DESCENTS_CAUTION, slugify

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs poppler-utils (pdftotext)"),
]


def _start(caution: str) -> str:
    return " ".join(caution.split()[:6])


def test_cautions_speak_to_their_sheet(demo_site):
    _, out, _ = demo_site
    without_descents = with_descents = coach_without_motor = 0
    for plan_file in sorted(out.glob("*/plan.json")):
        folder = plan_file.parent
        plans = json.loads(plan_file.read_text(encoding="utf-8"))["plans"]
        for plan in plans:
            slug = slugify(plan["rider"]["name"], set())
            (pdf,) = [p for p in folder.glob("*.pdf") if re.fullmatch(re.escape(slug) + r"(-\d+)?", p.stem)]
            text = pdf_text(pdf)
            if plan["descents"]:
                with_descents += 1
                assert _start(DESCENT_CAUTION) in text, pdf
            else:
                without_descents += 1
                assert _start(DESCENTS_CAUTION) not in text and _start(DESCENT_CAUTION) not in text, pdf
        if not any(p["totals"]["battery_j"] is not None for p in plans):
            coach_without_motor += 1
            assert _start(ASSIST_CAUTION) not in pdf_text(folder / "coach.pdf"), folder
    # the demo has routes of both kinds (sample_routes/site.toml)
    assert without_descents and with_descents and coach_without_motor


def test_coach_notes_read_as_sentences(demo_site):
    """The coach sheet's notes cell joins a rider's notes as sentences: a note that
    ends in a full stop is not followed by a semicolon (a new user read "…or less.;
    Descents 1: …")."""
    _, out, _ = demo_site
    sheets = sorted(out.glob("*/coach.pdf"))
    texts = [pdf_text(pdf) for pdf in sheets]
    assert sheets and any("slow to" in t for t in texts)  # the demo has curve notes
    assert not any(".;" in t for t in texts)
