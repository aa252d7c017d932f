"""Bytes of a text table turned into text: the encodings instruments and spreadsheets write.

UTF-8 with or without a byte-order mark, UTF-16 with a mark or recognised by its zero bytes, and
the single-byte Windows-1252 / Latin-1 of older exports. A UTF-8 file cut in the middle of its
last character keeps the text before it. Empty files, UTF-32 text, binary (NUL) bytes and mostly
unprintable bytes are refused by name.
"""

from __future__ import annotations

import codecs

from .._validation import where
from ..exceptions import DataError

__all__ = ["decode_text"]


def decode_text(data: bytes, path: str) -> str:
    """Decode a text file: UTF-8 (with or without BOM), UTF-16 (with a BOM, or recognised by its
    zero bytes), else Windows-1252 / Latin-1 (the single-byte encodings of older exports)."""
    if not data.strip():
        raise DataError(f"{where(path)}the file is empty")
    if data.startswith((codecs.BOM_UTF32_LE, codecs.BOM_UTF32_BE)):
        raise DataError(f"{where(path)}not a text table ttsp reads: the file is UTF-32 text; "
                        f"save it as UTF-8")
    if data.startswith(codecs.BOM_UTF8):
        try:
            text = data[len(codecs.BOM_UTF8):].decode("utf-8", errors="strict")
        except UnicodeDecodeError as exc:
            raise DataError(f"{where(path)}not a text table: the file starts with a UTF-8 mark "
                            f"but byte {exc.start + 3} is not UTF-8") from None
    elif data.startswith(codecs.BOM_UTF16_LE) or data.startswith(codecs.BOM_UTF16_BE):
        try:
            text = data.decode("utf-16")
        except UnicodeDecodeError:
            raise DataError(f"{where(path)}not a text table: the file starts with a UTF-16 mark "
                            f"but is not UTF-16 text") from None
    else:
        sample = data[:4096]
        zeros_odd, zeros_even = sample[1::2].count(0), sample[0::2].count(0)
        half = len(sample) // 2
        utf16 = None
        if half >= 4 and zeros_odd > 0.4 * half and zeros_even == 0:
            utf16 = _try_decode(data, "utf-16-le")
        elif half >= 4 and zeros_even > 0.4 * half and zeros_odd == 0:
            utf16 = _try_decode(data, "utf-16-be")
        text = utf16 if utf16 is not None else (
            _try_decode(data, "utf-8") or _utf8_cut_short(data)
            or _try_decode(data, "cp1252") or data.decode("latin-1"))
    if "\x00" in text:
        raise DataError(f"{where(path)}not a text table: the file contains binary (NUL) bytes")
    head = text[:4096]
    printable = sum(ch.isprintable() or ch in "\r\n\t" for ch in head)
    if printable < 0.95 * len(head):
        raise DataError(f"{where(path)}not a text table: most bytes are not printable text")
    return text


def _try_decode(data: bytes, encoding: str) -> str | None:
    try:
        return data.decode(encoding)
    except UnicodeDecodeError:
        return None


def _utf8_cut_short(data: bytes) -> str | None:
    """UTF-8 text whose last character was cut in half (a truncated file): the text before it.

    Without this, one broken character at the very end would send the whole file to the
    single-byte fallback and turn every ``°C`` of the header into ``Â°C``."""
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.reason == "unexpected end of data" and exc.end == len(data) and exc.start > 0:
            return _try_decode(data[:exc.start], "utf-8")
    return None
