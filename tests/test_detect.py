"""Significance and stacking checked against scipy.stats, analytic limits and Monte Carlo."""

import numpy as np
import pytest
from hypothesis import given, strategies as st
from scipy import stats

from snrkit.stats import stacker
from snrkit.stats import search
from snrkit.stats import likelihood
from snrkit.stats import probability
from snrkit.errors import InputError

WL = np.linspace(0.6, 5.0, 40)


def feature(amp=100.0, centre=4.3, width=0.15):
    return amp * np.exp(-0.5 * ((WL - centre) / width) ** 2)


def test_wilks_one_dof_is_sqrt_delta_chi2():
    # Wilks 1938; Cowan et al. 2011, Eur. Phys. J. C 71, 1554, eq. 29: Z = sqrt(q) for 1 dof.
    q = np.array([0.0, 1.0, 4.0, 25.0, 400.0, 1e5])
    np.testing.assert_allclose(probability.significance_from_delta_chi2(q, 1), np.sqrt(q), rtol=1e-12)


def test_goodness_of_fit_p_values_against_scipy_chi2():
    # A goodness-of-fit chi^2 with nu dof: Z is the one-sided Gaussian equivalent of
    # the p-value scipy.stats.chi2.sf (p >= 1/2 is Z = 0, never a fraction of a sigma).
    for nu in (2, 10, 39, 150):
        x = np.array([0.5 * nu, nu, 2 * nu, 4 * nu + 30])
        p = stats.chi2.sf(x, nu)
        z = probability.significance_from_delta_chi2(x, nu)
        np.testing.assert_allclose(np.where(p < 0.5, stats.norm.sf(z), 0.5), np.minimum(p, 0.5),
                                   rtol=1e-8)
        assert np.all(z[p >= 0.5] == 0.0)


def test_far_tail_is_continuous():
    # The asymptotic tail (Abramowitz & Stegun 6.5.32) joins scipy's logsf where both exist.
    x = np.linspace(1200.0, 1390.0, 20)
    ref = stats.chi2.logsf(x, 20)
    ours = probability._chi2_logsf(x, 20.0)
    np.testing.assert_allclose(ours, ref, rtol=1e-6)
    big = probability.significance_from_delta_chi2(np.array([3000.0, 6000.0]), 20)
    assert np.all(np.isfinite(big)) and big[1] > big[0] > 30


def test_critical_value_round_trip():
    for nu in (1, 5, 30):
        crit = probability.critical_delta_chi2(5.0, nu)
        assert probability.significance_from_delta_chi2(crit, nu) == pytest.approx(5.0, rel=1e-8)


def test_detection_probability_against_scipy_ncx2():
    # Goodness of fit: scipy.stats.ncx2, P(chi'^2(nu, lambda) > crit), crit at the
    # one-sided tail Phi(-Z).
    for nu, lam in ((12, 80.0), (39, 150.0)):
        crit = stats.chi2.isf(stats.norm.sf(3.0), nu)
        assert probability.detection_probability(lam, 3.0, nu) == pytest.approx(stats.ncx2.sf(crit, nu, lam))
    # One-sided q0 (Cowan et al. 2011, Eur. Phys. J. C 71, 1554, Sec. 3.5): the fitted
    # amplitude is Gaussian, P = Phi(sqrt(l) - Z).  The two-sided noncentral chi^2 with
    # 1 dof adds the wrong-sign tail Phi(-sqrt(l) - Z): check the relation with scipy.
    for lam, z in ((20.0, 4.0), (30.0, 3.0), (1.0, 2.0)):
        one = probability.detection_probability(lam, z, 1)
        two = stats.ncx2.sf(z ** 2, 1, lam)
        assert one == pytest.approx(two - stats.norm.cdf(-np.sqrt(lam) - z), rel=1e-9)
        assert one == pytest.approx(stats.norm.cdf(np.sqrt(lam) - z), rel=1e-12)


