"""The analytic kernel's shortcuts against the computations they replace.

- ``ln tau`` takes its three exponentials and logarithms in float32: checked
  against the same formula in float64 (the terms' shares and ``ln tau``
  itself, to 1e-6: float32 rounds to 6e-8 relative, a few roundings add up).
- The H/R terms take the shares of the last Newton evaluation carried to the
  root along their derivatives (:func:`~snrkit.atmosphere.analytic_tau.shares_near`):
  checked against a fresh evaluation a small step away (error second order in
  the step) and, at the level of the radius, against the H/R terms evaluated
  afresh at each root (1e-6 scale heights).

The tolerances are the kernel's own accuracy goals (roots to ~1e-6 H, well
inside the one-engine requirement of 1e-3 H); no published value is
involved, the reference is the float64 formula of
:mod:`snrkit.atmosphere.analytic_tau` itself.
"""

import math

import numpy as np
import pytest

from snrkit.atmosphere import analytic_kernel as ak
from snrkit.atmosphere import analytic_roots as ar
from snrkit.atmosphere import analytic_tau as at
from snrkit.atmosphere import analytic_lattice as al
from snrkit.atmosphere import mixture, solve
from snrkit.atmosphere.analytic import EULER_GAMMA
from snrkit.atmosphere.scenarios import load_scenario

SCENARIOS = ["h2-clear-solar", "steam"]


def _elements(scenario, n=8, seed=3):
    """Per-element constants of n planets' elements (all of them) and their radii and state."""
    sc = load_scenario(scenario)
    src = mixture._default_opacity_source()
    nodes = solve._line_shape_pressures(src)
    rng = np.random.default_rng(seed)
    rp = rng.uniform(1.5, 12.0, n)                  # Earth radii, an invented set
    t = sc.temperature(np.geomspace(250.0, 1900.0, n)) * np.ones(n)
    op = al.lattice_opacity(src, sc.mixing_ratios, (sc.haze_enhancement, sc.haze_slope),
                            mixture.wavelength_bin_edges(30, 0.6e-6, 5.0e-6), 8, None, nodes, t)
    r0 = rp * 6.371e6
    g0 = 6.674e-11 * 1.436 * rp ** 1.7 * 5.972e24 / r0 ** 2
    args = (t, np.full(n, sc.mean_molecular_weight), r0, np.full(n, sc.reference_pressure_Pa),
            g0, np.full(n, 10.0 * sc.reference_pressure_Pa), np.full(n, 1e-6))
    lin = (op["lnk"], np.log(nodes), op["ln_continuum"], op["ln_cia"])
    radius, sat, state = ak.root_radius(*lin, *args, return_state=True)
    job = ak._prepare(*lin, args, None, None)
    el = ak._elements(job, slice(0, radius.size))
    return el, job, radius.reshape(-1), sat.reshape(-1), state


def _ln_tau64(u, el, job):
    """The float64 formula of analytic_tau.ln_tau: value and the three shares."""
    B = el["B"]
    lnn = el["lnn0"] + B * u
    lk, e1, _, _ = at.line_shape((lnn + el["lnkT"] - job["x0"]) / job["dx"], el, job["dx"],
                                 job["n_p"])
    terms = np.stack([lk + lnn + el["base"] - 0.5 * np.log(e1), el["a2"] + B * u,
                      el["a3"] + 2.0 * B * u])
    total = np.logaddexp.reduce(terms, axis=0)
    return total - 1.5 * np.log(u) + EULER_GAMMA, np.exp(terms - total)


@pytest.mark.parametrize("scenario", SCENARIOS)
def test_float32_terms_match_the_float64_formula(scenario):
    el, job, _, _, _ = _elements(scenario)
    rng = np.random.default_rng(1)
    # anywhere between the top and the floor
    u = el["ut"] + rng.uniform(0.0, 1.0, el["ut"].size) * (el["uf"] - el["ut"])
    ev = at.ln_tau(u, el, job["x0"], job["dx"], job["n_p"])
    f64, w64 = _ln_tau64(u, el, job)
    assert np.max(np.abs(ev.f - f64)) < 1e-6
    assert np.max(np.abs(np.stack(ev.w).astype(np.float64) - w64)) < 1e-6
    # lines and continuum each dominate somewhere (the check is not about one term only)
    assert np.all(np.max(w64[:2], axis=1) > 0.5)


@pytest.mark.parametrize("scenario", SCENARIOS)
def test_shares_carried_a_small_step_equal_a_fresh_evaluation(scenario):
    el, job, _, _, state = _elements(scenario)
    ok = np.isfinite(state["u"])
    sub = ar._take(el, np.flatnonzero(ok))
    u = state["u"][ok]
    step_h = 1e-3                                   # scale heights (d u = step / B)
    here = at.ln_tau(u, sub, job["x0"], job["dx"], job["n_p"], exact_slope=True)
    for sign in (-1.0, 1.0):
        delta = sign * step_h / sub["B"]
        (w1, w2, w3), e1 = at.shares_near(here, sub["B"], delta)
        there = at.ln_tau(u + delta, sub, job["x0"], job["dx"], job["n_p"])
        err = np.abs(np.stack([w1, w2, w3, e1]) - np.stack([*there.w, there.e1]))
        moved = np.abs(np.stack([*there.w, there.e1]) - np.stack([*here.w, here.e1]))
        # second order in the step: ~1e-6 of a share for a step of 1e-3 H, against a
        # first-order change far larger where the shares move at all (so shares left
        # where they were would fail); up to 1 % of elements may sit within the step
        # of a node or blend edge, where the derivative jumps and the error is first order
        assert np.quantile(err, 0.99) < 2e-6
        assert np.quantile(moved[moved > 1e-6], 0.5) > 30 * np.quantile(err, 0.99)
        # and nowhere worse than first order at a kink (e jumps by at most 2.9 per
        # e-fold of pressure, the slope range of the line segments)
        assert np.max(err) < 3.0 * step_h


@pytest.mark.parametrize("scenario", SCENARIOS)
def test_radii_equal_h_over_r_terms_evaluated_at_the_root(scenario):
    el, job, radius, sat, state = _elements(scenario)
    ok = np.flatnonzero(np.isfinite(state["u"]) & ~sat)
    sub = ar._take(el, ok)
    ur = state["u"][ok]
    fresh = at.ln_tau(ur, sub, job["x0"], job["dx"], job["n_p"])
    shares = [w.astype(np.float64) for w in fresh.w] + [fresh.e1]
    again = 1.0 / ur + ar._corrections(ur, shares, sub["B"], state["ln_tf"][ok])
    h = 1.0 / (sub["B"] * ur * ur)                  # H(r) = r**2 / B
    assert ok.size > 0.5 * radius.size
    assert np.max(np.abs(radius[ok] - again) / h) < 1e-6
    assert math.isfinite(float(np.sum(radius)))


def test_unconverged_elements_keep_their_own_shares(monkeypatch):
    # Newton cut short after three steps: the elements still live then take the shares
    # of their own last evaluation (the arrays are not compacted after the last step),
    # so they stay within a small fraction of a scale height of the converged radii;
    # other elements' shares (the arrays compacted before the cut) moved them ~0.2 H
    el, _, ref, _, _ = _elements("h2-clear-solar")
    h = 1.0 / (el["B"] * (1.0 / ref) ** 2)
    monkeypatch.setattr(ar, "_MAX_STEPS", 3)
    _, _, cut, _, _ = _elements("h2-clear-solar")
    assert not np.array_equal(cut, ref)              # some elements were cut short
    assert np.max(np.abs(cut - ref) / h) < 1e-3
