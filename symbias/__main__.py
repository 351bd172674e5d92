"""``python -m symbias`` runs the command line."""

from .cli import run

run()
