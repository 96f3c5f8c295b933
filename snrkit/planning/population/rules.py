"""Labels of a synthetic planet: planet class, habitable-zone position and scenario.

All rules are vectorized over planets and use insolation S in units of
Earth's (``snrkit.metrics.insolation``).

Planet class (:func:`planet_class`)
    ``"<size>-<temperature>"``: size from the radius bins of Kopparapu et
    al. 2018 (ApJ 856, 122, Table 1; the radius boundaries as stated in
    the paper's abstract, arXiv:1802.09602; the insolation boundaries value
    from memory) -- ``rocky``
    (0.5-1.0 R_earth; smaller radii too), ``super-earth`` (1.0-1.75),
    ``sub-neptune`` (1.75-3.5), ``sub-jovian`` (3.5-6), ``jovian`` (6-14.3;
    larger radii too); temperature ``hot``, ``warm`` or ``cold`` from the
    same table's insolation boundaries for that size (their outermost
    bounds are not applied: hotter is hot, colder is cold).

Habitable-zone position
    :func:`snrkit.metrics.habitable_zone_position` (Kopparapu et al. 2014):
    ``inner``, ``optimistic``, ``conservative``, ``outer`` or ``undefined``.

Scenario (:func:`assign_scenario`), from snrkit's scenario presets, first rule that applies
    (common practice, no source, except the radius gap):

    1. R >= 3.5 R_earth: hydrogen-helium envelope with solar metals,
       ``h2-clear-solar`` if Teq >= 1000 K (hot chemistry), else
       ``h2-warm-solar``;
    2. 1.75 <= R < 3.5 R_earth (above the radius gap of Fulton et al. 2017,
       AJ 154, 109): ``h2-metal-rich`` (sub-Neptunes enriched in metals);
    3. R < 1.75 R_earth (rocky), by habitable-zone position: ``inner``
       (hotter than recent Venus) -> ``co2-thick`` (Venus-like);
       ``optimistic`` on the hot side (between recent Venus and the
       runaway greenhouse) -> ``steam``; ``conservative`` -> ``n2-o2-temperate``;
       ``optimistic`` on the cold side and ``outer`` -> ``n2-co2-ch4-anoxic``;
       ``undefined`` (Teff outside 2600-7200 K) -> ``co2-thick`` if S > 1
       else ``n2-co2-ch4-anoxic``.
"""

from functools import lru_cache

import numpy as np

from ...io.tables import read_columns

__all__ = ["planet_class", "assign_scenario", "PLANET_CLASS_LABELS", "SCENARIO_RULES",
           "HOT_CHEMISTRY_TEQ_K", "RADIUS_GAP_EARTH", "ENVELOPE_RADIUS_EARTH"]

#: Teq [K] above which a giant or sub-Jovian gets the hot-chemistry preset.
HOT_CHEMISTRY_TEQ_K = 1000.0
#: Radius [R_earth] at and above which a planet keeps a hydrogen-rich envelope.
RADIUS_GAP_EARTH = 1.75
#: Radius [R_earth] at and above which the envelope has solar metallicity.
ENVELOPE_RADIUS_EARTH = 3.5
#: The scenario presets the rules can assign.
SCENARIO_RULES = ("h2-clear-solar", "h2-warm-solar", "h2-metal-rich", "co2-thick", "steam",
                  "n2-o2-temperate", "n2-co2-ch4-anoxic")


@lru_cache(maxsize=1)
def _classes():
    t = read_columns("population", "planet_classes.ecsv")
    return (t["label"].tolist(), np.asarray(t["radius_min"]), np.asarray(t["radius_max"]),
            np.asarray(t["insolation_hot_warm"]), np.asarray(t["insolation_warm_cold"]))


def _labels():
    labels = _classes()[0]
    return tuple(f"{s}-{t}" for s in labels for t in ("hot", "warm", "cold"))


#: Every planet-class label, size-major (``rocky-hot``, ``rocky-warm``, ...).
PLANET_CLASS_LABELS = _labels()


def planet_class(radius_earth, insolation_earth):
    """Planet-class label from radius [R_earth] and insolation [S_earth].

    Returns
    -------
    numpy.ndarray of str
        One of :data:`PLANET_CLASS_LABELS` per planet.
    """
    labels, _, rmax, hot_warm, warm_cold = _classes()
    r = np.asarray(radius_earth, dtype=np.float64)
    s = np.asarray(insolation_earth, dtype=np.float64)
    size = np.minimum(np.searchsorted(rmax, r, side="right"), len(labels) - 1)
    temp = np.where(s > hot_warm[size], 0, np.where(s >= warm_cold[size], 1, 2))
    return np.asarray(PLANET_CLASS_LABELS)[3 * size + temp]


def assign_scenario(radius_earth, teq_K, insolation_earth, hz_position, hz_runaway):
    """Scenario preset name for each planet, by the rules of the module docstring.

    Parameters
    ----------
    radius_earth, teq_K, insolation_earth : array_like
        Radius [R_earth], equilibrium temperature [K] (zero albedo, full
        redistribution) and insolation [S_earth].
    hz_position : array_like of str
        :func:`snrkit.metrics.habitable_zone_position` labels.
    hz_runaway : array_like
        The runaway-greenhouse flux limit [S_earth] at the host's Teff
        (NaN where undefined), which splits ``optimistic`` into its hot and
        cold sides.

    Returns
    -------
    numpy.ndarray of str
    """
    r = np.asarray(radius_earth, dtype=np.float64)
    s = np.asarray(insolation_earth, dtype=np.float64)
    hz = np.asarray(hz_position)
    with np.errstate(invalid="ignore"):
        hot_side = s > np.asarray(hz_runaway, dtype=np.float64)
    rocky = np.select(
        [hz == "inner", (hz == "optimistic") & hot_side, hz == "conservative",
         (hz == "optimistic") | (hz == "outer"), s > 1.0],
        ["co2-thick", "steam", "n2-o2-temperate", "n2-co2-ch4-anoxic", "co2-thick"],
        default="n2-co2-ch4-anoxic")
    return np.where(r >= ENVELOPE_RADIUS_EARTH,
                    np.where(np.asarray(teq_K) >= HOT_CHEMISTRY_TEQ_K, "h2-clear-solar",
                             "h2-warm-solar"),
                    np.where(r >= RADIUS_GAP_EARTH, "h2-metal-rich", rocky)).astype(str)
