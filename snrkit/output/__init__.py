"""Output for people: figures (matplotlib imported inside the functions that draw).

* :mod:`snrkit.output.figures` -- significance curves, spectra, the ranking plot;
* :mod:`snrkit.output.timeline` -- the calendar's timeline of transit windows.
"""

__all__ = []
