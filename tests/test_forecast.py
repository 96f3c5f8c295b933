"""Fisher forecasts, Monte Carlo over planet parameters, programme time."""

import numpy as np
import pytest

from snrkit.stats import forecast as fc
from snrkit.stats import stacker
from snrkit.stats import likelihood

WL = np.linspace(1.0, 5.0, 60)
SHAPE = np.exp(-0.5 * ((WL - 3.0) / 0.3) ** 2)


def test_fisher_single_linear_amplitude_matches_analytic():
    # For D = A * s(lambda) with Gaussian errors, sigma_A = 1 / sqrt(sum s^2 / sigma^2)
    # (Tegmark, Taylor & Heavens 1997, ApJ 480, 22; the least-squares variance).
    sig = np.full(WL.size, 40.0)
    out = fc.fisher_forecast(lambda p: p["A"] * 100 * SHAPE, {"A": (1.0, 0.01)}, sig, [1, 4],
                             fit_offset=False)
    ref = 1.0 / np.sqrt(np.sum((100 * SHAPE) ** 2 / sig ** 2))
    np.testing.assert_allclose(out["errors"][:, 0], [ref, ref / 2], rtol=1e-8)


def test_fisher_with_offset_matches_least_squares_covariance():
    sig = np.linspace(20.0, 60.0, WL.size)
    x = np.column_stack([100 * SHAPE, np.ones_like(WL)])
    cov = np.linalg.inv(x.T @ (x / sig[:, None] ** 2))
    out = fc.fisher_forecast(lambda p: p["A"] * 100 * SHAPE + 7.0, {"A": (0.5, 0.01)}, sig, 1)
    assert out["errors"][0, 0] == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-8)


def test_fisher_and_detection_agree_for_an_amplitude():
    # The Asimov significance of a template equals A / sigma_A from the Fisher matrix.
    sig = np.full(WL.size, 30.0)
    truth = 80 * SHAPE
    lam = likelihood.profiled_delta_chi2(truth, sig)
    out = fc.fisher_forecast(lambda p: p["A"] * 80 * SHAPE, {"A": (1.0, 0.01)}, sig, 1)
    assert 1.0 / out["errors"][0, 0] == pytest.approx(np.sqrt(lam), rel=1e-8)


def test_unconstrained_parameter_gives_infinite_error():
    sig = np.full(WL.size, 30.0)
    out = fc.fisher_forecast(lambda p: p["A"] * SHAPE + 0 * p["B"], {"A": (1.0, 0.1), "B": (1.0, 0.1)},
                             sig, 1, fit_offset=False)
    assert np.isinf(out["errors"][0, 1]) and np.isfinite(out["errors"][0, 0])


def test_scale_draws_are_seeded_and_centred():
    a = fc.feature_scale_draws(2.0, 0.1, 6.0, 1.0, 4000, np.random.default_rng(3))
    b = fc.feature_scale_draws(2.0, 0.1, 6.0, 1.0, 4000, np.random.default_rng(3))
    np.testing.assert_array_equal(a, b)
    assert np.median(a) == pytest.approx(1.0, abs=0.05)
    assert np.all(a > 0)
    exact = fc.feature_scale_draws(2.0, 0.0, 6.0, 0.0, 10, np.random.default_rng(1))
    np.testing.assert_allclose(exact, 1.0)


def test_transits_distribution_brackets_the_nominal():
    truth = 60 * SHAPE
    sig = np.full(WL.size, 50.0)
    nominal = int(stacker.stack_transits(truth, 0 * truth, sig, sigma=5.0)["transits_needed"])
    draws = fc.feature_scale_draws(2.0, 0.1, 6.0, 1.5, 1000, np.random.default_rng(11))
    out = fc.transits_distribution(truth, 0 * truth, sig, draws, sigma=5.0)
    assert out["p16"][0] <= nominal <= out["p84"][0]
    assert out["fraction_reachable"][0] == 1.0
    # N scales as 1/amplitude^2 for white noise: median close to nominal
    assert out["median"][0] == pytest.approx(nominal, rel=0.25)


def test_programme_hours():
    # 2 h transit, baseline equal to T14, 1 h overhead: 5 h per visit.
    out = fc.programme_hours(2.0, np.array([3, 0]))
    assert out["hours_per_transit"] == pytest.approx(5.0)
    assert out["hours_total"][0] == pytest.approx(15.0) and np.isnan(out["hours_total"][1])
    out = fc.programme_hours(2.0, 4, baseline=3.0, baseline_is_multiple=False, overhead_hours=0.5)
    assert out["hours_total"] == pytest.approx(4 * 5.5)


def test_degenerate_parameters_are_unconstrained():
    # D = (A + B) s: only A + B is measured, so the marginal errors on A and B are
    # infinite (a singular Fisher matrix; Tegmark, Taylor & Heavens 1997).
    sig = np.full(WL.size, 30.0)
    out = fc.fisher_forecast(lambda p: (p["A"] + p["B"]) * 50 * SHAPE,
                             {"A": (1.0, 0.01), "B": (1.0, 0.01)}, sig, 1, fit_offset=False)
    assert np.all(np.isinf(out["errors"][0]))


def test_scale_draws_reject_bad_inputs():
    from snrkit.errors import InputError
    with pytest.raises(InputError):
        fc.feature_scale_draws(2.0, 0.1, 0.0, 0.0, 10, np.random.default_rng(0))
    with pytest.raises(InputError):
        fc.feature_scale_draws(2.0, -0.1, 5.0, 1.0, 10, np.random.default_rng(0))
