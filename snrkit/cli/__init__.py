"""The command line: the entry point (:mod:`snrkit.cli.entry`) and one module per command.

Each command module has ``add_parser(p)`` and ``run(args) -> int``; the entry
point imports only the chosen one.  Nothing outside this package imports it
except ``snrkit.__main__`` (``python -m snrkit``); the console script is
``snrkit.cli:main``.
"""

from .entry import main

__all__ = ["main"]
