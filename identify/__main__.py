"""``python -m identify`` runs the ``poleprint`` command line."""
import sys

from .cli import main

sys.exit(main())
