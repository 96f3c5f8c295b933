"""Output: figures (matplotlib Figures) and the self-contained HTML report.

Nothing here computes science: the figures and the report show the numbers
the engine returned.  matplotlib and jinja2 are imported inside the functions
that use them.
"""

__all__ = []
