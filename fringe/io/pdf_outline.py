"""PDF bookmarks: add an outline (one entry per page) to a finished PDF.

matplotlib's ``PdfPages`` writes no document outline. :func:`add_outline` appends an
*incremental update* to the file (ISO 32000-1:2008, 7.5.6): an outline dictionary and
its items (12.3.3), a new version of the document catalog pointing to them, and a
cross-reference section and trailer whose ``/Prev`` points back at the original one. The
original bytes are kept unchanged in front, so any PDF reader sees the original pages
plus the bookmarks. It works on the classic cross-reference table that matplotlib writes
(not on cross-reference streams) and on a page tree of any depth.

References
----------
ISO 32000-1:2008, Document management — Portable document format — Part 1: PDF 1.7:
7.5.4 cross-reference table, 7.5.5 file trailer, 7.5.6 incremental updates,
7.7.2 document catalog (``/Outlines``, ``/PageMode /UseOutlines``), 7.7.3 page tree,
7.9.2.2 text strings (UTF-16BE with a byte order mark), 12.3.2 destinations (``/Fit``),
12.3.3 document outline.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

__all__ = ["add_outline"]

_TRAILER = re.compile(rb"trailer\s*<<(.*?)>>\s*startxref\s*(\d+)\s*%%EOF\s*$", re.S)


def _xref_offsets(pdf: bytes, start: int) -> dict[int, int]:
    """Object number → byte offset from the classic cross-reference table at ``start``."""
    if pdf[start:start + 4] != b"xref":
        raise ValueError("the PDF has no classic cross-reference table where startxref points")
    lines = pdf[start + 4:].split(b"\n")
    offsets: dict[int, int] = {}
    i = 0
    while i < len(lines):
        head = lines[i].strip()
        i += 1
        if not head:
            continue
        if head.startswith(b"trailer"):
            break
        first, count = (int(v) for v in head.split())
        for k in range(count):
            fields = lines[i + k].split()
            if fields[2] == b"n":
                offsets[first + k] = int(fields[0])
        i += count
    return offsets


def _object_dict(pdf: bytes, offsets: dict[int, int], num: int) -> bytes:
    """The dictionary ``<< … >>`` of indirect object ``num`` (no stream objects)."""
    if num not in offsets:
        raise ValueError(f"object {num} is not in the cross-reference table")
    m = re.compile(rb"\s*%d\s+0\s+obj\s*(<<.*?>>)\s*endobj" % num, re.S).match(pdf, offsets[num])
    if m is None:
        raise ValueError(f"object {num} is not a plain dictionary")
    return m.group(1)


def _page_ids(pdf: bytes, offsets: dict[int, int], node: int, depth: int = 0) -> list[int]:
    """Page object numbers under page-tree node ``node``, in document order."""
    if depth > 32:
        raise ValueError("the page tree is nested too deeply")
    d = _object_dict(pdf, offsets, node)
    if re.search(rb"/Type\s*/Pages\b", d) is None:
        return [node]
    kids = re.search(rb"/Kids\s*\[(.*?)\]", d, re.S)
    ids = [int(n) for n in re.findall(rb"(\d+)\s+0\s+R", kids.group(1))] if kids else []
    return [p for k in ids for p in _page_ids(pdf, offsets, k, depth + 1)]


def _text_string(text: str) -> bytes:
    """A PDF text string: UTF-16BE with byte order mark, as a hex string."""
    return b"<" + ("\ufeff" + text).encode("utf-16-be").hex().upper().encode() + b">"


def add_outline(pdf: bytes, titles: Sequence[str]) -> bytes:
    """``pdf`` with a flat outline: bookmark ``titles[k]`` opens page k (whole page).

    Parameters
    ----------
    pdf : bytes
        A complete PDF with a classic cross-reference table (as matplotlib writes it).
    titles : sequence of str
        One bookmark title per page, in page order.

    Returns
    -------
    bytes
        The same PDF followed by an incremental update holding the outline; the
        catalog also asks viewers to open with the bookmarks shown.

    Raises
    ------
    ValueError
        A PDF this writer cannot update (no classic cross-reference table), or a number
        of titles different from the number of pages.
    """
    m = _TRAILER.search(pdf[-4096:])
    if m is None:
        raise ValueError("not a complete PDF (no trailer at the end)")
    trailer, prev = m.group(1), int(m.group(2))
    size = int(re.search(rb"/Size\s+(\d+)", trailer).group(1))
    root = int(re.search(rb"/Root\s+(\d+)\s+0\s+R", trailer).group(1))
    info = re.search(rb"/Info\s+(\d+\s+\d+\s+R)", trailer)
    offsets = _xref_offsets(pdf, prev)
    catalog = _object_dict(pdf, offsets, root)
    pages_root = re.search(rb"/Pages\s+(\d+)\s+0\s+R", catalog)
    if pages_root is None:
        raise ValueError("the document catalog has no page tree")
    pages = _page_ids(pdf, offsets, int(pages_root.group(1)))
    if len(pages) != len(titles):
        raise ValueError(f"{len(titles)} bookmark titles for {len(pages)} pages")
    body = re.sub(rb"/(Outlines\s+\d+\s+\d+\s+R|PageMode\s*/\w+)", b"", catalog[2:-2])
    top = size  # the outline dictionary; its items follow
    items = list(range(size + 1, size + 1 + len(titles)))
    objects: list[tuple[int, bytes]] = [
        (root, b"<<" + body.rstrip() + b" /Outlines %d 0 R /PageMode /UseOutlines >>" % top)]
    if items:
        objects.append((top, b"<< /Type /Outlines /First %d 0 R /Last %d 0 R /Count %d >>"
                        % (items[0], items[-1], len(items))))
    else:
        objects.append((top, b"<< /Type /Outlines /Count 0 >>"))
    for k, (num, page, title) in enumerate(zip(items, pages, titles, strict=True)):
        links = (b" /Prev %d 0 R" % items[k - 1] if k > 0 else b"") + (
            b" /Next %d 0 R" % items[k + 1] if k + 1 < len(items) else b"")
        objects.append((num, b"<< /Title " + _text_string(str(title)) + b" /Parent %d 0 R"
                        b" /Dest [ %d 0 R /Fit ]" % (top, page) + links + b" >>"))
    out = bytearray(pdf if pdf.endswith(b"\n") else pdf + b"\n")
    where: dict[int, int] = {}
    for num, d in objects:
        where[num] = len(out)
        out += b"%d 0 obj\n" % num + d + b"\nendobj\n"
    xref_at = len(out)
    out += b"xref\n%d 1\n%010d 00000 n \n" % (root, where[root])
    out += b"%d %d\n" % (top, len(items) + 1)
    for num in [top, *items]:
        out += b"%010d 00000 n \n" % where[num]
    out += (b"trailer\n<< /Size %d /Root %d 0 R" % (size + 1 + len(items), root)
            + (b" /Info " + info.group(1) if info else b"") + b" /Prev %d >>\n" % prev)
    out += b"startxref\n%d\n%%%%EOF\n" % xref_at
    return bytes(out)
