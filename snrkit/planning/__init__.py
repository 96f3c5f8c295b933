"""Planning: catalogues, rankings, calendars and synthetic populations.

The population generator and reader live in :mod:`snrkit.planning.population`.
"""

__all__ = []
