"""``python -m snrkit`` runs the command line."""

import sys

from .cli.entry import main

__all__ = []

sys.exit(main())
