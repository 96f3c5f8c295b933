"""Population yields for telescope trade studies (designs x scenarios x tests).

:func:`population_yields` is the entry point; :mod:`.designs` reads designs
and their grids, :mod:`.chunk` runs one chunk through the engine,
:mod:`.cluster` runs the chunks in process or on a dask cluster,
:mod:`.store` keeps finished chunks on disk, and :mod:`.figures` draws the
yields against aperture or budget.
"""

from .compute import population_yields, yield_dataset
from .designs import Design, load_designs, DESIGN_KEYS

__all__ = ["population_yields", "yield_dataset", "Design", "load_designs", "DESIGN_KEYS"]
