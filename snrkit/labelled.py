"""Labelled arrays without xarray: what the engine passes between its steps.

A :class:`Labelled` holds named numpy arrays with their dimension names,
coordinates and attributes -- the content of an :class:`xarray.Dataset` --
so that the engine's hot path and a cold ``snrkit transits`` never import
xarray (whose import alone costs more than the rest of a cold call, and
which imports dask where dask is installed).  The public functions return
the Dataset itself (:meth:`Labelled.to_dataset`); the engine asks them for
the arrays (``as_arrays=True``).
"""

import numpy as np

__all__ = ["Labelled"]


class Labelled:
    """Named arrays with dimension names, coordinates and attributes.

    Parameters
    ----------
    variables : dict of str to tuple, optional
        ``name: (dims, values)`` or ``name: (dims, values, attrs)``, with
        ``dims`` a dimension name or a tuple of them (the form
        :class:`xarray.Dataset` takes).
    coords : dict of str to tuple or sequence, optional
        Coordinates in the same form; a bare sequence is the coordinate of
        the dimension of the same name.
    attrs : dict, optional
        Global attributes.

    Notes
    -----
    ``obj[name]`` is the numpy array of a variable or a coordinate.
    """

    def __init__(self, variables=None, coords=None, attrs=None):
        self._vars = {}
        self._coords = {}
        self.attrs = dict(attrs or {})
        for name, spec in (coords or {}).items():
            self._coords[name] = _entry(spec, default_dim=name)
        for name, spec in (variables or {}).items():
            self[name] = spec

    def __setitem__(self, name, spec):
        self._vars[name] = _entry(spec)

    def set_coord(self, name, spec):
        """Add or replace a coordinate (same forms as in the constructor)."""
        self._coords[name] = _entry(spec, default_dim=name)

    def __getitem__(self, name):
        if name in self._vars:
            return self._vars[name][1]
        if name in self._coords:
            return self._coords[name][1]
        raise KeyError(name)

    def __contains__(self, name):
        return name in self._vars or name in self._coords

    variables = property(lambda self: list(self._vars), doc="Names of the data variables.")
    coords = property(lambda self: list(self._coords), doc="Names of the coordinates.")

    def dims(self, name):
        """Dimension names of a variable or coordinate."""
        return (self._vars.get(name) or self._coords[name])[0]

    def attrs_of(self, name):
        """Attributes of a variable or coordinate."""
        return (self._vars.get(name) or self._coords[name])[2]

    def sel(self, name, **labels):
        """The array of ``name`` at one label of each given dimension (that dimension dropped)."""
        values, dims = self[name], list(self.dims(name))
        for dim, label in labels.items():
            index = list(self[dim]).index(label)
            axis = dims.index(dim)
            values = np.take(values, index, axis=axis)
            dims.pop(axis)
        return values

    def to_dataset(self):
        """The same content as an :class:`xarray.Dataset` (imports xarray)."""
        import xarray as xr
        return xr.Dataset({k: v for k, v in self._vars.items()},
                          coords={k: v for k, v in self._coords.items()}, attrs=dict(self.attrs))


def _entry(spec, default_dim=None):
    """(dims tuple, array, attrs dict) from the forms a Dataset constructor takes."""
    if isinstance(spec, tuple) and len(spec) in (2, 3) and isinstance(spec[0], (str, tuple)):
        dims = (spec[0],) if isinstance(spec[0], str) else tuple(spec[0])
        attrs = dict(spec[2]) if len(spec) == 3 else {}
        return dims, np.asarray(spec[1]), attrs
    return (default_dim,), np.asarray(spec), {}
