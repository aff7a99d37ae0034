"""``python -m enumerator``: the command line tool."""

from .cli import main

main()
