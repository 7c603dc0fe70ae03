"""Small pieces of English for messages and summaries: counts with the right plural, the short
safety caution."""

from __future__ import annotations

#: Short form of the safety caution: in every calendar event's description and closing the
#: terminal summary of a plan.
CAUTION_SHORT = ("Never point the telescope at or near the Sun; the observatory's own safety rules and "
                 "local regulations come first.")
#: ... in two lines within 100 characters, for the terminal.
CAUTION_LINES = CAUTION_SHORT.replace("; ", ";\n", 1)


def count(n: int, singular: str, plural: str | None = None) -> str:
    """``n`` with its noun: ``count(1, "night")`` is ``"1 night"``, ``count(0, "night")`` ``"0 nights"``."""
    n = int(n)
    return f"{n} {singular if n == 1 else (plural or singular + 's')}"


def first_few(names, shown: int = 5) -> str:
    """The first ``shown`` names joined by ", ", then "and N more": ``first_few(["A", "B"], 1)``
    is ``"A and 1 more"``."""
    names = list(names)
    more = f" and {len(names) - shown} more" if len(names) > shown else ""
    return ", ".join(map(str, names[:shown])) + more
