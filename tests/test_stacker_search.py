"""The stacker's secant search and memoised noncentral chi^2 quantities, against references.

The transits needed are checked against the bisection the search replaced
(``tests/stacker_reference.py``, kept out of the package), which finds the
smallest N with lambda(N) >= target by halving; the memoised noncentral
chi^2 quantities against scipy.stats.ncx2 / scipy.special.
"""

import numpy as np
from hypothesis import given, strategies as st
from scipy import special, stats

from snrkit.stats import probability
from snrkit.stats import stacker
from snrkit.stats import search

from stacker_reference import (bisection_transits_needed, reference_transits_needed,
                               scipy_noncentrality)

WL = np.linspace(0.6, 5.0, 24)


def _problem(seed, n_batch, floor_kind, prior, test, nan_bins):
    """Random spectra, noise, floors and nuisances for one stacking problem."""
    rng = np.random.default_rng(seed)
    amp = 10 ** rng.uniform(0.0, 2.5, (n_batch, 1))
    centre = rng.uniform(1.0, 4.5, (n_batch, 1))
    truth = amp * np.exp(-0.5 * ((WL - centre) / rng.uniform(0.1, 0.6)) ** 2)
    truth = truth + rng.normal(0.0, 0.1, truth.shape) * amp
    white = 10 ** rng.uniform(0.5, 2.3, (n_batch, 1)) * rng.uniform(0.5, 2.0, WL.size)
    if nan_bins:
        white = np.where(rng.random(white.shape) < 0.15, np.nan, white)
    if floor_kind == "none":
        floor = 0.0
    elif floor_kind == "scalar":
        floor = float(10 ** rng.uniform(-0.5, 1.8))
    elif floor_kind == "proportional":                 # same floor/white ratio in every bin
        floor = np.where(np.isfinite(white), white * rng.uniform(0.02, 0.5), 0.0)
    else:                                              # per bin, some bins without a floor
        floor = 10 ** rng.uniform(-0.5, 1.8, white.shape) * (rng.random(white.shape) < 0.8)
    null = np.zeros_like(truth)
    kw = {}
    if test == "species":
        null = truth * rng.uniform(0.2, 0.9, WL.size)
        kw["null_scale"] = (0.0, 2.0)
    elif test == "shape":
        kw["shape"] = truth
    elif test == "against":
        null = truth[:, ::-1] * rng.uniform(0.5, 1.5)
    if prior != "none":
        tpl = (truth * rng.uniform(-0.3, 0.3, (n_batch, 1)) * np.linspace(1.5, 0.5, WL.size))
        kw["null_templates"] = kw["alt_templates"] = tpl[..., None]
        kw["template_sigma"] = np.array([np.inf if prior == "free" else rng.uniform(0.2, 3.0)])
        kw["template_mean"] = np.array([1.0])
    return truth, null, white, floor, kw


@given(seed=st.integers(0, 2 ** 32 - 1), n_batch=st.integers(1, 12),
       floor_kind=st.sampled_from(["none", "scalar", "proportional", "per-bin"]),
       floor_averages=st.booleans(), prior=st.sampled_from(["none", "free", "finite"]),
       test=st.sampled_from(["flat", "shape", "species", "against"]),
       nan_bins=st.booleans(), many_dof=st.booleans(),
       sigma=st.sampled_from([1.0, 3.0, 5.0, 8.0]), n_max=st.sampled_from([1, 2, 3, 17, 1000, 30000]))
def test_secant_search_equals_bisection(seed, n_batch, floor_kind, floor_averages, prior, test,
                                        nan_bins, many_dof, sigma, n_max):
    # The integers must be exactly those of the bisection over N (the stacker before
    # the secant search) for every probability, both floor conventions and dof > 1.
    truth, null, white, floor, kw = _problem(seed, n_batch, floor_kind, prior, test, nan_bins)
    rng = np.random.default_rng(seed + 1)
    dof = rng.integers(2, 30, n_batch) if many_dof else 1
    probs = (0.5, 0.9, 0.02)
    res = stacker.stack_transits(truth, null, white, floor=floor, floor_averages=floor_averages,
                            dof=dof, sigma=sigma, probabilities=probs, n_max=n_max, n_curve=[1],
                            **kw)
    for p in probs:
        ref, _ = reference_transits_needed(truth, null, white, floor=floor,
                                           floor_averages=floor_averages, dof=dof, sigma=sigma,
                                           probability=p, n_max=n_max, **kw)
        np.testing.assert_array_equal(res["transits_for_probability"][p], ref)
        if p == 0.5:
            np.testing.assert_array_equal(res["transits_needed"], ref)
    quick = stacker.stack_needed(truth, null, white, floor=floor, floor_averages=floor_averages,
                            dof=dof, sigma=sigma, n_max=n_max, **kw)
    np.testing.assert_array_equal(quick["transits_needed"], res["transits_needed"])
    np.testing.assert_array_equal(quick["delta_chi2_per_transit"], res["delta_chi2_per_transit"])
    np.testing.assert_array_equal(quick["delta_chi2_asymptotic"], res["delta_chi2_asymptotic"])


