"""Bring your own opacity: user cross-section tables as k-distributions.

:func:`read_cross_sections` reads a table of monochromatic absorption
cross-sections of one species (for example a line-by-line calculation), and
:class:`UserOpacitySource` turns such tables into the k-distributions that
:func:`snrkit.atmosphere.spectrum.transmission_spectrum` uses (pass it as
``opacity_source``).  Every other opacity (the other species, Rayleigh
scattering, haze, collision-induced absorption) comes from snrkit's own
tables unchanged.

Cross-section table layout
--------------------------
One table per species; one row per spectral point.  Columns (names are not
case sensitive):

``wavenumber`` or ``wavelength`` (required)
    The spectral coordinate, in any spectral unit (length, wavenumber,
    frequency or energy; vacuum wavelengths).  The unit must be known: from
    the file (ECSV and FITS column units, or a CSV/text header written as
    ``wavenumber [cm-1]``), or from the ``spectral_unit`` argument.  If both
    columns are present, ``wavenumber`` is used.
``cross_section`` (required; alias ``sigma``)
    Absorption cross-section per molecule, >= 0.  Unit from the file
    (``cm2``, ``m2``, ``cm2/molecule``...), default cm2.
``temperature`` (optional; alias ``T``)
    Temperature of the row [K unless the file says otherwise].  Several
    temperatures are stacked in one file: the rows of one temperature form one
    contiguous block, and each block has its own spectral grid.  Without this
    column the cross-section is taken to be independent of temperature.

Within each temperature block the spectral points are strictly increasing
or strictly decreasing (no duplicates), at least :data:`MIN_POINTS` of them.
Other columns are an error (so that a misspelt ``temperature`` is not
silently dropped).  Formats: CSV (``.csv``), ECSV (``.ecsv``), FITS table
(``.fits``) or plain text (anything else: whitespace or comma separated,
``#`` comments, an optional header line such as
``wavelength [um]  cross_section [cm2]  temperature [K]``; without a header
the columns are spectral coordinate, cross-section, and optionally
temperature, in that order).  Example (CSV)::

    wavenumber [cm-1],cross_section [cm2],temperature [K]
    4000.00,1.2e-22,500
    4000.01,1.5e-22,500
    ...
    4000.00,2.1e-22,1000
    ...

From table to k-distribution
----------------------------
Between its spectral points the cross-section is interpolated linearly in
ln sigma against wavenumber (zero entries count as 1e-60 m2).  Between
table temperatures ln sigma is interpolated linearly in 1/T, point by point
on the union of the blocks' grids, before anything is sorted; temperatures
outside the table are clamped to it with an
:class:`~snrkit.atmosphere.opacity.OpacityRangeWarning`.  In each requested
bin the resulting monochromatic cross-section is sorted into its
cumulative distribution over wavenumber, g(k) = (measure of the bin where
sigma <= k) / (bin width) -- the k-distribution of the correlated-k method
(Goody, West, Chen & Crisp 1989, JQSRT 42, 539; Lacis & Oinas 1991, JGR 96,
9027) -- and k(g) is read off at the Gauss-Legendre points of
``g_quadrature(n_g)``.  The cumulative distribution of a piecewise
log-linear function is itself piecewise linear in ln k, so it is computed
exactly (to ~1e-10 in ln k; no resampling).  Each distinct temperature costs
one sort of the table's points (about 0.2 s per million points), so a
profile with many different temperatures and a large table is slow.  The bin-mean transmission is then
``sum_g w_g exp(-k_g u)``, which tends to the exact monochromatic mean as
n_g grows.  Pressure does not enter: the table's cross-sections are used at
every pressure.

Bins reaching outside the table are an error (nothing is extrapolated)
unless ``outside="zero"``, which gives those parts of the bins zero
cross-section.
"""

import warnings
from pathlib import Path

import numpy as np

from ..errors import InputError
from .cross_section_files import (_blocks_from_table, _blocks_to_table, _check_species,
                                  read_cross_sections)
