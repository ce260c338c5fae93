"""``python -m identify`` runs the ``poleprint`` command line."""
from .cli import run_command

run_command()
