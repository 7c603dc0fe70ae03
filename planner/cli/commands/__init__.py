"""One module per ``periplan`` command; each defines ``register(subparsers)``."""

import argparse

from ...errors import PeriplanError
from ...orbits import geometry


def event_word(text: str) -> str:
    """An event name or periodic kind from a word of ``--kinds`` (aliases resolved)."""
    name = geometry.canonical_event(text)
    if name is None:
        raise argparse.ArgumentTypeError(f"unknown event {text!r}; expected one of {', '.join(geometry.EVENT_WORDS)}")
    return name


def require_nonnegative(args, *names) -> None:
    """PeriplanError naming the option (``--baseline-h``) when a given value is negative or NaN."""
    for name in names:
        value = getattr(args, name)
        if value is not None and not value >= 0:
            raise PeriplanError(f"--{name.replace('_', '-')} must be zero or positive; got {value:g}")
