"""The ``enumerator`` command line: a thin typer layer over the library."""

from .app import app, format_rows, main

__all__ = ["app", "format_rows", "main"]
