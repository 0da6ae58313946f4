"""``python -m meshgen`` runs the command line."""

from .cli import entry

entry()
