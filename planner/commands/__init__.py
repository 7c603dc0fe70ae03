"""One module per ``periplan`` command; each defines ``register(subparsers)``."""
