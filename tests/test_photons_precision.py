"""Photon counts, noise budget, readout and saturation (snrkit.photons.precision)."""

import copy
import warnings

import numpy as np
import pytest
import astropy.units as u
from astropy.table import Table
from hypothesis import given, settings, strategies as st

from snrkit.constants import H_PLANCK, C_LIGHT, HOUR
from snrkit.errors import InputError, UnknownKeyError
from snrkit.photons.instruments import parse_mode, mode_names, load_mode
from snrkit.photons.precision import transit_precision, SaturationWarning, native_bin_edges, TERMS
from snrkit.photons.targets import limiting_magnitudes, system_precision
from snrkit.photons.sed import zero_points

BASE = {
    "name": "test-mode", "description": "test mode",
    "telescope": {"collecting_area_m2": 10.0},
    "spectrograph": {"wavelength_min_um": 1.0, "wavelength_max_um": 2.0,
                     "resolving_power": 100.0, "throughput": 0.5,
                     "pixels_per_resolution_element": 2.0, "extraction_width_pixels": 5.0,
                     "brightest_pixel_fraction": 0.2},
    "detector": {"full_well_electrons": 50000.0, "usable_well_fraction": 0.8,
                 "read_noise_electrons": 0.0, "dark_current_electrons_per_s": 0.0,
                 "background_electrons_per_s": 0.0},
    "readout": {"scheme": "up-the-ramp", "frame_time_s": 1.0, "min_groups": 2,
                "max_groups": 1000},
    "systematics": {"floor_ppm": 0.0},
}


def make_mode(**changes):
    """BASE with changes given as table__key=value."""
    d = copy.deepcopy(BASE)
    for k, v in changes.items():
        table, key = k.split("__")
        if v is None:
            d[table].pop(key, None)
        else:
            d[table][key] = v
    return parse_mode(d)


def flat_spectrum(tmp_path, flam=1.0):
    """A user spectrum with constant F_lambda [W m-3] over 0.3-20 um."""
    p = tmp_path / "flat.ecsv"
    Table({"wavelength": [0.3, 20.0] * u.um, "flux": [flam, flam] * u.W / u.m**3}).write(
        p, format="ascii.ecsv")
    return p


def quiet(**kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SaturationWarning)
        return transit_precision(**kw)


def test_photon_counts_equal_flux_area_throughput_width_over_photon_energy(tmp_path):
    # N/t = F_lambda * A * T * integral(lambda dlambda) / (h c) for a flat F_lambda
    # (photon energy h c / lambda), normalised so that J = 12 (Cohen et al. 2003 zero point).
    mode = make_mode()
    ds = quiet(mode=mode, magnitude=12.0, band="J", spectrum=flat_spectrum(tmp_path),
               transit_duration=2.0)
    f0 = zero_points()["J"][1] * 10 ** (-0.4 * 12.0)          # W m-3
    lo = ds["wavelength_low"].values * 1e-6
    hi = ds["wavelength_high"].values * 1e-6
    expect = f0 * 10.0 * 0.5 * (hi**2 - lo**2) / 2.0 / (H_PLANCK * C_LIGHT)
    np.testing.assert_allclose(ds["photon_rate"].values[0], expect, rtol=1e-9)
    # native bins are one resolution element wide: lambda / delta-lambda ~ R
    r = ds["wavelength"].values / ds["bin_width"].values
    np.testing.assert_allclose(r, 100.0, rtol=0.01)


def test_photon_limited_precision_formula():
    # sigma = (1 - delta) sqrt(1/N_in + 1/N_out) in the photon limit (DESIGN.md; first-order
    # error propagation, Bevington & Robinson 2003, Data Reduction and Error Analysis, ch. 3);
    # the Monte Carlo test below checks the same numbers independently.
    ds = quiet(mode=make_mode(), magnitude=11.0, teff=5000.0, transit_duration=2.0,
               baseline=3.0, depth=0.01)
    r = ds["photon_rate"].values[0]
    d = float(ds["duty_cycle"].values[0])
    n_in = 0.99 * r * d * 2.0 * HOUR
    n_out = r * d * 3.0 * HOUR
    expect = 0.99 * np.sqrt(1 / n_in + 1 / n_out) * 1e6
    np.testing.assert_allclose(ds["noise_ppm_per_transit"].values[0], expect, rtol=1e-12)
    np.testing.assert_allclose(ds["noise_budget_ppm"].sel(term="photon").values[0], expect)


