"""Command line: ``periplan <command> ...``; the only place that knows about argv and options."""

from .main import build_parser, main

__all__ = ["build_parser", "main"]
