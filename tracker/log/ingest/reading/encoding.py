"""Refuse a file that is not UTF-8 text, naming what it is instead (UTF-16, CR line ends)."""

from __future__ import annotations

import codecs
import pathlib

from tracker.errors import BadFile

BLOCK_BYTES = 1 << 20


def check_text(name: str, path: pathlib.Path) -> None:
    """Refuse a blank file, or one that is not UTF-8 text (naming the row of the
    first bad byte), reading it block by block. UTF-16 text (with or without a
    byte-order mark) and lines ending in CR alone are named as such."""
    blank = True
    lines = 0
    pending = b""
    with path.open("rb") as fh:
        head = fh.read(4096)
        _check_encoding(name, head)
        fh.seek(0)
        while True:
            block = fh.read(BLOCK_BYTES)
            data = pending + block
            try:
                # not final until the last block: a character cut at a block's end waits
                _, used = codecs.utf_8_decode(data, "strict", not block)
            except UnicodeDecodeError as exc:
                line = lines + data[:exc.start].count(b"\n") + 1
                raise BadFile(name, [], f"{name}, row {line}: byte 0x{data[exc.start]:02x} is not UTF-8 "
                                        "text; save the file as UTF-8 (CSV UTF-8 in a spreadsheet "
                                        "program)") from None
            lines += data.count(b"\n", 0, used)
            blank = blank and not data[:used].strip()
            pending = data[used:]
            if not block:
                break
    if blank:
        raise BadFile(name, [], f"{name}: the file is empty; it needs a header row and data rows")


def _check_encoding(name: str, head: bytes) -> None:
    save = "save it as CSV UTF-8 (comma delimited) in the spreadsheet program"
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        raise BadFile(name, [], f"{name}: the file is UTF-16 text (it starts with a UTF-16 byte-order mark), "
                                f"not UTF-8; {save}")
    if len(head) >= 4 and head.count(b"\x00") * 3 >= len(head):
        # Text of Latin letters in UTF-16 has a zero byte beside every letter.
        order = "little-endian" if head[1:2] == b"\x00" else "big-endian"
        raise BadFile(name, [], f"{name}: the file is UTF-16 text ({order}, without a byte-order mark), "
                                f"not UTF-8; {save}")
    if b"\r" in head and b"\n" not in head and head.rstrip(b"\r").count(b"\r") >= 1:
        raise BadFile(name, [], f"{name}: the lines end in a carriage return alone (CR, an old Mac "
                                "format); save the file with Windows (CRLF) or Unix (LF) line ends, "
                                "or as CSV UTF-8 in a spreadsheet program")
