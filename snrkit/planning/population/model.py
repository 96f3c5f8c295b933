"""The local-volume host model and the occurrence-rate tables of the generator.

Pure numpy compute on the shipped tables of ``data_tables/population/``
(provenance in each table's metadata and in
``data_tables/scripts/make_population_tables.py``):

* spectral-class mix: local number densities of F, G, K and M dwarfs
  (Mamajek 2016, figshare 3206527: 2.3e-3, 4.8e-3, 1.05e-2, 5.92e-2 pc^-3);
* within a class, Teff uniform between the class edges (common practice, no
  source: the real M class is weighted to mid-M by the mass function); the
  edges lie half-way between the last subtype of a class and the first of
  the next, F is cut at 7200 K and M at 2810 K (M6V), the Kopparapu et al.
  2014 habitable-zone fits' range and the sequence's end;
* radius, mass and absolute V, J, H, Ks magnitudes interpolated linearly in
  Teff in the mean dwarf sequence of Pecaut & Mamajek 2013 (ApJS 208, 9,
  Table 5, in E. Mamajek's updated version 2024.05.15), no scatter;
* distances uniform in volume between ``min_distance_pc`` and
  ``max_distance_pc``; apparent magnitudes m = M + 5 log10(d / 10 pc),
  no extinction (common practice for nearby stars, no source); sky
  positions uniform on the sphere;
* occurrence: Fressin et al. 2013 (ApJ 766, 81; its Table 2 as transcribed in the SAG13 compilation) for F, G and K
  hosts, its empty cells (Earths beyond 85 d, super-Earths beyond 145 d)
  filled with half the Hsu et al. 2019 (AJ 158, 109) upper limit as a
  density flat in ln P and ln R, and small Neptunes at 245-418 d carried
  flat in ln P from 145-245 d; Dressing & Charbonneau 2015 (ApJ 807, 45,
  Figure 12) for M dwarfs; as mean planets per star in period-radius cells
  (each cell's ``status`` says where its value comes from).
"""

from functools import lru_cache

import numpy as np

from ...io.tables import read_columns

__all__ = ["SPECTRAL_CLASSES", "HOST_CLASS", "CLASS_TEFF_RANGE_K", "OCCURRENCE_TABLES",
           "class_fractions", "class_densities", "dwarf_properties", "occurrence_cells", "draw_hosts",
           "apparent_magnitudes"]

#: Spectral classes of the host model, hottest first.
SPECTRAL_CLASSES = ("F", "G", "K", "M")
#: Spectral class -> occurrence table used for its planets.
HOST_CLASS = {"F": "FGK", "G": "FGK", "K": "FGK", "M": "M"}
#: Occurrence table name -> shipped file.
OCCURRENCE_TABLES = {"FGK": "occurrence_fgk.ecsv", "M": "occurrence_m.ecsv"}
#: Teff range [K] drawn for each class (edges half-way between adjacent subtypes).
CLASS_TEFF_RANGE_K = {"F": (5960.0, 7200.0), "G": (5335.0, 5960.0), "K": (3890.0, 5335.0),
                      "M": (2810.0, 3890.0)}


@lru_cache(maxsize=1)
def _mix():
    t = read_columns("population", "host_mix.ecsv")
    return dict(zip(t["spectral_class"].tolist(), t["number_density"].tolist()))


def class_densities():
    """Local number densities of the dwarf classes [pc^-3] (``host_mix.ecsv``, Mamajek 2016).

    Returns
    -------
    dict of str to float
        By class ``F``, ``G``, ``K``, ``M``.
    """
    return dict(_mix())


def class_fractions(mix=None):
    """Fraction of hosts in each spectral class.

    Parameters
    ----------
    mix : dict of str to float, optional
        Relative weights by class (any of ``F``, ``G``, ``K``, ``M``; absent
        classes get 0).  Default: the local number densities of the shipped
        ``host_mix.ecsv`` (Mamajek 2016).

    Returns
    -------
    numpy.ndarray
        Fractions in the order of :data:`SPECTRAL_CLASSES`, summing to 1.
    """
    weights = _mix() if mix is None else mix
    w = np.array([float(weights.get(c, 0.0)) for c in SPECTRAL_CLASSES])
    return w / w.sum()