from .user_kdist import _LN_FLOOR, _layout, _quantiles_on_layout
# public names whose code lives in cross_section_files and user_kdist
from .cross_section_checks import MIN_POINTS  # noqa: F401
from .user_kdist import sorted_k_distribution  # noqa: F401

__all__ = ["MIN_POINTS", "OUTSIDE_POLICIES", "read_cross_sections", "sorted_k_distribution",
           "UserOpacitySource"]

#: What to do with bins (or parts of bins) the table does not cover.
OUTSIDE_POLICIES = ("error", "zero")

_CACHE_SIZE = 256
# --------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------

# --------------------------------------------------------------------------
# compute layer: sorting a piecewise log-linear cross-section
# --------------------------------------------------------------------------

# --------------------------------------------------------------------------
# opacity source
# --------------------------------------------------------------------------

class _DefaultSource:
    """snrkit's own opacity: attributes of the opacity module, then of continuum."""

    def __getattr__(self, name):
        from . import continuum, opacity
        for mod in (opacity, continuum):
            if hasattr(mod, name):
                return getattr(mod, name)
        raise AttributeError(name)


class _SpeciesTable:
    """One species' table on the union grid of its temperature blocks."""

    def __init__(self, species, blocks, label):
        self.species = species
        self.label = label
        temps = [b[0] for b in blocks]
        self.temperatures = None if temps[0] is None else np.array(temps, dtype=np.float64)
        lo = max(b[1][0] for b in blocks)
        hi = min(b[1][-1] for b in blocks)
        if not hi > lo:
            raise InputError(f"{label}: spectral range", "temperature blocks that do not overlap",
                             "blocks covering a common spectral range")
        grid = np.unique(np.concatenate([[lo, hi]] + [b[1][(b[1] > lo) & (b[1] < hi)]
                                                       for b in blocks]))
        self.nu = grid
        self.ln_sigma = np.stack([
            np.interp(grid, b[1], np.log(np.maximum(b[2], np.exp(_LN_FLOOR)))) for b in blocks])
        self.wavelength_range_m = (1.0 / hi, 1.0 / lo)
        self._layouts = {}
        self._k = {}

    def layout(self, edges_key, edges):
        lay = self._layouts.get(edges_key)
        if lay is None:
            if len(self._layouts) > 16:
                self._layouts.clear()
            lay = self._layouts[edges_key] = _layout(self.nu, 1.0 / edges[::-1])
        return lay

    def ln_sigma_at(self, t):
        if self.temperatures is None or self.temperatures.size == 1:
            return self.ln_sigma[0]
        inv = 1.0 / self.temperatures
        j = int(np.clip(np.searchsorted(self.temperatures, t, side="right") - 1, 0,
                        self.temperatures.size - 2))
        f = (1.0 / t - inv[j]) / (inv[j + 1] - inv[j])
        f = min(max(f, 0.0), 1.0)
        return self.ln_sigma[j] * (1.0 - f) + self.ln_sigma[j + 1] * f

    def k_at(self, t, edges_key, edges, g):
        key = (edges_key, g.tobytes(), t)
        k = self._k.get(key)
        if k is None:
            if len(self._k) >= _CACHE_SIZE:
                self._k.clear()
            lay = self.layout(edges_key, edges)
            k = _quantiles_on_layout(self.ln_sigma_at(t), lay, g)[::-1]   # wavelength order
            k.setflags(write=False)
            self._k[key] = k
        return k