def test_monte_carlo_poisson_counts_recover_analytic_precision():
    # Seeded Monte Carlo: Poisson star and background/dark electrons, Gaussian read noise
    # per read (ramp-fit variance 12(n-1)/(n(n+1)) sigma^2, Rauscher et al. 2007, PASP 119,
    # 768, eq. 1), depth estimated from the in- and out-of-transit count rates.  The
    # scatter must match the analytic precision to within its sampling error.
    mode = make_mode(detector__read_noise_electrons=12.0, detector__dark_current_electrons_per_s=0.5,
                     detector__background_electrons_per_s=2.0, readout__groups_per_integration=5)
    t_in, t_out, depth = 0.05, 0.1, 0.02           # hours: short, so every term matters
    ds = quiet(mode=mode, magnitude=16.0, teff=4500.0, transit_duration=t_in, baseline=t_out,
               depth=depth, floor_ppm=0.0)
    j = 10
    rate = float(ds["photon_rate"].values[0, j])
    duty = float(ds["duty_cycle"].values[0])
    t_int = float(ds["integration_time"].values[0])
    n = int(ds["groups_per_integration"].values[0])
    n_pix = 2.0 * 5.0 * float(ds["bin_width"].values[j] / (ds["wavelength"].values[j] / 100.0))
    other = (2.0 + 0.5) * n_pix
    read_var = 12 * (n - 1) / (n * (n + 1)) * 12.0**2 * n_pix
    rng = np.random.default_rng(20260401)
    trials = 40000

    def counts(t_h, f):
        t = t_h * HOUR
        mean_star = f * rate * duty * t
        mean_other = other * duty * t
        n_int = t / t_int
        c = rng.poisson(mean_star, trials) + rng.poisson(mean_other, trials) - mean_other
        return c + rng.normal(0.0, np.sqrt(read_var * n_int), trials)

    c_in = counts(t_in, 1 - depth)
    c_out = counts(t_out, 1.0)
    est = 1.0 - (c_in / t_in) / (c_out / t_out)
    sigma_mc = est.std(ddof=1) * 1e6
    sigma = float(ds["noise_ppm_per_transit"].values[0, j])
    # standard error of a sample standard deviation: sigma / sqrt(2 (n - 1)); allow 5 of them
    assert abs(sigma_mc - sigma) < 5 * sigma / np.sqrt(2 * (trials - 1))
    assert abs(est.mean() - depth) < 5 * sigma * 1e-6 / np.sqrt(trials) + 1e-3 * depth
    # and every term contributes
    b = ds["noise_budget_ppm"].values[0, :, j]
    assert np.all(b[:4] > 0.05 * b[0])


@settings(max_examples=30, deadline=None)
@given(m=st.floats(8.0, 16.0), dm=st.floats(-3.0, 3.0))
def test_photon_noise_scales_as_ten_to_the_0p2_dm(m, dm):
    # Photon limit, fixed readout: sigma proportional to N^-1/2, N proportional to 10^(-0.4 m)
    # (Pogson's magnitude scale), so sigma ratio = 10^(0.2 dm).
    mode = make_mode(readout__groups_per_integration=4, detector__full_well_electrons=1e9)
    ds = quiet(mode=mode, magnitude=[m, m + dm], teff=5500.0, transit_duration=3.0)
    s = ds["noise_ppm_per_transit"].values
    np.testing.assert_allclose(s[1] / s[0], 10 ** (0.2 * dm), rtol=1e-9)


@settings(max_examples=30, deadline=None)
@given(area=st.floats(0.5, 50.0), thr=st.floats(0.05, 1.0), t=st.floats(0.3, 10.0))
def test_photon_noise_scales_as_inverse_sqrt_area_throughput_time(area, thr, t):
    # sigma proportional to (A T t)^-1/2 in the photon limit.
    common = dict(readout__groups_per_integration=4, detector__full_well_electrons=1e9)
    ref = quiet(mode=make_mode(**common), magnitude=10.0, teff=5500.0, transit_duration=1.0)
    ds = quiet(mode=make_mode(telescope__collecting_area_m2=area, spectrograph__throughput=thr,
                              **common),
               magnitude=10.0, teff=5500.0, transit_duration=t)
    ratio = ds["noise_ppm_per_transit"].values / ref["noise_ppm_per_transit"].values
    np.testing.assert_allclose(ratio, 1.0 / np.sqrt(area / 10.0 * thr / 0.5 * t), rtol=1e-9)


