"""PDF bookmarks appended as an incremental update (fringe.io.pdf_outline), read back with
pymupdf (an independent PDF reader)."""

from __future__ import annotations

import io

import pymupdf
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure

from fringe.io.pdf_outline import add_outline


def _pdf(n: int) -> bytes:
    buf = io.BytesIO()
    with PdfPages(buf) as pdf:
        for k in range(n):
            fig = Figure(figsize=(4, 3))
            FigureCanvasAgg(fig)
            fig.text(0.5, 0.5, f"page {k + 1}")
            pdf.savefig(fig)
    return buf.getvalue()


def test_one_bookmark_per_page_in_order():
    raw = _pdf(3)
    titles = ["1. Cover", "2. Floor plan: ground floor — 0.5 mT", "3. Tables (µT, ±, “quotes”)"]
    out = add_outline(raw, titles)
    assert out.startswith(raw)  # an incremental update: the original bytes are kept
    doc = pymupdf.open(stream=out, filetype="pdf")
    assert doc.page_count == 3
    assert doc.get_toc() == [[1, t, k] for k, t in enumerate(titles, 1)]
    assert [p.get_text().strip() for p in doc] == ["page 1", "page 2", "page 3"]
    assert doc.pdf_catalog() and "UseOutlines" in doc.xref_object(doc.pdf_catalog())
    assert not doc.is_repaired  # the cross-reference sections are sound, not rebuilt


def test_titles_must_match_the_pages():
    with pytest.raises(ValueError, match="2 bookmark titles for 3 pages"):
        add_outline(_pdf(3), ["a", "b"])


def test_not_a_pdf_is_refused():
    with pytest.raises(ValueError, match="no trailer"):
        add_outline(b"hello", ["a"])
