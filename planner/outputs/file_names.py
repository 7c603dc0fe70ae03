"""Readable, unique file names made from target names (``rv-TARGET.png``).

A target name becomes a file-name part by :func:`file_part`: Unicode NFC, letters, marks and
digits of any script kept (``Ørnesø c`` stays ``Ørnesø_c``), '-', '_' and '.' kept, every other
character (spaces, '/', '\\', ':', '*', '?', quotes, control characters) replaced by '_'.
:func:`unique_file_parts` gives each name of a list its part; names whose parts collide, also
when they differ only in letter case (as they do on case-insensitive file systems), all get a
short suffix from a hash of their own full name, so the same name always gets the same file
whatever else is in the catalogue.
"""

from __future__ import annotations

import hashlib
import re
import unicodedata
from collections import Counter

#: Longest file-name part in bytes of UTF-8: leaves room for the prefix, the hash suffix and the
#: extension within the 255-byte name limit of the usual file systems.
MAX_PART_BYTES = 180
#: Hex digits of the collision suffix (32 bits of a BLAKE2b hash of the name).
SUFFIX_HEX = 8
_KEPT_PUNCTUATION = frozenset("-_.")


def _kept(char: str) -> bool:
    return char in _KEPT_PUNCTUATION or unicodedata.category(char)[0] in "LMN"


#: The ASCII characters :func:`_kept` replaces (ASCII letters and digits are its only ASCII
#: characters of the categories L, M and N): one regular expression does an ASCII name's work.
_ASCII_REPLACED = re.compile(r"[^A-Za-z0-9._-]")


def file_part(name: str) -> str:
    """``name`` made safe for a file name (see the module notes); ``"target"`` when nothing is left."""
    text = str(name)
    if text.isascii():  # NFC leaves ASCII as it is
        text = _ASCII_REPLACED.sub("_", text)
    else:
        text = "".join(c if _kept(c) else "_" for c in unicodedata.normalize("NFC", text))
    text = re.sub(r"_+", "_", text).strip("_.")
    encoded = text.encode("utf-8")
    if len(encoded) > MAX_PART_BYTES:
        text = encoded[:MAX_PART_BYTES].decode("utf-8", errors="ignore").rstrip("_.")
    return text or "target"


def name_suffix(name: str) -> str:
    """The stable collision suffix of ``name``: hex digits of a BLAKE2b hash of its UTF-8 bytes."""
    digest = hashlib.blake2b(unicodedata.normalize("NFC", str(name)).encode("utf-8"),
                             digest_size=SUFFIX_HEX // 2)
    return digest.hexdigest()


def unique_file_parts(names) -> dict[str, str]:
    """``{name: file part}`` for distinct ``names``; parts differ even when letter case is ignored.

    A part shared by several names (compared case-folded) gets ``-HASH`` on each of them
    (:func:`name_suffix`); parts that still clash (a hash collision, or names equal after NFC)
    get ``-2``, ``-3`` ... in the order given.
    """
    names = list(dict.fromkeys(str(n) for n in names))
    plain = {n: file_part(n) for n in names}
    sharing = Counter(p.casefold() for p in plain.values())
    taken = {p.casefold() for p in plain.values() if sharing[p.casefold()] == 1}
    parts = {}
    for n in names:
        if sharing[plain[n].casefold()] == 1:
            parts[n] = plain[n]
            continue
        stem = part = f"{plain[n]}-{name_suffix(n)}"
        k = 2
        while part.casefold() in taken:
            part, k = f"{stem}-{k}", k + 1
        taken.add(part.casefold())
        parts[n] = part
    return parts