@pytest.mark.parametrize("n,resets", [(2, 1), (5, 1), (30, 1), (5, 2), (10, 0)])
def test_up_the_ramp_effective_time_and_duty_cycle(n, resets):
    # Effective integration (n - 1) t_group; elapsed n t_group + resets t_frame; with one
    # frame per group and one reset the duty cycle is (n - 1)/(n + 1) (Rauscher et al. 2007).
    mode = make_mode(readout__groups_per_integration=n, readout__resets_per_integration=resets,
                     readout__frame_time_s=0.7, detector__full_well_electrons=1e9)
    ds = quiet(mode=mode, magnitude=12.0, teff=5000.0, transit_duration=1.0)
    assert float(ds["effective_integration_time"].values[0]) == pytest.approx((n - 1) * 0.7)
    assert float(ds["integration_time"].values[0]) == pytest.approx((n + resets) * 0.7)
    assert float(ds["duty_cycle"].values[0]) == pytest.approx((n - 1) / (n + resets))


def test_read_noise_of_two_groups_is_a_correlated_double_sample():
    # n = 2: read variance 2 sigma_read^2 per pixel per integration (CDS).
    mode = make_mode(readout__groups_per_integration=2, detector__read_noise_electrons=10.0,
                     detector__full_well_electrons=1e9)
    ds = quiet(mode=mode, magnitude=12.0, teff=5000.0, transit_duration=1.0, baseline=1.0)
    j = 0
    rate = ds["photon_rate"].values[0, j]
    d = float(ds["duty_cycle"].values[0])
    t_int = float(ds["integration_time"].values[0])
    n_pix = 2 * 5 * ds["bin_width"].values[j] / (ds["wavelength"].values[j] / 100.0)
    t = HOUR
    var = 2 * 100.0 * n_pix * t / t_int               # per interval, electrons^2
    n_in = n_out = rate * d * t
    expect = np.sqrt(var / n_in**2 + var / n_out**2) * 1e6
    assert float(ds["noise_budget_ppm"].sel(term="read").values[0, j]) == pytest.approx(expect)


def test_saturation_limit_moves_by_2p5_log_frame_time():
    # Brightest pixel rate x min_groups x t_frame = usable well: the limiting flux scales
    # as 1/t_frame, so the limit moves by 2.5 log10(t2/t1) magnitudes (no background).
    out = []
    for tf in (0.2, 0.8, 3.2):
        mode = make_mode(readout__frame_time_s=tf)
        out.append(float(quiet(mode=mode, magnitude=10.0, teff=5000.0, transit_duration=1.0)
                         ["saturation_limit_mag"].values[0]))
    assert out[1] - out[0] == pytest.approx(2.5 * np.log10(4.0), abs=1e-9)
    assert out[2] - out[1] == pytest.approx(2.5 * np.log10(4.0), abs=1e-9)


@settings(max_examples=25, deadline=None)
@given(tf=st.floats(0.05, 5.0), k=st.floats(1.01, 5.0), well=st.floats(1e4, 1e6))
def test_saturation_limit_monotonic(tf, k, well):
    # Longer frames or a smaller well make the brightest usable star fainter (larger mag).
    lim = lambda **c: float(quiet(mode=make_mode(**c), magnitude=10.0, teff=5000.0,  # noqa: E731
                                  transit_duration=1.0)["saturation_limit_mag"].values[0])
    a = lim(readout__frame_time_s=tf, detector__full_well_electrons=well)
    assert lim(readout__frame_time_s=tf * k, detector__full_well_electrons=well) > a
    assert lim(readout__frame_time_s=tf, detector__full_well_electrons=well / k) > a


