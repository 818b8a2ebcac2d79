"""The printable review pack printed to PDF by Chromium (page.pdf) on A4 and on Letter:
the page count follows from the laid-out height, nothing runs off the page, and the
text of every table cell is in the PDF (pypdf reads it back)."""

import io
import math
import re
import unicodedata

import pytest

from tests.support.browser import ARTIFACTS

pytestmark = pytest.mark.browser

MM = 96 / 25.4  # CSS px per mm (CSS: 96 px to the inch)
MARGIN_MM = 12  # the pack's @page margin
# paper sizes, mm: ISO 216 (A4) and ANSI/ASME Y14.1 (Letter, 8.5 x 11 in)
PAPER = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}


def _words(text: str) -> list[str]:
    return [w for w in re.split(r"\s+", text) if len(w) >= 3]


@pytest.mark.parametrize("paper", list(PAPER))
def test_pack_prints_on_the_paper(browser, demo_pack, tmp_path, paper):
    pypdf = pytest.importorskip("pypdf")
    page_file = tmp_path / "pack.html"
    page_file.write_text(demo_pack["html"], encoding="utf-8")
    width_mm, height_mm = PAPER[paper]
    inner_w = (width_mm - 2 * MARGIN_MM) * MM
    inner_h = (height_mm - 2 * MARGIN_MM) * MM
    pg = browser.new_page(viewport={"width": int(inner_w), "height": 900})
    try:
        pg.goto(page_file.as_uri())
        pg.emulate_media(media="print")
        # laid out at the printable width: no table, chart or block wider than the page
        over = pg.evaluate("""() => Array.from(document.querySelectorAll('table, svg, .cards, section, p'))
            .filter(e => e.getBoundingClientRect().right > document.documentElement.clientWidth + 1)
            .map(e => e.tagName + ':' + (e.closest('section')?.querySelector('h2')?.innerText || ''))""")
        assert over == [], f"wider than {paper} paper: {over}"
        height = pg.evaluate("() => document.documentElement.scrollHeight")
        cells = pg.evaluate("() => Array.from(document.querySelectorAll('td, th')).map(c => c.innerText)")
        pdf = pg.pdf(format=paper, print_background=True)
    finally:
        pg.close()
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / f"review-pack-{paper}.pdf").write_bytes(pdf)
    reader = pypdf.PdfReader(io.BytesIO(pdf))
    box = reader.pages[0].mediabox
    # the paper asked for, in PDF points (1/72 in)
    assert (float(box.width), float(box.height)) == pytest.approx((width_mm / 25.4 * 72, height_mm / 25.4 * 72),
                                                                   abs=1.5)
    # at least the pages the laid-out height fills; breaks kept out of rows and charts add a few
    least = math.ceil(height / inner_h)
    assert least <= len(reader.pages) <= least + max(3, least // 2), (len(reader.pages), least)
    # every word of every table cell is in the printed text: nothing clipped at a page's edge
    # (NFKC: the PDF's text keeps the font's ligatures, "ﬂ" for "fl")
    text = unicodedata.normalize("NFKC", " ".join(p.extract_text() for p in reader.pages))
    printed = set(_words(text))
    squashed = re.sub(r"\s+", "", text)
    words = [w for c in cells for w in _words(c)]
    missing = [w for w in words if w not in printed and w not in squashed]
    assert len(words) > 500 and missing == [], missing[:20]