# size: the opacity-source interface (seven methods, the longest 52 lines) over users' tables
class UserOpacitySource:
    """An opacity source in which user cross-section tables replace line opacity.

    It behaves like snrkit's own opacity (the functions of
    :mod:`snrkit.atmosphere.opacity` and :mod:`snrkit.atmosphere.continuum`,
    or those of ``base``), except that :meth:`species_k_coefficients` of the
    species given in ``tables`` is built from the user's tables (see the
    module docstring).  Pass it as ``opacity_source`` to
    :func:`snrkit.atmosphere.spectrum.transmission_spectrum`.

    Parameters
    ----------
    tables : dict of str to (path or astropy.table.Table)
        Species -> cross-section file (read with :func:`read_cross_sections`,
        units from the file) or a table (for example the result of
        :func:`read_cross_sections`, or any table in the documented layout
        with units on its columns).  Species may be any of
        :data:`snrkit.atmosphere.composition.SPECIES`; a species with its own
        snrkit tables is replaced.
    base : object, optional
        The opacity source for everything else (default: snrkit's tables).
    outside : {"error", "zero"}
        Requested bins reaching outside a table's spectral range: raise
        :class:`~snrkit.errors.InputError` naming the range not covered
        (default), or give those parts of the bins zero cross-section.

    Attributes
    ----------
    OPACITY_SPECIES : tuple of str
        The base source's species followed by the new user species.
    tables : dict of str to astropy.table.Table
        The validated tables (layout of :func:`read_cross_sections`).
    """

    def __init__(self, tables, base=None, *, outside="error"):
        if outside not in OUTSIDE_POLICIES:
            raise InputError("outside", outside, " or ".join(repr(p) for p in OUTSIDE_POLICIES))
        if not isinstance(tables, dict) or not tables:
            raise InputError("tables", type(tables).__name__,
                             "a dict of species -> cross-section file or table")
        self._base = _DefaultSource() if base is None else base
        self.outside = outside
        self._user = {}
        self.tables = {}
        for species, spec in tables.items():
            _check_species(species)
            if isinstance(spec, (str, Path)):
                table = read_cross_sections(spec, species)
                label = str(spec)
            else:
                from astropy.table import Table
                if not isinstance(spec, Table):
                    raise InputError(f"tables[{species!r}]", type(spec).__name__,
                                     "a file path or an astropy Table")
                meta_sp = spec.meta.get("species")
                if meta_sp is not None and meta_sp != species:
                    raise InputError(f"tables[{species!r}]", f"a table of {meta_sp}",
                                     f"a cross-section table of {species}")
                label = str(spec.meta.get("source", f"{species} table"))
                table = spec
            blocks = _blocks_from_table(table, species, Path(label).name)
            self._user[species] = _SpeciesTable(species, blocks, label)
            self.tables[species] = (table if "wavenumber" in table.colnames
                                    and table.meta.get("species") == species
                                    else _blocks_to_table(blocks, species, label, {}))
        base_species = tuple(self._base.OPACITY_SPECIES)
        self.OPACITY_SPECIES = base_species + tuple(s for s in self._user if s not in base_species)

    def __getattr__(self, name):
        if name.startswith("__") or name in ("_base", "_user"):
            raise AttributeError(name)
        return getattr(self._base, name)

    def __repr__(self):
        parts = ", ".join(f"{s}: {t.label}" for s, t in self._user.items())
        return f"UserOpacitySource({{{parts}}}, outside={self.outside!r})"

    def wavelength_range_um(self, species):
        """(shortest, longest) wavelength [um] covered by a user table."""
        if species not in self._user:
            raise InputError("species", species, "one of the user tables: " + ", ".join(self._user))
        lo, hi = self._user[species].wavelength_range_m
        return lo * 1e6, hi * 1e6

    def _check_edges(self, tab, wavelength_edges_m):
        e = np.asarray(wavelength_edges_m, dtype=np.float64)
        if e.ndim != 1 or e.size < 2:
            raise InputError("wavelength_edges_m", f"array of shape {e.shape}",
                             "a 1-D array of at least 2 bin edges [m]")
        if not np.all(np.isfinite(e)) or np.any(np.diff(e) <= 0) or e[0] <= 0:
            raise InputError("wavelength_edges_m", "unsorted, repeated, non-positive or "
                             "non-finite edges", "strictly increasing positive edges [m]")
        lo, hi = tab.wavelength_range_m
        # edges within 1e-9 (relative) of the table's ends count as inside
        e = np.where(np.abs(e / lo - 1.0) < 1e-9, lo, e)
        e = np.where(np.abs(e / hi - 1.0) < 1e-9, hi, e)
        if self.outside == "error" and (e[0] < lo or e[-1] > hi):
            gaps = []
            if e[0] < lo:
                gaps.append(f"{e[0] * 1e6:.6g}-{min(lo, e[-1]) * 1e6:.6g} um")
            if e[-1] > hi:
                gaps.append(f"{max(hi, e[0]) * 1e6:.6g}-{e[-1] * 1e6:.6g} um")
            raise InputError(f"{tab.species} cross-sections ({Path(tab.label).name})",
                             "wavelengths " + " and ".join(gaps) + " not covered",
                             f"bins inside the table's range {lo * 1e6:.6g}-{hi * 1e6:.6g} um",
                             detail="nothing is extrapolated; trim the wavelength grid or use "
                                    "outside='zero'")
        return e

    def _temperatures(self, tab, temperature_K):
        from .opacity import OpacityRangeWarning
        t = np.asarray(temperature_K, dtype=np.float64)
        if not np.all(np.isfinite(t)) or np.any(t <= 0):
            raise InputError("temperature_K", "non-finite or non-positive value",
                             "finite temperatures > 0 K")
        temps = tab.temperatures
        if temps is None:
            return t
        lo, hi = float(temps[0]), float(temps[-1])
        if np.any(t < lo) or np.any(t > hi):
            warnings.warn(OpacityRangeWarning(
                f"temperature_K: values outside the {tab.species} cross-section table's range "
                f"{lo:g}-{hi:g} K (got {t.min():g}-{t.max():g}); clamped to the range"),
                stacklevel=3)
            t = np.clip(t, lo, hi)
        return t

    def species_k_coefficients(self, species, wavelength_edges_m, temperature_K, n_g=8, *,
                               pressure_Pa=None):
        """k-distribution of one species' cross-section on spectral bins.

        For a species with a user table: the sorted table cross-section in
        each bin at the Gauss-Legendre points of ``g_quadrature(n_g)`` (module
        docstring).  Other species: the base source's function.

        Parameters
        ----------
        species : str
        wavelength_edges_m : array_like
            Strictly increasing bin edges [m], inside the table's range unless
            the source was made with ``outside="zero"``.
        temperature_K : array_like
            Temperatures [K], any shape; clamped to the table's temperatures
            with an :class:`~snrkit.atmosphere.opacity.OpacityRangeWarning`.
        n_g : int
            Number of g points.
        pressure_Pa : array_like, optional
            Broadcast against ``temperature_K`` for the output shape; a user
            table has no pressure dependence.

        Returns
        -------
        numpy.ndarray
            Cross-section per molecule [m2], shape
            ``broadcast(temperature_K, pressure_Pa).shape + (n_bins, n_g)``,
            ascending along the last axis.
        """
        if species not in self._user:
            kw = {} if pressure_Pa is None else {"pressure_Pa": pressure_Pa}
            return self._base.species_k_coefficients(species, wavelength_edges_m,
                                                     temperature_K, n_g=n_g, **kw)
        tab = self._user[species]
        g, _ = self._base.g_quadrature(n_g)
        g = np.ascontiguousarray(g, dtype=np.float64)
        edges = self._check_edges(tab, wavelength_edges_m)
        t = self._temperatures(tab, temperature_K)
        if pressure_Pa is not None:
            p = np.asarray(pressure_Pa, dtype=np.float64)
            if np.any(~(p > 0)):
                raise InputError("pressure_Pa", "a value <= 0 or NaN", "pressures > 0 Pa")
            t = np.broadcast_to(t, np.broadcast_shapes(t.shape, p.shape))
        if tab.temperatures is None or tab.temperatures.size == 1:
            t_eval = np.zeros(t.shape)           # one distribution for every temperature
        else:
            t_eval = t
        key = np.ascontiguousarray(edges).tobytes()
        uniq, inv = np.unique(t_eval.ravel(), return_inverse=True)
        ks = np.stack([tab.k_at(float(tt), key, edges, g) for tt in uniq])
        return ks[inv.ravel()].reshape(t.shape + (edges.size - 1, g.size))