def test_noncentrality_for_probability_inverts():
    # chndtrinc (goodness of fit) and the closed form (1 dof) invert the probabilities;
    # the goodness-of-fit value against scipy.stats.ncx2 by root finding.
    from scipy.optimize import brentq
    for p in (0.1, 0.5, 0.9):
        for nu in (1, 7):
            lam = probability.noncentrality_for_probability(p, 5.0, nu)
            assert probability.detection_probability(lam, 5.0, nu) == pytest.approx(p, abs=1e-8)
        crit = stats.chi2.isf(stats.norm.sf(5.0), 7)
        ref = brentq(lambda x: stats.ncx2.sf(crit, 7, x) - p, 1e-6, 1e4, xtol=1e-12)
        assert float(probability.noncentrality_for_probability(p, 5.0, 7)) == pytest.approx(ref, rel=1e-7)
    # 1 dof at P = 1/2 is exactly Z^2: the median of q0 is the Asimov value.
    assert float(probability.noncentrality_for_probability(0.5, 5.0, 1)) == pytest.approx(25.0, rel=1e-12)


def test_profiled_offset_matches_mean_subtraction():
    # Profiling a constant offset with equal weights = chi^2 about the mean.
    r = feature()
    got = likelihood.profiled_delta_chi2(r, 30.0)
    assert got == pytest.approx(np.sum((r - r.mean()) ** 2) / 30.0 ** 2, rel=1e-12)
    # A constant difference is absorbed entirely by the offset.
    assert likelihood.profiled_delta_chi2(np.full(40, 55.0), 10.0) == pytest.approx(0.0, abs=1e-9)
    # A template identical to the residual absorbs it.
    assert likelihood.profiled_delta_chi2(r, 10.0, templates=r[:, None]) == pytest.approx(0.0, abs=1e-9)


def test_white_noise_stacking_follows_sqrt_n():
    res = stacker.stack_transits(feature(), np.zeros_like(WL), 80.0, sigma=5.0, n_max=500)
    z = res["curve_significance"]
    n = res["curve_transits"]
    np.testing.assert_allclose(z, z[0] * np.sqrt(n), rtol=1e-10)
    # transits needed: smallest N with Z >= 5
    n_need = int(np.ceil(25.0 / res["delta_chi2_per_transit"]))
    assert int(res["transits_needed"]) == n_need
    assert res["limiting_term"] == "white noise"


def test_non_averaging_floor_saturates_at_analytic_limit():
    r = feature()
    floor = 15.0
    res = stacker.stack_transits(r, np.zeros_like(WL), 80.0, floor=floor, sigma=5.0,
                            n_max=10_000, n_curve=[1, 10, 100, 1000, 10_000, 100_000])
    # As N -> infinity sigma_N -> floor: lambda_inf = sum (r - mean r)^2 / floor^2.
    lam_inf = np.sum((r - r.mean()) ** 2) / floor ** 2
    assert res["asymptotic_significance"] == pytest.approx(np.sqrt(lam_inf), rel=1e-10)
    assert res["curve_significance"][-1] == pytest.approx(np.sqrt(lam_inf), rel=1e-3)
    assert np.all(np.diff(res["curve_significance"]) > 0)
    # A target above the limit is not reachable and the floor is named.
    res2 = stacker.stack_transits(r, np.zeros_like(WL), 80.0, floor=floor,
                             sigma=float(np.sqrt(lam_inf)) + 0.5, n_max=10_000)
    assert not res2["reachable"] and res2["limiting_term"] == "noise floor"
    assert int(res2["transits_needed"]) == 0


def test_averaging_floor_acts_like_extra_white_noise():
    r = feature()
    a = stacker.stack_transits(r, 0 * r, 80.0, floor=60.0, floor_averages=True, sigma=5.0)
    b = stacker.stack_transits(r, 0 * r, 100.0, sigma=5.0)     # sqrt(80^2 + 60^2) = 100
    assert int(a["transits_needed"]) == int(b["transits_needed"])


def test_transit_limit_named():
    res = stacker.stack_transits(feature(5.0), np.zeros_like(WL), 200.0, sigma=5.0, n_max=10)
    assert not res["reachable"] and res["limiting_term"] == "transit limit"