@pytest.mark.parametrize("background", [0.0, 3000.0])
def test_limit_magnitude_separates_usable_from_too_bright(background):
    # with a strong background (here ~15 % of the well in the shortest integration) the
    # limit still marks the exact boundary of saturation
    mode = make_mode(readout__frame_time_s=0.5, detector__background_electrons_per_s=background)
    lim = float(quiet(mode=mode, magnitude=10.0, teff=5000.0, transit_duration=1.0)
                ["saturation_limit_mag"].values[0])
    ds = quiet(mode=mode, magnitude=[lim - 0.01, lim + 0.01], teff=5000.0, transit_duration=1.0)
    assert ds["star_too_bright"].values.tolist() == [True, False]
    assert ds["saturated"].values[0].any() and not ds["saturated"].values[1].any()
    assert np.isnan(ds["noise_ppm_per_transit"].values[0][ds["saturated"].values[0]]).all()
    with pytest.warns(SaturationWarning, match=rf"brightest usable J is {lim:.2f}"):
        transit_precision(mode, magnitude=lim - 0.5, teff=5000.0, transit_duration=1.0)


def test_automatic_groups_are_the_most_below_saturation():
    mode = make_mode(readout__frame_time_s=0.5)
    for mag in (9.5, 11.0, 13.0):
        ds = quiet(mode=mode, magnitude=mag, teff=5000.0, transit_duration=1.0)
        n = int(ds["groups_per_integration"].values[0])
        assert not ds["saturated"].values.any()
        assert 2 <= n < 1000
        more = quiet(mode=mode, magnitude=mag, teff=5000.0, transit_duration=1.0, readout=n + 1)
        assert more["saturated"].values.any()
    faint = quiet(mode=mode, magnitude=25.0, teff=5000.0, transit_duration=1.0)
    assert int(faint["groups_per_integration"].values[0]) == 1000     # capped at max_groups


def test_scan_mode_has_no_saturation_limit_and_its_own_duty_cycle():
    mode = load_mode("space2.4m-grism-scan")
    ds = transit_precision(mode, magnitude=[-1.0, 6.0, 12.0], teff=5800.0, transit_duration=2.0)
    assert not ds["saturated"].values.any()
    assert not ds["star_too_bright"].values.any()
    assert np.isnan(ds["saturation_limit_mag"].values).all()
    np.testing.assert_allclose(ds["duty_cycle"].values, mode.scan_duty_cycle)
    assert np.isfinite(ds["noise_ppm_per_transit"].values).all()


def test_floor_averages_down_or_not():
    kw = dict(mode=make_mode(), magnitude=11.0, teff=5000.0, transit_duration=3.0,
              floor_ppm=30.0, n_transits=10000)
    fixed = quiet(**kw, floor_averages_down=False)["noise_ppm"].values
    down = quiet(**kw, floor_averages_down=True)["noise_ppm"].values
    one = quiet(**{**kw, "n_transits": 1})
    # the floor is 30 ppm in a bin of R = 100 (the mode's reference) and white in
    # wavelength: a bin of resolving power R carries 30 sqrt(R / 100)
    r_bin = one["wavelength"].values / one["bin_width"].values
    f = 30.0 * np.sqrt(r_bin / 100.0)
    assert one.attrs["floor_reference_resolution"] == 100.0
    white = np.sqrt(one["noise_ppm_per_transit"].values ** 2 - f**2)
    assert np.isfinite(white).all() and (white > 1.0).all()
    np.testing.assert_allclose(fixed, np.sqrt(white**2 / 1e4 + f**2))
    np.testing.assert_allclose(down, np.sqrt(white**2 / 1e4 + f**2 / 1e4))
    np.testing.assert_allclose(one["noise_budget_ppm"].sel(term="floor").values[0], f)


