"""Run the command line tool as ``python -m enumerator``."""

from .cli import main

main()
