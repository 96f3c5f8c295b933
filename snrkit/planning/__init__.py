"""Planning a programme: catalogues, ranking, the transit calendar and the plan.

* :mod:`snrkit.planning.catalog` (with :mod:`snrkit.planning.mapping`) -- catalogue
  import through a column mapping, every row screened with a status and a reason;
* :mod:`snrkit.planning.rank` -- the engine over a catalogue, best mode x scenario, ranking;
* :mod:`snrkit.planning.ephemeris`, :mod:`snrkit.planning.timescales`,
  :mod:`snrkit.planning.observability`, :mod:`snrkit.planning.windows` -- the calendar
  (gathered in :mod:`snrkit.planning.calendar`);
* :mod:`snrkit.planning.plan` -- the programme plan;
* :mod:`snrkit.planning.population` -- synthetic populations: the seeded generator and
  the reader of population files;
* :mod:`snrkit.planning.yields` -- yields of telescope designs over a population, in
  chunks on a dask cluster.
"""

__all__ = []