def test_rebinning_white_terms_add_and_floor_averages_over_elements():
    mode = make_mode(detector__background_electrons_per_s=5.0, detector__read_noise_electrons=8.0,
                     readout__groups_per_integration=3, detector__full_well_electrons=1e9)
    kw = dict(mode=mode, magnitude=13.0, teff=5000.0, transit_duration=2.0, floor_ppm=10.0)
    nat = quiet(**kw)
    edges = native_bin_edges(mode) * 1e6
    pair = quiet(**kw, bin_edges=edges[[0, 2]])          # exactly the first two native bins
    b_nat = nat["noise_budget_ppm"].values[0][:, :2]
    b_pair = pair["noise_budget_ppm"].values[0][:, 0]
    # photon term: N adds, so sigma^-2 adds
    assert b_pair[0] == pytest.approx(1 / np.sqrt(1 / b_nat[0, 0] ** 2 + 1 / b_nat[0, 1] ** 2),
                                      rel=1e-3)
    # the floor is white in wavelength: two bins combine like white noise (convention of
    # snrkit.photons.precision: common practice, no source; equal to second order in the
    # bins' relative width, 1/R^2)
    assert b_pair[4] == pytest.approx(1 / np.sqrt(1 / b_nat[4, 0] ** 2 + 1 / b_nat[4, 1] ** 2),
                                      rel=1e-3)
    assert pair["photon_rate"].values[0, 0] == pytest.approx(nat["photon_rate"].values[0, :2].sum())
    # resolving power R: every bin has centre / width = R, electrons conserved
    r30 = quiet(**kw, resolution=30.0)
    np.testing.assert_allclose(r30["wavelength"] / r30["bin_width"], 30.0, rtol=1e-9)
    # (a native bin straddling the last R = 30 edge contributes its overlapping fraction,
    # its electrons being spread uniformly over its width)
    hi = r30["wavelength_high"].values[-1]
    lo_n, hi_n = nat["wavelength_low"].values, nat["wavelength_high"].values
    frac = np.clip((hi - lo_n) / (hi_n - lo_n), 0.0, 1.0)
    assert r30["photon_rate"].values.sum() == pytest.approx(
        (nat["photon_rate"].values[0] * frac).sum(), rel=1e-9)
    # white noise of k similar bins falls ~ 1/sqrt(k): ~ 100/30 native bins per R = 30 bin
    f_nat = nat["noise_budget_ppm"].sel(term="floor").values
    f_30 = r30["noise_budget_ppm"].sel(term="floor").values
    s_nat = np.median(np.sqrt(nat["noise_ppm_per_transit"].values ** 2 - f_nat ** 2))
    s_30 = np.median(np.sqrt(r30["noise_ppm_per_transit"].values ** 2 - f_30 ** 2))
    assert s_30 / s_nat == pytest.approx(np.sqrt(30.0 / 100.0), rel=0.1)


def test_dataset_layout():
    ds = quiet(mode="cold6m-prism-lowres", magnitude=[10.5, 12.0], teff=[5800.0, 4000.0],
               transit_duration=[2.0, 3.0], planet=["x b", "y b"])
    for v in ("wavelength", "bin_width", "photon_rate", "noise_ppm_per_transit",
              "noise_budget_ppm", "saturated", "groups_per_integration", "duty_cycle"):
        assert v in ds.variables
    assert list(ds["term"].values) == list(TERMS) == ["photon", "background", "dark", "read",
                                                      "floor"]
    assert ds["photon_rate"].dims == ("planet", "wavelength")
    assert list(ds["planet"].values) == ["x b", "y b"]
    assert ds.attrs["instrument_mode"] == "cold6m-prism-lowres"


@pytest.mark.parametrize("name", mode_names())
def test_every_preset_runs(name):
    # (speed is a benchmark figure, not a unit-test assertion)
    ds = quiet(mode=name, magnitude=[6.0, 10.0, 14.0], teff=5800.0, transit_duration=3.0)
    ok = ~ds["saturated"].values
    assert (ds["noise_ppm_per_transit"].values[ok] > 0).all()


def test_bad_inputs(tmp_path):
    kw = dict(mode="cold6m-prism-lowres", magnitude=12.0, teff=5000.0, transit_duration=2.0)
    for bad in (0, 2.5, "three", [1, 2], True):
        with pytest.raises(InputError, match="n_transits"):
            transit_precision(**{**kw, "n_transits": bad})
    with pytest.raises(InputError, match="transit_duration"):
        transit_precision(**{**kw, "transit_duration": -1.0})
    with pytest.raises(InputError, match="baseline"):
        transit_precision(**kw, baseline=-2.0)
    with pytest.raises(InputError, match="bin_edges"):
        transit_precision(**kw, bin_edges=[0.3, 1.0])
    with pytest.raises(InputError, match="readout"):
        transit_precision(**kw, readout=1)
    with pytest.raises(UnknownKeyError, match="cold6m-prism-lowres"):
        transit_precision(**{**kw, "mode": "no-such-mode"})
    p = tmp_path / "short.csv"
    p.write_text("wavelength [um],flux [Jy]\n1.0,1\n3.0,1\n")
    with pytest.raises(InputError, match=r"1-3 um.*0.6-5.3 um"):
        transit_precision(**kw, spectrum=p)


