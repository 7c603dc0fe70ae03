"""Small pieces of English for messages and summaries: counts with the right plural."""

from __future__ import annotations


def count(n: int, singular: str, plural: str | None = None) -> str:
    """``n`` with its noun: ``count(1, "night")`` is ``"1 night"``, ``count(0, "night")`` ``"0 nights"``."""
    n = int(n)
    return f"{n} {singular if n == 1 else (plural or singular + 's')}"
