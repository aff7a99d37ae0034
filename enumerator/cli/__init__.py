"""The ``enumerator`` command line: a thin typer layer over the library.

Importing this package loads typer and the root group only; each command's
module (and rich, numpy, the store, the algorithms) is imported when that
command runs.
"""

from .app import app, main
from .render import format_rows

__all__ = ["app", "format_rows", "main"]