def test_no_signal_named():
    res = stacker.stack_transits(np.full(40, 3.0), np.zeros(40), 50.0, sigma=3.0, n_max=10)
    assert res["limiting_term"] == "no signal" and not res["reachable"]


def test_contamination_template_can_mask_a_feature():
    r = feature()
    res = stacker.stack_transits(r, 0 * r, 50.0, sigma=5.0, n_max=50, templates=(0.98 * r)[:, None])
    assert not res["reachable"] and res["limiting_term"] == "stellar contamination"


def test_bad_targets():
    for bad in (0.0, -1.0, np.nan):
        with pytest.raises(InputError):
            stacker.stack_transits(feature(), 0 * WL, 50.0, sigma=bad)
    for bad in (0.0, 1.0, 1.5):
        with pytest.raises(InputError):
            stacker.stack_transits(feature(), 0 * WL, 50.0, probabilities=(bad,))


def test_monte_carlo_flat_line_rejection_matches_ncx2():
    # Seeded Monte Carlo: noisy spectra around the truth, best flat line fitted, the
    # chi^2 compared with the critical value; the detection fraction follows ncx2.
    rng = np.random.default_rng(20261201)
    truth = feature(40.0)
    sig = 25.0
    nu = truth.size - 1
    lam = likelihood.profiled_delta_chi2(truth, sig)
    data = truth + rng.normal(0.0, sig, size=(20000, truth.size))
    chi2 = np.sum((data - data.mean(axis=1, keepdims=True)) ** 2, axis=1) / sig ** 2
    target = 3.0
    crit = probability.critical_delta_chi2(target, nu)
    frac = np.mean(chi2 > crit)
    pred = probability.detection_probability(lam, target, nu)
    assert frac == pytest.approx(pred, abs=4 * np.sqrt(pred * (1 - pred) / 20000) + 1e-3)
    # The median measured chi^2 is the noncentral median used as "expected".
    assert np.median(chi2) == pytest.approx(float(probability.expected_statistic(lam, nu)), rel=0.02)


def test_monte_carlo_template_amplitude_matches_one_dof():
    # Molecule-style test: amplitude of the residual template plus an offset fitted;
    # q0 = (mu_hat / sigma_mu)^2 for mu_hat > 0, else 0 (Cowan et al. 2011, Sec. 3.5):
    # P(q0 > Z^2) = Phi(sqrt(lambda) - Z).
    rng = np.random.default_rng(7)
    r = feature(30.0)
    sig = 20.0
    lam = float(likelihood.profiled_delta_chi2(r, sig))
    x = np.column_stack([np.ones_like(r), r])
    data = r + rng.normal(0.0, sig, size=(20000, r.size))
    coef, *_ = np.linalg.lstsq(x, data.T, rcond=None)
    cov = np.linalg.inv(x.T @ x) * sig ** 2
    q0 = np.where(coef[1] > 0, coef[1] ** 2 / cov[1, 1], 0.0)   # one-sided q0
    frac = np.mean(q0 > 9.0)
    pred = probability.detection_probability(lam, 3.0, 1)
    assert frac == pytest.approx(pred, abs=4 * np.sqrt(pred * (1 - pred) / 20000) + 1e-3)


def test_contamination_factor_rackham():
    # Rackham, Apai & Giampapa 2018, ApJ 853, 122, eq. 2: epsilon = 1/(1 - f(1 - F_s/F_p)).
    # Limit of completely dark spots (contrast 0) covering 1%: epsilon = 1/0.99.
    assert search.contamination_factor(0.01, 0.0) == pytest.approx(1 / 0.99)
    assert search.contamination_factor(0.0, 0.3) == 1.0
    assert search.contamination_factor(0.0, 1.0, 0.1, 1.2) < 1.0   # faculae make depths shallower


@given(st.floats(min_value=5.0, max_value=500.0), st.floats(min_value=1.0, max_value=200.0),
       st.integers(min_value=2, max_value=60))
