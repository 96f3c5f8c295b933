"""The analytic solver's temperature-grid path for many planets agrees with the per-planet path.

Reference: the per-planet path itself (Heng & Kitzmann 2017 with per-planet
opacities); the tolerance (0.05 scale heights) is a planning tolerance, common
practice, no source.
"""

import numpy as np
import pytest

from snrkit.atmosphere import spectrum as spm


# the grid path is the analytic solver's; the temperate preset's cold trap would take the
# layered solver, so its well-mixed variant is used here
@pytest.mark.parametrize("scenario", ["h2-clear-solar", {"scenario": "n2-o2-temperate", "cold_trap": {}},
                                      "h2-cloudy-solar"],
                         ids=["h2-clear-solar", "n2-o2-temperate-well-mixed", "h2-cloudy-solar"])
def test_grid_path_matches_per_planet_path(scenario):
    rng = np.random.default_rng(8)
    n = spm.GRID_OPACITY_MIN_PLANETS
    rp = rng.uniform(1.5, 12.0, n)
    mp = 1.436 * rp ** 1.7
    rs = rng.uniform(0.3, 1.2, n)
    teq = np.geomspace(250.0, 1900.0, n)
    edges = spm.wavelength_bin_edges(30, 0.6e-6, 5.0e-6) * 1e6
    kw = dict(planet_mass=mp, equilibrium_temperature=teq, wavelength_edges=edges)
    fast = spm.transmission_spectrum(scenario, rp, rs, **kw)
    slow = [spm.transmission_spectrum(scenario, rp[i:i + 1], rs[i:i + 1], planet_mass=mp[i:i + 1],
                                      equilibrium_temperature=teq[i:i + 1], wavelength_edges=edges)
            for i in range(0, n, 7)]
    for k, i in enumerate(range(0, n, 7)):
        h = float(fast["effective_height_km"].values[i].max() - fast["effective_height_km"].values[i].min())
        diff = np.abs(fast["effective_height_km"].values[i] - slow[k]["effective_height_km"].values[0])
        scale_h = float(slow[k]["scale_height_km"].values[0])
        assert np.max(diff) < 0.05 * scale_h, (i, np.max(diff) / scale_h, h)
