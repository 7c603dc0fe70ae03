"""Reading an input file as text, with the one-line errors of the loaders.

Shared by the catalogue and site loaders, the only modules that read input files.
"""

from __future__ import annotations

import codecs
import os

from ..errors import InputError, InputErrors


def read_bytes(path, what: str) -> tuple[bytes, str]:
    """(contents, file name for messages) of the file at ``path``; ``what`` names it in errors."""
    name = os.fspath(path)
    try:
        with open(name, "rb") as fh:
            return fh.read(), os.path.basename(name)
    except FileNotFoundError:
        raise InputErrors([InputError(f"no such {what} file", file=name)]) from None
    except IsADirectoryError:
        raise InputErrors([InputError(f"is a folder, not a {what} file", file=name)]) from None
    except OSError as exc:
        raise InputErrors([InputError(f"cannot read {what} file: {exc.strerror}", file=name)]) from None


def decode_text(data: bytes, source: str, expected: str) -> str:
    """Text of ``data``: UTF-8, or UTF-16 when it opens with a UTF-16 byte-order mark (what some
    spreadsheets save as "Unicode text"); a byte-order mark is dropped. ``expected`` says what the
    file should be.
    """
    if data[:2] in (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError:
            raise InputErrors([InputError(f"not readable UTF-16 text (it opens with a UTF-16 byte-order mark); "
                                          f"save it as UTF-8 ({expected})", file=source)]) from None
    if b"\x00" in data:
        raise InputErrors([InputError(f"not a text file (contains NUL bytes); expected {expected}", file=source)])
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputErrors([InputError(f"not UTF-8 text (byte {exc.start}); save it as UTF-8 ({expected})",
                                      file=source)]) from None


def utf8_bytes(data: bytes, source: str, expected: str) -> bytes:
    """``data`` as UTF-8 without a byte-order mark, with the errors of :func:`decode_text`.

    UTF-16 text (opening with its byte-order mark) is re-encoded; UTF-8 is checked, not decoded.
    """
    if data[:2] in (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE) or b"\x00" in data:
        return decode_text(data, source, expected).encode("utf-8")
    if not data.isascii():
        try:
            data.decode("utf-8")
        except UnicodeDecodeError:
            decode_text(data, source, expected)  # raises its one-line error
        if data.startswith(codecs.BOM_UTF8):
            data = data[len(codecs.BOM_UTF8):]
    return data
