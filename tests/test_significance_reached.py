"""The significance a real data set reaches with a given probability, and its curves.

References: the noncentral chi^2 distribution (Johnson, Kotz & Balakrishnan 1995,
*Continuous Univariate Distributions* vol. 2, ch. 29) as scipy.stats.ncx2 computes it;
the one-sided q0 of Cowan, Cranmer, Gross & Vitells 2011 (Eur. Phys. J. C 71, 1554,
Sec. 3.5), whose fitted amplitude is Gaussian with unit width about sqrt(lambda), so the
statistic is the 1-dof noncentral chi^2 with its wrong-sign half folded to 0.
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import stats

from snrkit.errors import InputError
from snrkit.stats import probability, stacker

WL = np.linspace(0.6, 5.0, 40)


def test_many_dof_against_scipy_ncx2_quantile():
    # Z_P = Phi^-1(1 - chi2.sf(ncx2.ppf(1 - P, nu, lambda), nu)): the statistic reached
    # with probability P is the lower 1 - P quantile of ncx2 (scipy.stats.ncx2.ppf).
    for nu, lam, p in ((12, 80.0, 0.9), (39, 150.0, 0.9), (7, 30.0, 0.75), (20, 400.0, 0.5)):
        q = stats.ncx2.ppf(1.0 - p, nu, lam)
        ref = stats.norm.isf(stats.chi2.sf(q, nu))
        got = probability.significance_at_probability(lam, p, nu)
        # P = 0.5 goes through the interpolated median table (relative error < 1e-4)
        assert got == pytest.approx(ref, rel=1e-6 if p != 0.5 else 1e-4), (nu, lam, p)


def test_one_dof_is_the_folded_ncx2():
    # One-sided q0: P(q0 >= Z^2) = ncx2.sf(Z^2, 1, lambda) - Phi(-sqrt(lambda) - Z) (the
    # wrong-sign tail of the two-sided statistic removed); at Z = Z_P it equals P.
    for lam, p in ((25.0, 0.9), (100.0, 0.5), (9.0, 0.8), (400.0, 0.99)):
        z = float(probability.significance_at_probability(lam, p, 1))
        reached = stats.ncx2.sf(z ** 2, 1, lam) - stats.norm.cdf(-np.sqrt(lam) - z)
        assert reached == pytest.approx(p, rel=1e-9), (lam, p)
    # ... and it inverts detection_probability
    assert probability.detection_probability(49.0, probability.significance_at_probability(
        49.0, 0.9), 1) == pytest.approx(0.9, rel=1e-12)


def test_far_tail_does_not_overflow():
    # A tiny non-averaging floor gives an asymptotic Delta chi^2 near 1e197: the tail
    # expansion (Abramowitz & Stegun 1964, 6.5.32) must not square it (found by the
    # property test below); Z then follows sqrt(Delta chi^2) to leading order.
    z = probability.significance_from_delta_chi2(7.9e196, 39)
    assert np.isfinite(z) and z == pytest.approx(np.sqrt(7.9e196), rel=1e-3)


def test_edges_and_refusals():
    got = probability.significance_at_probability([0.0, 0.5, np.inf], 0.9, [1, 1, 5])
    assert got[0] == 0.0 and got[1] == 0.0 and got[2] == np.inf     # sqrt(0.5) < 1.28
    with pytest.raises(InputError, match="probability"):
        probability.significance_at_probability(10.0, 1.0)


def feature(amp, centre=4.3, width=0.15):
    return amp * np.exp(-0.5 * ((WL - centre) / width) ** 2)


@settings(max_examples=25, deadline=None)
@given(amp=st.floats(min_value=5.0, max_value=500.0), sig=st.floats(min_value=1.0, max_value=200.0),
       floor_share=st.floats(min_value=0.0, max_value=1.0), averages=st.booleans(),
       gof=st.booleans(), n_max=st.integers(min_value=2, max_value=30))
def test_curves_order_rise_and_meet_the_search(amp, sig, floor_share, averages, gof, n_max):
    # The 90 % curve never lies above the 50 % curve; both rise (never fall) with N; the
    # 50 % curve is the expected (median) curve; and the first N at which the P curve
    # reaches the target is the stacker's transits for probability P.
    dof = len(WL) - 1 if gof else 1
    res = stacker.stack_transits(feature(amp), 0 * WL, sig, floor=floor_share * sig,
                                 floor_averages=averages, dof=dof, sigma=3.0, n_max=n_max,
                                 n_curve=np.arange(1, n_max + 1))
    z50 = res["curve_significance_at_probability"][0.5]
    z90 = res["curve_significance_at_probability"][0.9]
    assert np.all(z90 <= z50 + 1e-12)
    assert np.all(np.diff(z50) >= -1e-9) and np.all(np.diff(z90) >= -1e-9)
    np.testing.assert_allclose(z50, res["curve_significance"], rtol=1e-12, atol=1e-12)
    # the search inverts the probability exactly (chndtrinc); the median curve of more than
    # one dof is interpolated (relative error below 1e-4 in Delta chi^2), hence its tolerance
    tol = 1e-6 if dof == 1 else 2e-3
    for p, z in ((0.5, z50), (0.9, z90)):
        n = int(res["transits_for_probability"][p])
        if n == 0:
            assert np.all(z < 3.0 + tol)
        else:
            assert z[n - 1] >= 3.0 - tol and (n == 1 or z[n - 2] < 3.0 + tol), (p, n)
