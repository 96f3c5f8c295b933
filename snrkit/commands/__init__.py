"""Command modules of the ``snrkit`` CLI: each has ``add_parser`` and ``run``."""

__all__ = []
