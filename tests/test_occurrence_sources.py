"""The shipped occurrence tables against an independent transcription of the papers.

The reference numbers below are those of the SAG13 occurrence-rate
compilation (a public repository of published occurrence grids, each
transcribed with its bin edges: github.com/dgarrett622/Occurrence), read
here file by file:

* Fressin et al. 2013, ApJ 766, 81: ``Data/Fressin2013/eta.txt`` (rates) and
  ``sigma_p.txt`` (1-sigma), commit b3135fc15c3d555c1a1607f9639edde89058bba8;
  radius edges 0.8, 1.25, 2, 4, 6, 22 R_earth, period edges 0.8-418 d in 11
  bins (``Fressin2013.json``); the compilation's notes name the paper's
  Table 2;
* Dressing & Charbonneau 2015, ApJ 807, 45: ``DressingCharbonneau2015/eta.txt``
  and ``sigma_p.txt`` (upper 1-sigma), commit
  ab60796582f3cabfbac61fcb8a6c9f50ffe42d06; radius edges 0.5-4 R_earth in
  0.5 steps, period edges 0.5, 1.7, 5.5, 18.2, 60.3, 200 d, matching the 7 x 5
  grid of ``eta.txt``, from ``Data/DressingCharbonneau2015/DressingCharbonneau2015.json``
  (commit b3135fc; the top-level ``DressingCharbonneau2015.json`` at commit
  a5390e6 lists 10 finer period bins that do not match ``eta.txt``: the
  repository's own files disagree there); the notes name the paper's
  Figure 12.

Numbers in per cent, rows small to large radius, columns short to long
period; NaN where the compilation has no value.  Every cell with a value
must equal the shipped table's rate and uncertainty and be marked
``published``; every cell without one must carry another status (the fills
and the interpolation documented in the tables' provenance).
"""

import numpy as np
import pytest

from snrkit.io.tables import read_columns
from snrkit.planning.population.model import occurrence_cells

N = np.nan
FRESSIN_RADIUS = [0.8, 1.25, 2.0, 4.0, 6.0, 22.0]
FRESSIN_PERIOD = [0.8, 2.0, 3.4, 5.9, 10.0, 17.0, 29.0, 50.0, 85.0, 145.0, 245.0, 418.0]
FRESSIN_ETA = [
    [0.18, 0.61, 1.72, 2.70, 2.70, 2.93, 4.08, 3.46, N, N, N],
    [0.17, 0.74, 1.49, 2.90, 4.30, 4.49, 5.29, 3.66, 6.54, N, N],
    [0.035, 0.18, 0.73, 1.93, 3.67, 5.29, 6.45, 5.25, 4.31, 3.09, N],
    [0.004, 0.006, 0.11, 0.091, 0.29, 0.32, 0.49, 0.66, 0.43, 0.53, 0.24],
    [0.015, 0.067, 0.17, 0.18, 0.27, 0.23, 0.35, 0.71, 1.25, 0.94, 1.05],
]
FRESSIN_SIGMA = [
    [0.04, 0.15, 0.43, 0.60, 0.83, 1.05, 1.88, 2.81, N, N, N],
    [0.03, 0.13, 0.23, 0.56, 0.73, 1.0, 1.48, 1.21, 2.20, N, N],
    [0.011, 0.03, 0.09, 0.19, 0.39, 0.64, 1.01, 1.05, 1.03, 0.90, N],
    [0.003, 0.006, 0.03, 0.03, 0.07, 0.08, 0.12, 0.16, 0.17, 0.21, 0.15],
    [0.007, 0.018, 0.03, 0.04, 0.06, 0.06, 0.10, 0.17, 0.29, 0.28, 0.30],
]
DC15_RADIUS = [0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0]
DC15_PERIOD = [0.5, 1.7, 5.5, 18.2, 60.3, 200.0]
DC15_ETA = [
    [1.920, 9.880, 23.06, 17.75, N],
    [1.830, 9.180, N, 23.080, 30.70],
    [0.330, 3.700, 20.06, 26.73, 18.90],
    [N, 2.250, 15.69, 23.65, 14.12],
    [N, 1.190, 6.540, 10.42, 5.300],
    [N, 0.580, 2.550, 2.440, 1.830],
    [N, 0.360, 0.870, 0.530, N],
]
DC15_SIGMA_UP = [
    [1.010, 3.450, 8.290, 13.34, N],
    [0.870, 2.620, N, 9.380, 26.67],
    [0.460, 1.820, 5.450, 8.990, 14.67],
    [N, 1.570, 4.910, 8.810, 11.55],
    [N, 1.210, 3.510, 6.680, 7.850],
    [N, 0.910, 2.410, 4.140, 5.320],
    [N, 0.720, 1.650, 2.310, N],
]
CASES = {"FGK": (FRESSIN_RADIUS, FRESSIN_PERIOD, FRESSIN_ETA, FRESSIN_SIGMA),
         "M": (DC15_RADIUS, DC15_PERIOD, DC15_ETA, DC15_SIGMA_UP)}
FILES = {"FGK": "occurrence_fgk.ecsv", "M": "occurrence_m.ecsv"}


@pytest.mark.parametrize("table", ["FGK", "M"])
def test_cells_equal_the_transcription(table):
    radius, period, eta, sigma = CASES[table]
    cells = occurrence_cells(table)
    t = read_columns("population", FILES[table])
    # the same grid, rows by radius then period
    assert np.allclose(np.unique(cells["radius_min"]), radius[:-1])
    assert np.allclose(np.unique(cells["period_max"]), period[1:])
    checked = 0
    for k in range(len(cells["rate"])):
        i = radius.index(float(cells["radius_min"][k]))
        j = period.index(float(cells["period_min"][k]))
        ref, err = eta[i][j], sigma[i][j]
        if np.isnan(ref):
            assert cells["status"][k] != "published", (table, i, j)
            continue
        assert cells["status"][k] == "published", (table, i, j)
        assert cells["rate"][k] == pytest.approx(ref / 100.0, rel=1e-9), (table, i, j)
        assert t["uncertainty"][k] == pytest.approx(sigma[i][j] / 100.0, rel=1e-9), (table, i, j)
        assert np.isfinite(err)
        checked += 1
    assert checked == int(np.sum(np.isfinite(np.asarray(eta, dtype=float))))
