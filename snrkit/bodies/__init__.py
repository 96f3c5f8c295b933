"""Stars, planets and their systems: validated inputs, transit geometry, derived metrics.

* :mod:`snrkit.bodies.star`, :mod:`snrkit.bodies.planet`, :mod:`snrkit.bodies.system` --
  the validated, immutable ``Star``, ``Planet`` and ``System`` and ``derive()``;
* :mod:`snrkit.bodies.limits` -- the physical and the usual ranges of their numbers;
* :mod:`snrkit.bodies.geometry` -- Kepler's third law and transit geometry (Winn 2010);
* :mod:`snrkit.bodies.metrics` -- Teq, insolation, scale height, TSM/ESM, masses from radii,
  the Kopparapu et al. 2013/2014 habitable-zone limits;
* :mod:`snrkit.bodies.describe` -- the records of ``snrkit describe``.
"""

__all__ = []
