"""Pressure grids, P-T profiles, hydrostatic radii and the refraction floor."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.integrate import quad

from snrkit.atmosphere import profiles as P
from snrkit.atmosphere import refraction
from snrkit.constants import K_B, M_U, R_EARTH, R_SUN, AU
from snrkit.errors import InputError


def test_pressure_levels_log_spaced_and_adjustable():
    lev = P.pressure_levels([1e7, 1e5], [1e-4, 1e-2], n_layers=120)
    assert lev.shape == (2, 121)
    assert np.all(np.diff(lev, axis=1) < 0)
    r = lev[:, 1:] / lev[:, :-1]
    np.testing.assert_allclose(r, r[:, :1] * np.ones_like(r), rtol=1e-12)
    np.testing.assert_allclose(lev[:, 0], [1e7, 1e5])
    np.testing.assert_allclose(lev[:, -1], [1e-4, 1e-2])
    assert P.pressure_levels(1e5, 1.0).shape == (1, P.DEFAULT_N_LAYERS + 1)
    assert P.DEFAULT_N_LAYERS >= 100


@pytest.mark.parametrize("bottom,top,n", [(1e5, 1e6, 100), (1e5, 0.0, 100), (1e5, 1.0, 3),
                                          (1e5, 1.0, 100.5)])
def test_pressure_levels_bad_input(bottom, top, n):
    with pytest.raises(InputError):
        P.pressure_levels(bottom, top, n)


def test_scale_height_us_standard_atmosphere():
    # U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF): 288.15 K, 28.9644 g/mol,
    # g0 = 9.80665 m/s2 give H = 8.434 km at sea level.
    h = P.scale_height(288.15, 28.9644, 9.80665)
    assert h == pytest.approx(8434.5, rel=2e-4)


def test_guillot_limits():
    # Guillot 2010 (A&A 520, A27) eq. 29 limits:
    # gamma = 1, T_int = 0: isothermal, T^4 = Teq^4 (1/2 + sqrt(3)/4)
    prof = P.GreyTwoStreamProfile(1000.0, 10.0, 0.0, 1e-3, 1.0)
    t = prof.temperature(np.geomspace(1e-2, 1e8, 50)[None, :])
    np.testing.assert_allclose(t, 1000.0 * (0.5 + math.sqrt(3) / 4) ** 0.25, rtol=1e-12)
    # deep layers: Eddington T^4 -> 3/4 T_int^4 tau, tau = kappa P / g
    prof = P.GreyTwoStreamProfile(1000.0, 10.0, 200.0, 1e-3, 0.4)
    p = np.array([[1e12]])
    tau = 1e-3 * 1e12 / 10.0
    assert prof.temperature(p)[0, 0] ** 4 == pytest.approx(
        0.75 * 200.0**4 * (2 / 3 + tau) + 0.75 * 1000.0**4 * (2 / 3 + 1 / (0.4 * math.sqrt(3))), rel=1e-9)
    # top (tau -> 0), T_int = 0: T^4 = 3/4 Teq^4 (2/3 + gamma/sqrt(3))
    prof = P.GreyTwoStreamProfile(1000.0, 10.0, 0.0, 1e-3, 0.4)
    assert prof.temperature(np.array([[1e-12]]))[0, 0] ** 4 == pytest.approx(
        0.75 * 1000.0**4 * (2 / 3 + 0.4 / math.sqrt(3)), rel=1e-9)


@settings(max_examples=30, deadline=None)
@given(gam=st.floats(0.05, 0.95), teq=st.floats(150.0, 2500.0))
def test_guillot_visible_below_thermal_gives_warmer_deep_layers(gam, teq):
    # gamma < 1 (visible opacity below thermal): no thermal inversion, T rises with P
    prof = P.GreyTwoStreamProfile(teq, 10.0, 0.0, 1e-3, gam)
    t = prof.temperature(np.geomspace(1e-2, 1e7, 60)[None, :])[0]
    assert np.all(np.diff(t) >= -1e-9 * teq)


def test_hydrostatic_isothermal_closed_form():
    # isothermal, g = GM/r^2: 1/r = 1/R0 + (H0/R0^2) ln(P/P0), H0 = kT/(mu m_u g0)
    T, mu, g0, r0, p0 = 1200.0, 2.3, 10.0, 7e7, 1e6
    lev = P.pressure_levels(1e7, 1e-4, 150)
    r = P.hydrostatic_radius(lev, P.IsothermalProfile(T), mu, r0, p0, g0)
    h0 = K_B * T / (mu * M_U * g0)
    expect = 1.0 / (1.0 / r0 + h0 / r0**2 * np.log(lev / p0))
    np.testing.assert_allclose(r, expect, rtol=1e-12)
    # near the reference level the local scale height is H0
    i = np.argmin(abs(np.log(lev[0] / p0)))
    assert np.log(lev[0, i - 1] / lev[0, i + 1]) * h0 == pytest.approx(
        r[0, i + 1] - r[0, i - 1], rel=0.01)


def test_hydrostatic_non_isothermal_against_quadrature():
    prof = P.GreyTwoStreamProfile(900.0, 12.0, 150.0, 1e-3, 0.4)
    mu, g0, r0, p0 = 2.3, 12.0, 6e7, 1e6
    lev = P.pressure_levels(1e6, 1e-3, 200)
    r = P.hydrostatic_radius(lev, prof, mu, r0, p0, g0)
    gm = g0 * r0**2

    def integrand(lnp):
        return K_B * prof.temperature(np.array([[math.exp(lnp)]]))[0, 0] / (mu * M_U * gm)

    for j in (50, 120, 199):
        val, _ = quad(integrand, math.log(p0), math.log(lev[0, j]), epsabs=0, epsrel=1e-11)
        # trapezoid in ln P on 200 layers: well below 1e-3 scale heights
        h = K_B * 900.0 / (mu * M_U * g0)
        assert r[0, j] == pytest.approx(1.0 / (1.0 / r0 + val), abs=1e-3 * h)


def test_hydrostatic_unbound_is_nan():
    # a very hot, low-gravity atmosphere cannot stay bound up to 1e-6 Pa
    lev = P.pressure_levels(1e5, 1e-6, 100)
    r = P.hydrostatic_radius(lev, P.IsothermalProfile(3000.0), 2.0, 1e7, 1e5, 0.5)
    assert np.isnan(r[0, -1]) and np.isfinite(r[0, 0])


def test_refraction_floor_earth_sun():
    # Earth-Sun analogue: refraction keeps rays above ~12-14 km, i.e. ~0.15-0.25 bar
    # (Betremieux & Kaltenegger 2014, ApJ 791, 7; Robinson, Fortney & Hubbard 2017,
    # ApJ 850, 128; value from memory).  We use an isothermal 255 K air atmosphere.
    air = {"N2": 0.7808, "O2": 0.2095, "Ar": 0.0093, "CO2": 0.0004}
    nu = refraction.mixture_refractivity(air)
    assert float(nu) == pytest.approx(2.93e-4, rel=0.02)   # air at STP, handbook value
    p = refraction.refraction_floor_pressure(nu, P.IsothermalProfile(255.0), 28.96, R_EARTH, 9.8,
                                    R_SUN, AU)
    assert 0.12e5 < p[0] < 0.3e5


@settings(max_examples=30, deadline=None)
@given(a_au=st.floats(0.02, 5.0), rs=st.floats(0.1, 2.0))
def test_refraction_floor_scaling(a_au, rs):
    # isothermal: p_max proportional to (R_* + R_p)/a (Robinson et al. 2017 scaling)
    prof = P.IsothermalProfile(300.0)
    args = (2.9e-4, prof, 28.0, R_EARTH, 9.8)
    p1 = refraction.refraction_floor_pressure(*args, rs * R_SUN, a_au * AU)[0]
    p2 = refraction.refraction_floor_pressure(*args, rs * R_SUN, 2 * a_au * AU)[0]
    assert p1 / p2 == pytest.approx(2.0, rel=1e-9)