def test_limiting_magnitudes_helper():
    out = limiting_magnitudes("cold6m-prism-lowres", 5800.0, "J", transit_duration=3.0)
    ref = quiet(mode="cold6m-prism-lowres", magnitude=12.0, teff=5800.0, transit_duration=3.0)
    assert out["saturation_mag"] == pytest.approx(float(ref["saturation_limit_mag"].values[0]))
    # at floor_mag the photon term of the reference bin equals the floor
    edges = native_bin_edges(load_mode("cold6m-prism-lowres")) * 1e6
    k = np.searchsorted(edges, out["reference_wavelength_um"]) - 1
    ds = quiet(mode="cold6m-prism-lowres", magnitude=out["floor_mag"], teff=5800.0,
               transit_duration=3.0, bin_edges=edges[k:k + 2])
    r = ds["photon_rate"].values[0, 0] * ds["duty_cycle"].values[0] * 3 * HOUR
    assert np.sqrt(2 / r) * 1e6 == pytest.approx(out["floor_ppm"], rel=0.03)
    assert np.isnan(limiting_magnitudes("space2.4m-grism-scan", 5800.0)["saturation_mag"])


def test_system_wrapper_uses_t14_t23_and_depth():
    from snrkit.io.systemfile import load_system
    from snrkit.io.tables import data_path
    system = load_system(data_path("demo", "cedar.toml"))
    d = system.derived()
    a = quiet_sys(system, "cold6m-xdisp-medres", in_transit="t14")
    b = quiet_sys(system, "cold6m-xdisp-medres", in_transit="t23")
    w = quiet_sys(system, "cold6m-xdisp-medres")
    assert list(a["planet"].values) == list(d["name"])
    np.testing.assert_allclose(a["in_transit_time"].values, d["t14"].to_value(u.h))
    np.testing.assert_allclose(b["in_transit_time"].values, d["t23"].to_value(u.h))
    # default: the light curve weighted by its squared relative depth, (T14 + 2 T23) / 3
    # (see test_weighted_in_transit_time_is_the_depth_information below)
    np.testing.assert_allclose(w["in_transit_time"].values,
                               ((d["t14"] + 2 * d["t23"]) / 3).to_value(u.h))
    np.testing.assert_allclose(a["transit_depth"].values, d["transit_depth"].value)
    assert (b["noise_ppm_per_transit"].values >= w["noise_ppm_per_transit"].values).all()
    assert (w["noise_ppm_per_transit"].values >= a["noise_ppm_per_transit"].values).all()
    with pytest.raises(InputError, match="mode"):
        system_precision(system)


def test_weighted_in_transit_time_is_the_depth_information():
    # A channel's depth scales a transit profile g(t) known from the white light
    # (trapezoid: linear ingress and egress; Carter, Yee, Eastman, Gaudi & Winn 2008,
    # ApJ 689, 499, eq. for the trapezoid model).  With white noise per unit time the
    # Fisher information on the depth is int g^2 dt / sigma^2, so the equivalent box
    # lasts int g^2 dt.  Computed here by quadrature on a fine time grid.
    for t14, t23 in ((3.0, 2.4), (2.0, 0.8), (1.5, 0.0)):
        t = np.linspace(-t14 / 2, t14 / 2, 200_001)
        tau = (t14 - t23) / 2
        g = np.clip((t14 / 2 - np.abs(t)) / tau, 0.0, 1.0) if tau > 0 else np.ones_like(t)
        info = np.trapezoid(g ** 2, t) if hasattr(np, "trapezoid") else np.trapz(g ** 2, t)
        assert info == pytest.approx((t14 + 2 * t23) / 3, rel=1e-6)


def quiet_sys(system, mode, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SaturationWarning)
        return system_precision(system, mode, **kw)