def test_more_transits_never_less_significant(amp, sig, n):
    res = stacker.stack_transits(feature(amp), 0 * WL, sig, floor=sig / 5, sigma=3.0, n_max=n,
                            n_curve=np.arange(1, n + 1))
    assert np.all(np.diff(res["curve_significance"]) >= -1e-12)


@given(st.floats(min_value=1.0, max_value=1e4))
def test_signal_scaling_quadratic(scale):
    # lambda scales as the square of the feature amplitude (white noise).
    a = likelihood.profiled_delta_chi2(feature(), 40.0)
    b = likelihood.profiled_delta_chi2(scale * feature(), 40.0)
    assert b == pytest.approx(scale ** 2 * a, rel=1e-9)


def test_far_tail_branch_against_closed_forms():
    # chi^2 with even dof has a closed-form survival function (a Poisson sum):
    # dof 2: sf = exp(-x/2); dof 4: sf = exp(-x/2) (1 + x/2) (e.g. Abramowitz &
    # Stegun 1964, 26.4.21).  At x = 1500 and 6000 the direct route underflows, so
    # this checks the asymptotic branch itself.
    x = np.array([1500.0, 6000.0])
    np.testing.assert_allclose(probability._chi2_logsf(x, 2.0), -x / 2, rtol=1e-9)
    np.testing.assert_allclose(probability._chi2_logsf(x, 4.0), -x / 2 + np.log1p(x / 2), rtol=1e-6)


def test_expected_statistic_table_matches_scipy_median():
    # The interpolated noncentral median against scipy.stats.ncx2.median directly.
    lam = np.array([1e-3, 0.5, 7.0, 120.0, 3.3e4])
    for nu in (3, 40):
        ref = stats.ncx2.median(nu, lam)
        np.testing.assert_allclose(probability.expected_statistic(lam, nu), ref, rtol=1e-4)
        many = np.concatenate([lam, np.geomspace(1e-2, 1e5, 3000)])
        got = probability.expected_statistic(many, nu)
        np.testing.assert_allclose(got[5::300], stats.ncx2.median(nu, many[5::300]), rtol=1e-4)
        # one engine: a value does not depend on the size of its batch
        np.testing.assert_array_equal(got[:5], probability.expected_statistic(lam, nu))


def test_asymptote_is_per_planet():
    # One planet with a zero-floor signal bin must not make another planet's
    # asymptote infinite.
    r = np.stack([feature(), feature()])
    floor = np.stack([np.full(WL.size, 15.0), np.where(np.arange(WL.size) == 20, 0.0, 15.0)])
    lam = search.asymptotic_delta_chi2(r, floor)
    assert np.isfinite(lam[0]) and np.isinf(lam[1])
    assert lam[0] == pytest.approx(np.sum((r[0] - r[0].mean()) ** 2) / 15.0 ** 2, rel=1e-10)


def test_unused_bins_carry_no_weight():
    r = feature()
    sig = np.full(WL.size, 30.0)
    sig_nan = sig.copy()
    sig_nan[:5] = np.nan
    keep = np.arange(WL.size) >= 5
    a = likelihood.profiled_delta_chi2(r, sig_nan)
    b = likelihood.profiled_delta_chi2(r[keep], sig[keep])
    assert a == pytest.approx(b, rel=1e-12)
    with pytest.raises(InputError):
        likelihood.profiled_delta_chi2(r, np.zeros(WL.size))


