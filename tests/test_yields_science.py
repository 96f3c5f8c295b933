"""The yield logic checked by hand: transits that occur in the mission years, hours per
transit, and the aperture scaling of the engine's answer.

A planet counts for a design when its status is ok, its transits needed N are at
most ``max_transits`` and at most the transits that occur in the design's years,
and N times the hours per transit is within the design's hours
(snrkit.planning.yields.chunk.reached_mask).
"""

import math
import warnings

import numpy as np
import pytest
from hypothesis import example, given, settings, strategies as st

from snrkit.engine.transits import transits_for_system
from snrkit.photons.instruments import load_mode
from snrkit.planning.catalog import catalogue_from_table
from snrkit.planning.population import generate_block
from snrkit.planning.yields import population_yields
from snrkit.planning.yields.chunk import YEAR_S, reached_mask
from snrkit.planning.yields.designs import build_mode, design_from_text

MODE = "cold6m-prism-lowres"
R_SUN_M = 6.957e8        # IAU 2015 Resolution B3 nominal solar radius (Prsa et al. 2016, AJ 152, 41)
R_EARTH_M = 6.3781e6     # IAU 2015 Resolution B3 nominal equatorial Earth radius (same source)
AU_M = 1.495978707e11    # IAU 2012 Resolution B2
DAY_H = 24.0


def _t14_hours(period_d, a_au, rs_sun, rp_earth, b):
    """Total transit duration of a circular orbit, Winn 2010 ("Transits and Occultations",
    in Exoplanets, ed. Seager), eq. 14: T14 = P/pi asin[(Rs/a) sqrt((1 + k)^2 - b^2) / sin i],
    with cos i = b Rs / a (eq. 7 for e = 0)."""
    rs_a = rs_sun * R_SUN_M / (a_au * AU_M)
    k = rp_earth * R_EARTH_M / (rs_sun * R_SUN_M)
    sin_i = math.sqrt(1.0 - (b * rs_a) ** 2)
    return period_d * DAY_H / math.pi * math.asin(rs_a * math.sqrt((1 + k) ** 2 - b ** 2) / sin_i)


@pytest.fixture(scope="module")
def tiny(tmp_path_factory):
    """Twelve invented planets on circular orbits, one design with both budgets."""
    pop = generate_block(7, 0)[:12]
    pop["eccentricity"] = 0.0
    out = tmp_path_factory.mktemp("tiny")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")   # the engine's own notes (SnrkitWarning) are not checked here
        population_yields(pop, design_texts=["name=d,aperture_m=8,years=0.5,hours=40"], mode=MODE,
                          scenarios=["h2-metal-rich"], resolution=10, scheduler="in-process",
                          out_dir=out)
    import pyarrow.parquet as pq
    rows = pq.read_table(out / "planets").to_pandas().sort_values("row").reset_index(drop=True)
    return pop, rows


def test_transits_in_the_mission_years_by_hand(tiny):
    """floor(Y * 365.25 d / P): the Julian year of 365.25 d (IAU), every transit taken
    (no observability fraction; the design docstring calls it an upper bound)."""
    pop, rows = tiny
    for i in range(len(pop)):
        hand = min(math.floor(0.5 * 365.25 / float(pop["period_days"][i])), 500)
        assert int(rows["transits_available"][i]) == hand


def test_hours_per_transit_by_hand(tiny):
    """hours = N (T14 + baseline + overhead): baseline = T14 (the engine's default out-of-
    transit time, common practice, no source) and 1 h of overhead per visit
    (DEFAULT_OVERHEAD_HOURS, common practice, no source); T14 from Winn 2010 eq. 14."""
    pop, rows = tiny
    ok = rows["transits_needed"] > 0
    assert ok.sum() >= 6
    for i in np.flatnonzero(ok):
        t14 = _t14_hours(float(pop["period_days"][i]), float(pop["semi_major_axis_au"][i]),
                         float(pop["host_radius_sun"][i]), float(pop["planet_radius_earth"][i]),
                         float(pop["impact_parameter"][i]))
        n = int(rows["transits_needed"][i])
        assert float(rows["hours_total"][i]) == pytest.approx(n * (2 * t14 + 1.0), rel=1e-6)
    # reached: status ok, N within the transits available and the hours within 40
    hand = ((rows["status"] == "ok") & ok & (rows["transits_needed"] <= rows["transits_available"])
            & (rows["hours_total"].fillna(np.inf) <= 40))
    assert rows["reached"].tolist() == hand.tolist()
    assert 0 < hand.sum() < ok.sum()          # the budgets cut some planets, not all


