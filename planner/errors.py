"""Domain errors of periplan.

Every problem with the user's input is a :class:`InputError` (a ``ValueError``) that carries
where it was found (file, row, column or key) and the offending value, so a caller can point the
user at the exact cell. :class:`InputErrors` bundles all the problems found in one pass over a
file, so a single run reports every bad row. :class:`TimeScaleError`, :class:`SkyTrackError` and
:class:`CrossingSearchError` are what the time-scale and sky stages raise for values they cannot
use; every one is a :class:`PeriplanError`, so the command line reports it in one line.
"""

from __future__ import annotations

from dataclasses import dataclass


class PeriplanError(ValueError):
    """Base class of every error periplan raises on purpose."""


@dataclass(eq=False)
class InputError(PeriplanError):
    """One bad value in an input file.

    ``row`` counts lines of the file as a spreadsheet does: the header is row 1, the first data row
    is row 2. ``column`` is a CSV column name or a TOML key.
    """

    message: str
    file: str | None = None
    row: int | None = None
    column: str | None = None
    value: object = None

    def __post_init__(self):
        super().__init__(str(self))

    def __str__(self) -> str:
        where = [self.file] if self.file else []
        if self.row is not None:
            where.append(f"row {self.row}")
        if self.column:
            where.append(f"column {self.column}" if self.row is not None else f"key {self.column}")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class InputErrors(PeriplanError):
    """Several :class:`InputError` found in one pass; ``errors`` holds them in file order."""

    def __init__(self, errors: list[InputError]):
        self.errors = list(errors)
        super().__init__("\n".join(str(e) for e in self.errors))

    def __str__(self) -> str:
        return "\n".join(str(e) for e in self.errors)


class PeriplanWarning(UserWarning):
    """Input that is accepted but looks wrong (the command line prints it as one line)."""


class ConvergenceError(PeriplanError):
    """An iterative solver did not converge; ``mask`` marks the elements that failed."""

    def __init__(self, message: str, mask=None):
        self.mask = mask
        super().__init__(message)


class TimeScaleError(PeriplanError):
    """A date, instant, time zone or time system that cannot be converted (timescales stage).

    The message names the value and what is accepted, e.g. an IANA zone name or ``YYYY-MM-DD``.
    """


class SkyTrackError(PeriplanError):
    """Sun and Moon tracks asked for times outside the span they cover, or for a span that is none."""


class CrossingSearchError(PeriplanError):
    """The zero-crossing search found rises and sets that do not alternate: its grid is too coarse."""
