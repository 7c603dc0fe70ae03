"""One module per ``periplan`` command; each defines ``register(subparsers)``."""

from ...errors import PeriplanError


def require_nonnegative(args, *names) -> None:
    """PeriplanError naming the option (``--baseline-h``) when a given value is negative or NaN."""
    for name in names:
        value = getattr(args, name)
        if value is not None and not value >= 0:
            raise PeriplanError(f"--{name.replace('_', '-')} must be zero or positive; got {value:g}")