@pytest.mark.parametrize("n,m", [(3, 1), (6, 2), (12, 1)])
def test_read_noise_of_a_fitted_ramp_matches_a_least_squares_monte_carlo(n, m):
    # Independent check of the up-the-ramp read term (Rauscher et al. 2007, PASP 119, 768,
    # eq. 1): simulate n groups of m averaged frames, each frame read with Gaussian noise,
    # fit the ramp by ordinary least squares (numpy.polyfit) and take the variance of the
    # fitted signal over the effective time (n - 1) t_group.  The precision model's read
    # term must imply the same per-pixel variance within the Monte Carlo sampling error.
    sigma_read, tf = 9.0, 0.5
    mode = make_mode(readout__groups_per_integration=n, readout__frames_per_group=m,
                     readout__frame_time_s=tf, detector__read_noise_electrons=sigma_read,
                     detector__full_well_electrons=1e9)
    ds = quiet(mode=mode, magnitude=12.0, teff=5000.0, transit_duration=1.0, baseline=2.0)
    j = 3
    rate = ds["photon_rate"].values[0, j]
    d = float(ds["duty_cycle"].values[0])
    t_int = float(ds["integration_time"].values[0])
    n_pix = 2 * 5 * ds["bin_width"].values[j] / (ds["wavelength"].values[j] / 100.0)
    t_in, t_out = HOUR, 2 * HOUR
    n_in, n_out = rate * d * t_in, rate * d * t_out
    read_ppm = float(ds["noise_budget_ppm"].sel(term="read").values[0, j])
    implied = (read_ppm / 1e6) ** 2 / (n_pix / t_int * (t_in / n_in**2 + t_out / n_out**2))

    rng = np.random.default_rng(1000 * n + m)
    trials = 20000
    tg = m * tf
    t = tg * np.arange(1, n + 1)
    reads = rng.normal(0.0, sigma_read, size=(trials, n, m)).mean(axis=2)   # no signal
    slope = np.polyfit(t, reads.T, 1)[0]
    mc = np.var(slope * (n - 1) * tg, ddof=1)
    # relative standard error of a sample variance: sqrt(2 / (trials - 1)); allow 5 of them
    assert implied == pytest.approx(mc, rel=5 * np.sqrt(2 / (trials - 1)))


def test_group_counts_below_two_are_rejected():
    # one group collects no light ((n - 1) t_group = 0): a mode file may not allow it
    with pytest.raises(InputError, match="readout.min_groups"):
        make_mode(readout__min_groups=1)
    with pytest.raises(InputError, match="readout.groups_per_integration"):
        make_mode(readout__groups_per_integration=1)
    scan = copy.deepcopy(BASE)
    scan["readout"] = {"scheme": "scan", "exposure_time_s": 50.0, "reads_per_exposure": 4,
                       "duty_cycle": 0.0}
    with pytest.raises(InputError, match="readout.duty_cycle"):
        parse_mode(scan)


def test_edited_mode_file_is_read_again(tmp_path):
    # load_mode caches parsed files; an edit during a session must not be served stale
    import os
    from snrkit.io.tables import data_path
    text = data_path("instruments", "cold6m-prism-lowres.toml").read_text()
    p = tmp_path / "mine.toml"
    p.write_text(text)
    a = load_mode(str(p))
    p.write_text(text.replace("read_noise_electrons = 11.0", "read_noise_electrons = 22.0"))
    st = p.stat()
    os.utime(p, ns=(st.st_atime_ns, st.st_mtime_ns + 10**9))
    b = load_mode(str(p))
    assert (a.read_noise, b.read_noise) == (11.0, 22.0)
    # cached modes are shared: their tables cannot be changed in place
    with pytest.raises(ValueError):
        b.throughput.value[0] = 0.9


def test_many_stars_at_once_equal_one_at_a_time():
    # the vectorized planet axis (re-binning and log-log interpolation over all rows at
    # once) gives exactly the per-star answers, native and re-binned
    mags, teffs = [9.0, 11.5, 14.0], [3500.0, 5200.0, 6400.0]
    for kw in ({}, {"resolution": 30.0}):
        allr = quiet(mode="cold6m-prism-lowres", magnitude=mags, teff=teffs,
                     transit_duration=[2.0, 3.0, 4.0], **kw)
        for i in range(3):
            one = quiet(mode="cold6m-prism-lowres", magnitude=mags[i], teff=teffs[i],
                        transit_duration=[2.0, 3.0, 4.0][i], **kw)
            np.testing.assert_allclose(allr["noise_ppm_per_transit"].values[i],
                                       one["noise_ppm_per_transit"].values[0], rtol=1e-12)
            np.testing.assert_allclose(allr["photon_rate"].values[i],
                                       one["photon_rate"].values[0], rtol=1e-12)
