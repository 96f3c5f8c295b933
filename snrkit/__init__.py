"""snrkit: planning estimates for transmission spectroscopy of transiting exoplanets.

The package is layered: pure numpy compute functions in SI units,
vectorized over a leading planet axis; thin public functions that take
astropy Quantities, validate them and return Tables or xarray objects; I/O;
and the command line.  Heavy sub-packages are imported lazily.
"""

from ._version import __version__

__all__ = ["__version__", "Star", "Planet", "System", "load_system",
           "mean_molecular_weight"]

_LAZY = {
    "Star": "snrkit.bodies.star",
    "Planet": "snrkit.bodies.planet",
    "System": "snrkit.bodies.system",
    "load_system": "snrkit.io.systemfile",
    "mean_molecular_weight": "snrkit.atmosphere.composition",
}


def __getattr__(name):
    if name in _LAZY:
        import importlib
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'snrkit' has no attribute {name!r}")
