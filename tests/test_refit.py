"""Bounded, honest fits: physical ranges for re-fits and Fisher priors; bad options.

Ranges (snrkit.stats.refit): temperature factor 0.5-2 (common practice, no source), cloud
top between the model's top pressure and its floor, reference radius 1 +/- 3 sigma_R/R
with a Gaussian prior of width sigma_R/R.  Fisher errors use uniform priors over the
same ranges (variance span^2 / 12; Fisher information adds, Tegmark, Taylor & Heavens
1997, ApJ 480, 22) and "unconstrained" where +/- 1 sigma of the data alone spans the
whole range.
"""

import numpy as np
import pytest

from snrkit.cli.entry import main
from snrkit.io.systemfile import load_system
from snrkit.stats.refit import (fisher_errors_with_priors, parameter_ranges, TEMPERATURE_FACTOR_RANGE,
                          UNCONSTRAINED)
from snrkit.atmosphere.scenarios import load_scenario
from snrkit.io.tables import data_path
from snrkit.engine.transits import transits_for_system

PRISM = "cold6m-prism-lowres"
CEDAR = str(data_path("demo", "cedar.toml"))


@pytest.fixture(scope="module")
def cedar_b():
    return load_system(CEDAR).select("Cedar b")


def test_refit_stays_inside_physical_bounds(cedar_b):
    base = transits_for_system(cedar_b, PRISM, species="CO2")["planets"][0]
    rec = transits_for_system(cedar_b, PRISM, species="CO2",
                              refit=("temperature", "cloud_top_pressure", "reference_radius"))["planets"][0]
    fit = rec["refit"]
    lo, hi = TEMPERATURE_FACTOR_RANGE
    assert lo - 1e-9 <= fit["temperature_factor"] <= hi + 1e-9
    sc = load_scenario("co2-thick")
    _, plo, phi = parameter_ranges(sc, 0.04)["cloud_top_pressure"]
    assert 10 ** plo * (1 - 1e-9) <= fit["cloud_top_pressure_bar"] <= 10 ** phi * (1 + 1e-9)
    frac = 0.05 / 1.20                          # radius_uncertainty / radius of Cedar b
    assert abs(fit["reference_radius_factor"] - 1) <= 3 * frac + 1e-9
    assert isinstance(fit["at_bound"], list)
    # more freedom in the null can only lower the statistic
    assert rec["delta_chi2_per_transit"] <= base["delta_chi2_per_transit"] * (1 + 1e-6)


def test_parameter_at_a_bound_is_reported(cedar_b):
    # The rejected scenario has a deck at 1 mbar (the fit starts inside the range); the
    # true spectrum is clear down to the surface, so the best deck sinks to the model's
    # floor (the 10 bar surface) and the output says the parameter sits on its bound.
    cloudy = {"scenario": "co2-thick", "name": "co2-thick-deck", "cloud_top_pressure": 1e-3}
    rec = transits_for_system(cedar_b, PRISM, "co2-thick", against=cloudy,
                              refit=("cloud_top_pressure",))["planets"][0]
    assert any(b.startswith("cloud_top_pressure (upper)") for b in rec["refit"]["at_bound"])
    assert rec["refit"]["cloud_top_pressure_bar"] == pytest.approx(10.0, rel=1e-2)


def test_fisher_priors_and_unconstrained():
    # No information: the error is the prior's own, span / sqrt(12), and unconstrained.
    err, free = fisher_errors_with_priors(np.zeros((2, 2)), [0.0, -12.0], [1.0, 0.0])
    np.testing.assert_allclose(err, [1 / np.sqrt(12), 12 / np.sqrt(12)], rtol=1e-12)
    assert free.all()
    # Much information: the data dominate, the error is 1/sqrt(F).
    err, free = fisher_errors_with_priors(np.diag([1e6, 4e6]), [0.0, -12.0], [1.0, 0.0])
    np.testing.assert_allclose(err, [1e-3, 5e-4], rtol=1e-5)
    assert not free.any()


def test_fisher_through_the_chain_reports_unconstrained():
    cedar_c = load_system(CEDAR).select("Cedar c")
    # a gas without usable bands in the mode (O2 in the 2.4-5 um grism at R = 100;
    # its bands are at 0.63-1.27 um) is unconstrained.  The prism, used here
    # before, reaches the O2 A band at 0.76 um, and with the SP-3080 / RADCAL
    # band tables (N = 8 transits) O2 is narrowed through the mean molecular
    # weight (it replaces N2 fill), so the prism is no longer a case without
    # information on O2.
    rec = transits_for_system(cedar_c, "cold6m-grism-2.4-5um", fisher=True)["planets"][0]
    errs = rec["fisher_errors"]
    # some parameter spans its whole prior: with the cold-trapped temperate preset (solved by
    # the layered solver) the temperature factor is degenerate with the reference radius and
    # cloud top, and O2 (only its 0.76 um A band in the prism) is barely constrained
    assert UNCONSTRAINED in errs.values()
    assert errs["log10_O2"] == UNCONSTRAINED or errs["log10_O2"] > 2.0
    # every number is inside its prior's width (the prior caps the error)
    assert isinstance(errs["radius_factor"], float) and errs["radius_factor"] > 0
    for k, v in errs.items():
        if k.startswith("log10_") and v != UNCONSTRAINED:
            assert v <= 12 / np.sqrt(12) + 1e-9


@pytest.mark.parametrize("args, option", [
    (["--sigma", "0"], "sigma"), (["--sigma", "-2"], "sigma"),
    (["--probability", "1.5"], "probability"), (["--probability", "0"], "probability"),
    (["--species", "CO2", "--refit", "albedo"], "refit"),
    (["--refit", "temperature"], "refit"),
    (["--resolution", "0.5"], "--resolution"), (["--resolution", "coarse"], "--resolution"),
])
def test_bad_options_exit_2_with_one_line(capsys, args, option):
    rc = main(["transits", CEDAR, "--planet", "Cedar b", "--mode", PRISM,
               "--uncertainty-draws", "0", *args])
    err = capsys.readouterr().err.strip()
    assert rc == 2
    assert len(err.splitlines()) == 1 and option in err and "allowed" in err
