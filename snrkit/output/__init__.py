"""Output for people: figures (matplotlib Figures) and the self-contained HTML report.

* :mod:`snrkit.output.figures` -- shared helpers, the ranking, the calendar's timeline and the noise budget;
* :mod:`snrkit.output.transit_figures` -- significance curves and spectra;
* :mod:`snrkit.output.report` and :mod:`snrkit.output.report_data` -- the HTML report.

Nothing here computes science: the figures and the report show the numbers
the engine returned.  matplotlib and jinja2 are imported inside the functions
that use them.
"""

__all__ = []