@given(seed=st.integers(0, 2 ** 32 - 1), n_max=st.integers(1, 5000),
       kind=st.sampled_from(["saturating", "steps", "power", "zero-start"]))
def test_public_search_equals_bisection_on_monotone_functions(seed, n_max, kind):
    # Any non-decreasing lambda(N), smooth or not: the same N as bisection, including
    # targets of 0 (reached at N = 1) and targets never reached (0).
    rng = np.random.default_rng(seed)
    m = 40
    a = 10 ** rng.uniform(-2, 2, m)
    k = 10 ** rng.uniform(-4, 0, m)
    step = rng.integers(1, 50, m)
    e = rng.uniform(0.05, 2.0, m)

    def lam(n):
        n = np.asarray(n, dtype=np.float64)
        if kind == "saturating":
            return a * n / (1.0 + n * k)
        if kind == "steps":
            return a * np.floor(n / step)
        if kind == "power":
            return a * n ** e
        return a * np.maximum(n - step, 0.0) / (1.0 + n * k)
    top = lam(np.full(m, n_max))
    target = top * rng.uniform(0.0, 1.3, m)
    target[:3] = (0.0, top[3] * 2.0, lam(np.full(m, 1))[2])
    got = search.transits_needed(lam, target, n_max)
    np.testing.assert_array_equal(got, bisection_transits_needed(lam, target, n_max))


def test_secant_is_exact_when_floor_tracks_the_white_noise():
    # With floor = c x white in every bin, lambda(N) = N lambda_w / (1 + N c^2) with
    # lambda_w the white-noise value of one transit (lambda(1) = lambda_w / (1 + c^2),
    # lambda(inf) = lambda_w / c^2; the weights all scale by one factor), so
    # 1/lambda is a straight line in 1/N and the first secant proposal, from lambda(1)
    # and lambda(inf), is the answer: after lambda(1) the search evaluates the pair
    # (N - 1, N) or, unreached, lambda(n_max) alone -- at most 2 evaluations per
    # element against about log2(n_max) + 1 for bisection.
    truth, null, white, _, _ = _problem(7, 50, "none", "none", "flat", False)
    floor = 0.2 * white
    res = stacker.stack_needed(truth, null, white, floor=floor, sigma=5.0, n_max=10_000)
    lam1, lam_inf = res["delta_chi2_per_transit"], res["delta_chi2_asymptotic"]
    np.testing.assert_allclose(lam_inf, lam1 * 1.04 / 0.04, rtol=1e-9)
    reach = res["transits_needed"] > 1
    assert reach.sum() > 10                      # the check is not vacuous
    # count the evaluations of the search itself
    stk, one, _, linear, _ = stacker._stack_setup(truth, null, white, floor, False, dict(
        alt=None, shape=None, null_templates=None, alt_templates=None, template_sigma=None,
        template_mean=None, null_scale=None), 10_000)
    assert not linear
    before = stk.evaluations
    n, lam_n = stk.needed(one, res["delta_chi2_asymptotic"], np.full(one.shape, 25.0))
    np.testing.assert_array_equal(n, res["transits_needed"])
    assert stk.evaluations - before <= 2 * one.size
    ref, counted = reference_transits_needed(truth, null, white, floor=floor, sigma=5.0,
                                             n_max=10_000)
    np.testing.assert_array_equal(n, ref)
    assert counted.evaluations >= 14 * one.size
    # lambda at the N found is lambda(N) itself
    np.testing.assert_allclose(lam_n[reach], (one * 1.04 * n / (1 + n * 0.04))[reach],
                               rtol=1e-9)