@settings(max_examples=60, deadline=None)
@given(st.floats(0.2, 500.0), st.floats(0.01, 10.0))
@example(0.20000000000000004, 1.6)      # L/P a hair below 2922: the least count is 2921
def test_transits_available_are_those_that_occur_whatever_the_phase(period_d, years):
    """Counting mid-transit times t0 + k P inside [0, L) for phases t0 in [0, P): the count
    is floor(L/P) or floor(L/P) + 1 (mean L/P); the yield takes the smaller, floor(L/P),
    which every phase guarantees.  The phases with the smaller count fill a window of
    width (ceil(L/P) - L/P) P just below P, which sampled phases can miss, so the exact
    floor is taken from the ratio itself (in exact arithmetic on the same floats); where
    L/P lies within 1e-9 of a whole number, a transit at the very end of the mission,
    rounding may give either."""
    from fractions import Fraction
    length = years * 365.25
    phases = period_d * np.append(np.linspace(0.0, 1.0, 64, endpoint=False), 1.0 - 1e-9)
    counts = np.ceil((length - phases) / period_d).astype(int)     # k = 0 .. ceil(...) - 1
    _, avail = reached_mask(np.array(["ok"]), np.array([1]), np.array([1.0]),
                            np.array([period_d * 86400.0]), 10**9, years=years)
    ratio = Fraction(years) * Fraction(365.25) / Fraction(period_d)
    whole = round(ratio)
    if abs(float(ratio - whole)) < 1e-9 * float(ratio):
        assert int(avail[0]) in (whole - 1, whole)
    else:
        assert int(avail[0]) == math.floor(ratio)
    # every sampled phase gets at least that many, and at most one more
    assert counts.min() >= avail[0] and counts.max() <= avail[0] + 1
    assert counts.max() - counts.min() <= 1
    assert counts.mean() == pytest.approx(length / period_d, abs=1.0)
    assert YEAR_S == 365.25 * 86400.0


def _faint(pop, rows, dm):
    t = pop[rows].copy()
    for band in ("V", "J", "H", "Ks"):
        t[f"host_mag_{band}"] += dm
    return catalogue_from_table(t).system


def test_transits_needed_scale_as_the_inverse_square_of_the_aperture():
    """Derivation: one transit collects S = F A t photons, A = pi D^2 / 4 (minus the same
    obscured fraction).  Photon-limited, sigma_1^2 = (1 - delta)^2 (1/N_in + 1/N_out) ~ 1/A,
    so the per-transit Delta chi^2_1 = sum (signal / sigma_1)^2 ~ A ~ D^2.  With no floor,
    N stacked transits give Delta chi^2(N) = N Delta chi^2_1 (independent transits), and the
    transits needed for Z = sqrt(Delta chi^2) (Cowan et al. 2011, Eur. Phys. J. C 71, 1554)
    are N = ceil(Z^2 / Delta chi^2_1) ~ D^-2: N(D1) / N(D2) = (D2 / D1)^2.  Read noise and dark
    add a variance r that does not grow with A: Delta chi^2_1(4A) / Delta chi^2_1(A)
    = 16 (A s + r) / (4 A s + r) >= 4, equal to 4 when r -> 0, so faint hosts (same readout
    at both apertures, checked) keep it within a few percent.  The floor is a fraction of
    the depth, unchanged by the aperture: with it, the ratio falls below 4."""
    pop = generate_block(7, 0)
    system = _faint(pop, [3, 10], 6.0)            # J about 17: 100 groups, no bin saturated
    per, need = {}, {}
    base = load_mode(MODE)
    for d in (6.0, 12.0):
        for floor in (0, None):
            text = f"aperture_m={d}" + (",floor_ppm=0" if floor == 0 else "")
            mode, _ = build_mode(design_from_text(text, MODE))
            assert mode.floor_ppm == (0.0 if floor == 0 else base.floor_ppm)   # floor unchanged
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")   # the engine's notes are not checked here
                recs = transits_for_system(system, mode, "h2-clear-solar", resolution=10,
                                           probabilities=(), n_max=100000, sigma=20.0)["planets"]
            assert [r["status"] for r in recs] == ["ok", "ok"]
            assert [r["bins_saturated"] for r in recs] == [0, 0]
            per[d, floor] = np.array([r["delta_chi2_per_transit"] for r in recs])
            need[d, floor] = np.array([r["transits_needed"] for r in recs])
            groups = [r["groups_per_integration"] for r in recs]
            assert groups == per.setdefault(("groups", floor), groups)     # same readout
    ratio = per[12.0, 0] / per[6.0, 0]
    np.testing.assert_allclose(ratio, (12.0 / 6.0) ** 2, rtol=0.03)
    assert np.all(ratio >= 4.0 * (1 - 1e-9))          # read noise only raises it (see above)
    # N = ceil(Z^2 / Delta chi^2_1) at sigma = 20, and N(6 m) / N(12 m) = 4 up to the ceiling
    for d in (6.0, 12.0):
        np.testing.assert_array_equal(need[d, 0], np.ceil(400.0 / per[d, 0]))
    assert np.all(need[6.0, 0] > 100)
    np.testing.assert_allclose(need[6.0, 0] / need[12.0, 0], 4.0, rtol=0.06)
    # with the mode's floor the aperture helps less (the floor does not shrink with D)
    assert np.all(per[12.0, None] / per[6.0, None] < ratio)
