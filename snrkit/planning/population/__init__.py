"""Synthetic planet populations: a seeded generator in independent blocks, and a reader.

* :func:`generate_block`, :func:`generate_population`, :data:`BLOCK_STARS`
  (:mod:`.generate`): transiting planets of a documented local-volume model
  with published occurrence rates; :func:`stars_in_volume`, the stars that
  volume holds in reality (a population of N stars is N / that many
  realisations of it);
* :func:`read_population` (:mod:`.reader`): Parquet, CSV or ECSV populations
  through the catalogue column mappings, every row kept with a status;
  :class:`.stream.PopulationFile` reads such a file chunk by chunk, each
  chunk screened as in a whole-file read;
* :mod:`.model` (hosts, occurrence tables) and :mod:`.rules` (planet class,
  scenario).
"""

from .generate import (BLOCK_STARS, COLUMN_UNITS, DEFAULT_OPTIONS, generate_block,
                       generate_population, stars_in_volume)
from .reader import read_population
from .rules import PLANET_CLASS_LABELS, SCENARIO_RULES

__all__ = ["BLOCK_STARS", "COLUMN_UNITS", "DEFAULT_OPTIONS", "generate_block",
           "generate_population", "stars_in_volume", "read_population", "PLANET_CLASS_LABELS", "SCENARIO_RULES"]
