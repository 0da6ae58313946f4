"""The command line: argparse front end, one module per command group; ``main(argv)`` returns the exit code."""

from .main import entry, main

__all__ = ["entry", "main"]