@lru_cache(maxsize=1)
def _sequence():
    t = read_columns("population", "dwarf_sequence.ecsv")
    order = np.argsort(t["teff"])
    return {k: np.asarray(t[k])[order] for k in ("teff", "radius", "mass", "abs_mag_V",
                                                 "abs_mag_J", "abs_mag_H", "abs_mag_Ks")}


def dwarf_properties(teff_K):
    """Mean dwarf radius [R_sun], mass [M_sun] and absolute magnitudes at Teff.

    Linear interpolation in Teff in the Pecaut & Mamajek 2013 sequence
    (Mamajek version 2024.05.15), clipped to its ends (2810-7220 K).

    Returns
    -------
    dict of str to numpy.ndarray
        ``radius``, ``mass``, ``abs_mag_V``, ``abs_mag_J``, ``abs_mag_H``,
        ``abs_mag_Ks``.
    """
    s = _sequence()
    teff = np.asarray(teff_K, dtype=np.float64)
    return {k: np.interp(teff, s["teff"], v) for k, v in s.items() if k != "teff"}


@lru_cache(maxsize=4)
def occurrence_cells(table):
    """The cells of an occurrence table as numpy arrays.

    Parameters
    ----------
    table : {"FGK", "M"}

    Returns
    -------
    dict of str to numpy.ndarray
        ``radius_min``, ``radius_max`` [R_earth], ``period_min``,
        ``period_max`` [d], ``rate`` (mean planets per star), ``status``.
    """
    t = read_columns("population", OCCURRENCE_TABLES[table])
    return {"radius_min": t["radius_min"], "radius_max": t["radius_max"],
            "period_min": t["period_min"], "period_max": t["period_max"],
            "rate": t["planets_per_star"], "status": t["status"]}


def draw_hosts(rng, n, fractions, min_distance_pc, max_distance_pc):
    """Draw ``n`` hosts of the local-volume model (see the module docstring).

    Parameters
    ----------
    rng : numpy.random.Generator
    n : int
    fractions : numpy.ndarray
        Class fractions in the order of :data:`SPECTRAL_CLASSES`.
    min_distance_pc, max_distance_pc : float
        Distance limits [pc].

    Returns
    -------
    dict of str to numpy.ndarray
        ``spectral_class`` (index into :data:`SPECTRAL_CLASSES`), ``teff``
        [K], ``radius`` [R_sun], ``mass`` [M_sun], ``distance`` [pc],
        ``ra``, ``dec`` [deg] (magnitudes: :func:`apparent_magnitudes`).
    """
    u = rng.random((5, n))
    cls = np.minimum(np.searchsorted(np.cumsum(fractions), u[0], side="right"),
                     len(SPECTRAL_CLASSES) - 1)
    lo = np.array([CLASS_TEFF_RANGE_K[c][0] for c in SPECTRAL_CLASSES])[cls]
    hi = np.array([CLASS_TEFF_RANGE_K[c][1] for c in SPECTRAL_CLASSES])[cls]
    teff = lo + (hi - lo) * u[1]
    s = _sequence()
    d3 = min_distance_pc ** 3 + u[2] * (max_distance_pc ** 3 - min_distance_pc ** 3)
    return {"spectral_class": cls, "teff": teff,
            "radius": np.interp(teff, s["teff"], s["radius"]),
            "mass": np.interp(teff, s["teff"], s["mass"]),
            "distance": np.cbrt(d3), "ra": 360.0 * u[3],
            "dec": np.degrees(np.arcsin(2.0 * u[4] - 1.0))}


def apparent_magnitudes(teff_K, distance_pc):
    """Apparent V, J, H, Ks magnitudes m = M(Teff) + 5 log10(d / 10 pc), no extinction.

    Returns
    -------
    dict of str to numpy.ndarray
        ``mag_V``, ``mag_J``, ``mag_H``, ``mag_Ks``.
    """
    props = dwarf_properties(teff_K)
    modulus = 5.0 * np.log10(np.asarray(distance_pc, dtype=np.float64) / 10.0)
    return {f"mag_{b}": props[f"abs_mag_{b}"] + modulus for b in ("V", "J", "H", "Ks")}