def test_transits_for_probability_against_monte_carlo():
    # Seeded Monte Carlo of the 1-dof amplitude test at the N the stacker gives for a
    # 90% detection probability: the simulated fraction is >= 0.9 there and < 0.9 one
    # transit earlier (within Monte Carlo error).
    rng = np.random.default_rng(99)
    r = feature(20.0)
    s1 = 60.0
    res = stacker.stack_transits(r, 0 * r, s1, sigma=3.0, probabilities=(0.9,), n_max=400)
    n90 = int(res["transits_for_probability"][0.9])
    x = np.column_stack([np.ones_like(r), r])

    def fraction(n):
        sig = s1 / np.sqrt(n)
        data = r + rng.normal(0.0, sig, size=(20000, r.size))
        coef, *_ = np.linalg.lstsq(x, data.T, rcond=None)
        var = np.linalg.inv(x.T @ x)[1, 1] * sig ** 2
        return np.mean((coef[1] > 0) & (coef[1] ** 2 / var > 9.0))
    tol = 3 * np.sqrt(0.09 / 20000)
    assert fraction(n90) >= 0.9 - tol
    assert fraction(n90 - 1) < 0.9 + tol


@given(st.integers(0, 10_000), st.booleans(), st.sampled_from([None, (0.0, 2.0), (0.9, 1.1)]))
def test_fitted_null_is_the_profiled_minimum(seed, with_templates, scale):
    # the fitted null's weighted residual is the null's min chi^2 of the nested statistic
    # (alternative = the data itself, so Delta chi^2 = min chi^2(null)); with free templates
    # there is no prior penalty, and the residual is orthogonal to every fitted column
    # (normal equations of least squares)
    rng = np.random.default_rng(seed)
    n = 40
    data = 1e4 + rng.normal(0.0, 30.0, n) + 80.0 * np.sin(np.linspace(0, 6, n))
    null = 1e4 + 60.0 * np.cos(np.linspace(0, 3, n))
    sigma = rng.uniform(5.0, 20.0, n)
    sigma[rng.integers(0, n, 3)] = np.nan                   # unused bins
    tmpl = rng.normal(0.0, 1.0, (n, 2)) if with_templates else None
    fit = likelihood.fitted_null(data, null, sigma, null_templates=tmpl, null_scale=scale)
    use = np.isfinite(sigma)
    resid = (data - fit)[use]
    w = 1.0 / sigma[use] ** 2
    chi = np.sum(w * resid ** 2)
    ref = likelihood.nested_delta_chi2(data, null, sigma, null_templates=tmpl, null_scale=scale)
    assert chi == pytest.approx(float(ref), rel=1e-8, abs=1e-9)
    tol = 1e-8 * np.sum(w * np.abs(resid) * (1.0 + np.abs(data[use])))
    assert abs(np.sum(w * resid)) <= tol                     # the level
    if tmpl is not None:
        assert np.all(np.abs(tmpl[use].T @ (w * resid)) <= tol)
    # the fitted null is b x null + level + templates: b within its bounds
    cols = [np.ones(n), null] + ([] if tmpl is None else list(tmpl.T))
    coef, *_ = np.linalg.lstsq(np.array(cols).T[use], fit[use], rcond=None)
    lo, hi = scale if scale is not None else (1.0, 1.0)
    assert lo - 1e-9 <= coef[1] <= hi + 1e-9


def test_fitted_null_with_a_prior_pays_the_penalty():
    # with a Gaussian prior on a template amplitude the residual's chi^2 plus (a - mean)^2 / s^2
    # is the null's min chi^2
    rng = np.random.default_rng(3)
    n = 30
    data = 500.0 + rng.normal(0.0, 5.0, n)
    null = np.full(n, 480.0)
    sigma = np.full(n, 4.0)
    tmpl = np.linspace(-1.0, 1.0, n)[:, None] * 20.0
    fit = likelihood.fitted_null(data, null, sigma, null_templates=tmpl, template_sigma=[0.5],
                                 template_mean=[0.2])
    # the amplitude: fitted minus level is a x template
    x = np.column_stack([np.ones(n), tmpl[:, 0]])
    (level, a), *_ = np.linalg.lstsq(x, fit - null, rcond=None)
    chi = np.sum((data - fit) ** 2 / sigma ** 2) + (a - 0.2) ** 2 / 0.5 ** 2
    ref = likelihood.nested_delta_chi2(data, null, sigma, null_templates=tmpl, template_sigma=[0.5],
                                       template_mean=[0.2])
    assert chi == pytest.approx(float(ref), rel=1e-9)