def test_memoised_noncentral_quantities_against_scipy():
    # The noncentral chi^2 (e.g. Johnson, Kotz & Balakrishnan 1995, Continuous
    # Univariate Distributions vol. 2, 2nd ed., ch. 29; chapter from memory), as
    # scipy.stats.ncx2: the critical value is the chi^2_nu quantile at the one-sided
    # tail Phi(-Z), and at lambda(P) the survival function at that critical value is P.
    z = np.array([3.0, 5.0, 5.0, 3.0, 5.0, 8.0])
    nu = np.array([1, 7, 7, 40, 1, 3])
    p = np.array([0.5, 0.9, 0.9, 0.1, 0.02, 0.5])
    crit = probability.critical_delta_chi2(z, nu)
    ref_crit = np.where(nu == 1, z ** 2, stats.chi2.isf(stats.norm.sf(z), nu))
    np.testing.assert_allclose(crit, ref_crit, rtol=1e-10)
    lam = probability.noncentrality_for_probability(p, z, nu)
    many = nu > 1
    np.testing.assert_allclose(stats.ncx2.sf(crit[many], nu[many], lam[many]), p[many],
                               rtol=1e-7)
    # 1 dof: the closed form (Z + Phi^-1(P))^2, 0 below Phi(-Z) (Cowan et al. 2011,
    # Eur. Phys. J. C 71, 1554, Sec. 3.5)
    np.testing.assert_allclose(lam[~many], np.clip(z + stats.norm.ppf(p), 0, None)[~many] ** 2,
                               rtol=1e-12)
    # memoised values are exactly scipy.special's, element by element
    exact = [scipy_noncentrality(float(pi), float(zi), int(ni)) for pi, zi, ni in zip(p, z, nu)]
    np.testing.assert_array_equal(lam, exact)
    np.testing.assert_array_equal(
        crit, [zi ** 2 if ni == 1 else special.chdtri(ni, special.ndtr(-zi)) for zi, ni in zip(z, nu)])
    # and each distinct tuple is computed once: a repeat is a cache hit
    before = probability._noncentrality_one.cache_info()
    again = probability.noncentrality_for_probability(p, z, nu)
    after = probability._noncentrality_one.cache_info()
    np.testing.assert_array_equal(again, lam)
    assert after.misses == before.misses and after.hits - before.hits == 5   # 5 distinct tuples


def test_median_of_repeated_values_and_limits():
    # The noncentral chi^2 median (scipy.stats.ncx2.median) through the table: repeated
    # values give equal results, the limits are the central median (lambda -> 0) and
    # lambda + dof (lambda -> infinity), and the table stays within 1e-4 of scipy.
    lam = np.array([0.0, 3.0, 3.0, 50.0, 0.0, 50.0, 1e9])
    got = probability.expected_statistic(lam, 9)
    ref = np.where(lam < 1e-4, stats.chi2.median(9),
                   np.where(lam > 1e8, lam + 9, stats.ncx2.median(9, np.clip(lam, 1e-4, None))))
    np.testing.assert_allclose(got, ref, rtol=1e-4)
    assert got[1] == got[2] and got[3] == got[5]


def test_answer_does_not_depend_on_the_chunk_size(monkeypatch):
    # lambda(N) is evaluated in chunks of rows; every row's arithmetic is its own, so
    # chunks of 1 row or of the whole batch give the same numbers, bit for bit.
    truth, null, white, floor, kw = _problem(11, 40, "per-bin", "finite", "species", True)
    args = dict(floor=floor, sigma=3.0, probabilities=(0.5, 0.9), n_max=3000,
                n_curve=[1, 5, 50], **kw)
    whole = stacker.stack_transits(truth, null, white, **args)
    monkeypatch.setattr(stacker, "_CHUNK_VALUES", 1)
    rows = stacker.stack_transits(truth, null, white, **args)
    assert np.any(whole["transits_needed"] > 1)
    for key in ("transits_needed", "delta_chi2_per_transit", "delta_chi2_asymptotic",
                "curve_significance", "limiting_term"):
        np.testing.assert_array_equal(rows[key], whole[key])
    for p in (0.5, 0.9):
        np.testing.assert_array_equal(rows["transits_for_probability"][p],
                                      whole["transits_for_probability"][p])


def test_empty_batches_and_grids():
    # No elements, or no bins (nothing to detect: "no signal"), go through the chunked
    # evaluation without error.
    r = stacker.stack_transits(np.ones((0, 5)), np.zeros((0, 5)), np.ones((0, 5)), floor=1.0,
                          n_curve=[1, 2])
    assert r["transits_needed"].shape == (0,)
    r = stacker.stack_transits(np.ones((3, 0)), np.zeros((3, 0)), np.ones((3, 0)), floor=1.0,
                          n_curve=[1, 2])
    np.testing.assert_array_equal(r["transits_needed"], [0, 0, 0])
    assert list(r["limiting_term"]) == ["no signal"] * 3
