"""Transmission spectra: an analytic isothermal solver and a layered chord solver.

Both solvers take the same opacity arrays, in SI, with a leading planet axis
and the sub-bin structure carried as k-distribution points ``g``:

``line_sigma``
    line cross-section of the gas mixture per molecule [m2], the
    k-distribution of each wavelength bin on its g-points, ascending;
``continuum_sigma``
    cross-section per molecule that is smooth across a bin [m2] (Rayleigh
    scattering and haze), so the extinction it adds is ``n * sigma``;
``cia_coefficient``
    collision-induced absorption of the mixture [m5], so the extinction it adds
    is ``c * n**2`` (``c = sum_pairs k_pair x_1 x_2``).

Analytic solver
    Heng & Kitzmann (2017, MNRAS 470, 2972; isothermal transit-radius formula):
    ``R = R0 + H [gamma + ln(P0 kappa / g * sqrt(2 pi R0 / H))]`` with
    Euler's ``gamma = 0.57721...``.  It says that the effective radius lies
    where the chord optical depth of an exponential atmosphere,
    ``tau(b) = kappa rho(b) sqrt(2 pi b H)``, equals ``exp(-gamma) = 0.56``
    (Lecavelier des Etangs et al. 2008, A&A 481, L83).  Gravity falls as
    ``1/r**2`` in our atmospheres, so we apply the formula at its own
    reference level: :func:`analytic_radius` solves ``tau(b) = exp(-gamma)``
    with ``rho(b)`` and ``H(b) = H0 (b/R0)**2`` of the isothermal atmosphere
    by Newton iteration (each step is the Heng & Kitzmann formula referenced at
    the previous estimate, with the exact local slope of ``ln tau``).  The result does not depend on the
    choice of reference pressure.  Collision-induced absorption (extinction
    ``~ n**2``, scale height ``H/2``) enters the same chord optical depth with
    ``sqrt(pi b H)``.  An opaque floor (surface, cloud top, refraction limit,
    or the deep atmosphere) with chord optical depth ``tau_f`` just above it
    adds ``H E1(tau_f)``, the exact plane-parallel result for an exponential
    absorber, ``R = r_floor + H [E1(tau_f) + gamma + ln tau_f]``.  Finally
    the first-order terms in ``H/R`` that the formula leaves out (next order
    of the chord-integral expansion, the spread of the limb profile in the
    area integral, and the curvature of ``ln tau(r)``; together about
    ``3.6 H**2/R``, i.e. 0.02-0.15 H for giants to hydrogen-rich small
    planets) are added; they were derived for snrkit, and the tests check
    the result against direct quadrature to 2e-3 H.

Layered solver
    Slant optical depth along chords at impact parameters ``b`` equal to the
    level radii, through spherical shells in which the extinction varies
    linearly with radius (closed-form chord integrals), and the effective
    area ``A = pi r_floor**2 + 2 pi Int (1 - exp(-tau(b))) b db`` (trapezoid
    rule).  The effective radius is ``sqrt(A / pi)``.

Transit depths are ``(R/R_s)**2`` computed per g-point and averaged over the
g-weights (the bin-average depth, not the depth of the bin-mean opacity).
"""

import math

import numpy as np

from ..constants import K_B
from ..errors import InputError

__all__ = [
    "EULER_GAMMA",
    "heng_kitzmann_radius",
    "analytic_radius",
    "chord_weights",
    "layered_radius",
    "bin_average_depth",
    "wavelength_bin_edges",
    "mixture_opacity",
    "transmission_spectrum",
    "SOLVERS",
    "DEFAULT_TOP_PRESSURE_PA",
    "DEEP_FLOOR_FACTOR",
    "FEATURE_REFERENCE_PLANETS",
    "FEATURE_WAVELENGTH_RANGE_UM",
    "FEATURE_RESOLUTION",
    "band_amplitude_scale_heights",
    "feature_scale_heights",
    "RADIUS_CALIBRATIONS",
]

#: Euler-Mascheroni constant.
EULER_GAMMA = 0.5772156649015329
#: Below this chord optical depth at the floor the radius is computed from
#: the floor, R = r_floor + H [E1 + gamma + ln](tau_floor) (at most 0.05 H
#: above the floor), instead of from the tau = exp(-gamma) root.
_TAU_THIN = 0.05


def heng_kitzmann_radius(reference_radius_m, reference_pressure_Pa, gravity_m_s2,
                         scale_height_m, opacity_m2_kg):
    """Heng & Kitzmann (2017, MNRAS 470, 2972; isothermal transit-radius formula) isothermal transit radius [m].

    ``R = R0 + H [gamma + ln(P0 kappa / g * sqrt(2 pi R0 / H))]``.

    Parameters
    ----------
    reference_radius_m : array_like
        Radius ``R0`` at the reference pressure [m].
    reference_pressure_Pa : array_like
        Reference pressure ``P0`` [Pa].
    gravity_m_s2 : array_like
        Gravity ``g`` [m s-2] (constant in the formula).
    scale_height_m : array_like
        Pressure scale height ``H`` [m].
    opacity_m2_kg : array_like
        Opacity ``kappa`` per unit mass [m2 kg-1], constant with height.

    Returns
    -------
    numpy.ndarray
        Transit radius [m], broadcast over the inputs.
    """
    r0 = np.asarray(reference_radius_m, dtype=np.float64)
    h = np.asarray(scale_height_m, dtype=np.float64)
    arg = (np.asarray(reference_pressure_Pa, dtype=np.float64) * np.asarray(opacity_m2_kg)
           / np.asarray(gravity_m_s2, dtype=np.float64) * np.sqrt(2.0 * np.pi * r0 / h))
    with np.errstate(divide="ignore"):
        return r0 + h * (EULER_GAMMA + np.log(arg))


def _log_or_minf(x):
    x = np.asarray(x, dtype=np.float64)
    with np.errstate(divide="ignore"):
        return np.where(x > 0, np.log(np.where(x > 0, x, 1.0)), -np.inf)


def _f_plane(tau):
    """Int_0^inf (1 - exp(-tau e^-x)) dx = E1(tau) + gamma + ln(tau); 0 at tau = 0."""
    from scipy.special import exp1
    tau = np.asarray(tau, dtype=np.float64)
    pos = tau > 0
    t = np.where(pos, tau, 1.0)
    # for tiny tau use the series tau - tau^2/4 (avoids cancellation)
    small = t < 1e-6
    val = np.where(small, t - 0.25 * t * t, exp1(t) + EULER_GAMMA + np.log(t))
    return np.where(pos, val, 0.0)


def analytic_radius(line_sigma, continuum_sigma, cia_coefficient, temperature_K, mu_g_mol,
                    reference_radius_m, reference_pressure_Pa, reference_gravity_m_s2,
                    floor_pressure_Pa, top_pressure_Pa, max_iter=60):
    """Effective radius of an isothermal, well-mixed atmosphere (analytic solver).

    See the module docstring for the method (Heng & Kitzmann 2017 applied at
    its own reference level, the exact plane-parallel floor term ``H E1(tau_f)``
    and the first-order ``H/R`` terms).  Where the isothermal gas would be
    unbound below ``top_pressure_Pa``, the top is placed where ``r/H(r) = 3``.

    Parameters
    ----------
    line_sigma : numpy.ndarray, shape (n_planet, n_wave, n_g)
        Line cross-section per molecule of the mixture [m2] at the temperature.
    continuum_sigma : numpy.ndarray, shape (n_planet, n_wave)
        Rayleigh + haze cross-section per molecule [m2].
    cia_coefficient : numpy.ndarray, shape (n_planet, n_wave)
        CIA coefficient of the mixture [m5] (extinction ``c n**2``).
    temperature_K, mu_g_mol : array_like, shape (n_planet,)
        Temperature [K] and mean molecular weight [g/mol].
    reference_radius_m, reference_pressure_Pa, reference_gravity_m_s2 : array_like, shape (n_planet,)
        Radius where the pressure is the reference pressure, and the gravity there.
    floor_pressure_Pa : array_like, shape (n_planet,)
        Pressure of the opaque floor (surface, cloud top or refraction limit).
    top_pressure_Pa : array_like, shape (n_planet,)
        Top of the model atmosphere; the radius is capped there.
    max_iter : int
        Newton iterations at most (convergence is typically 3-6).

    Returns
    -------
    radius : numpy.ndarray, shape (n_planet, n_wave, n_g)
        Effective radius [m].
    saturated : numpy.ndarray of bool, same shape
        Where the atmosphere is still opaque at the top pressure.
    """
    from ..constants import M_U
    ls = np.asarray(line_sigma, dtype=np.float64)
    npl, nw, ng = ls.shape
    cs = np.broadcast_to(np.asarray(continuum_sigma, dtype=np.float64), (npl, nw))
    cc = np.broadcast_to(np.asarray(cia_coefficient, dtype=np.float64), (npl, nw))
    T = np.broadcast_to(np.asarray(temperature_K, dtype=np.float64), (npl,))
    mu = np.broadcast_to(np.asarray(mu_g_mol, dtype=np.float64), (npl,))
    r0 = np.broadcast_to(np.asarray(reference_radius_m, dtype=np.float64), (npl,))
    p0 = np.broadcast_to(np.asarray(reference_pressure_Pa, dtype=np.float64), (npl,))
    g0 = np.broadcast_to(np.asarray(reference_gravity_m_s2, dtype=np.float64), (npl,))
    pf = np.broadcast_to(np.asarray(floor_pressure_Pa, dtype=np.float64), (npl,))
    pt = np.broadcast_to(np.asarray(top_pressure_Pa, dtype=np.float64), (npl,))

    h0 = K_B * T / (mu * M_U * g0)
    big_b = r0 * r0 / h0                 # lambda0 R0 = G M mu m_u / (k T)  [m]
    lnn0 = np.log(p0 / (K_B * T)) - r0 / h0

    # Work in u = 1/r: for the isothermal atmosphere with g = GM/r^2,
    # ln n(u) = lnn0 + B u and H(u) = 1/(B u^2), so the Laplace chord depth
    # tau = sigma n sqrt(2 pi r H) has ln tau = const + B u - 1.5 ln u: nearly
    # linear in u, convex, increasing, so Newton converges in a few steps
    # (monotonically after at most one overshoot).
    def u_at(p):
        with np.errstate(divide="ignore", invalid="ignore"):
            return (1.0 + np.log(p / p0) * h0 / r0) / r0

    shape = (npl, nw, ng)
    ip = np.broadcast_to(np.arange(npl)[:, None, None], shape).ravel()
    bb = big_b[ip]
    half_lnb = 0.5 * np.log(bb)
    # Three absorbers, each with extinction ~ n**e: lines (e = 1 + slope), the smooth
    # continuum (e = 1) and CIA (e = 2).  Chord depth of each: sigma n sqrt(2 pi r H / e).
    # (the production kernel, snrkit.atmosphere.analytic_kernel, gives the lines a
    # pressure-dependent exponent; here they have e = 1)
    e_line = np.ones(ls.size)
    ln_line = _log_or_minf(ls).ravel()
    base = 0.5 * math.log(2.0 * np.pi) - half_lnb
    c1 = ln_line + e_line * lnn0[ip] + base - 0.5 * np.log(e_line)
    c2 = np.broadcast_to(_log_or_minf(cs)[:, :, None], shape).ravel() + lnn0[ip] + base
    c3 = (np.broadcast_to(_log_or_minf(cc)[:, :, None], shape).ravel() + 2.0 * lnn0[ip] + base
          - 0.5 * math.log(2.0))

    def terms(u, sel):
        """ln tau(u), the shares (w1, w2, w3) of lines, continuum and CIA, and e_line."""
        b, e1 = bb[sel] * u, e_line[sel]
        l1, l2, l3 = c1[sel] + e1 * b, c2[sel] + b, c3[sel] + 2.0 * b
        hi = np.maximum(np.maximum(l1, l2), l3)
        fin = np.isfinite(hi)
        h0_ = np.where(fin, hi, 0.0)
        with np.errstate(invalid="ignore", over="ignore"):
            x1, x2, x3 = np.exp(l1 - h0_), np.exp(l2 - h0_), np.exp(l3 - h0_)
        tot = x1 + x2 + x3
        inv = np.where(fin & (tot > 0), 1.0 / np.where(tot > 0, tot, 1.0), 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            lt = np.where(fin, hi + np.log(np.where(tot > 0, tot, 1.0)), -np.inf)
        return lt - 1.5 * np.log(u), (x1 * inv, x2 * inv, x3 * inv), e1

    def f_and_slope(u, sel):
        """ln tau(u) and d ln tau / du for the elements ``sel``."""
        lt, (w1, w2, w3), e1 = terms(u, sel)
        return lt, bb[sel] * (w1 * e1 + w2 + 2.0 * w3) - 1.5 / u

    all_sel = slice(None)
    uf = u_at(pf)[ip]
    # top of the model; where the isothermal gas would be unbound below it, the top
    # is put where r/H(r) = 3 (the Laplace chord formula needs r >> H)
    ut = np.maximum(u_at(pt)[ip], 3.0 / bb)
    ln_tf, dfu = f_and_slope(uf, all_sel)
    ln_tt, _ = f_and_slope(ut, all_sel)
    saturated = ln_tt >= -EULER_GAMMA

    # Exact plane-parallel result for one exponential absorber above an opaque floor:
    # R = r* + H E1(tau_floor), r* the radius where tau = exp(-gamma) (below the floor
    # if tau_floor < exp(-gamma)).  For a nearly transparent floor (tau_f < _TAU_THIN)
    # the equivalent R = r_floor + H [E1 + gamma + ln](tau_floor) avoids placing r*
    # far below the floor.
    from scipy.special import exp1
    out = np.empty(ls.size)
    thin = (ln_tf < math.log(_TAU_THIN)) & ~saturated
    it = np.flatnonzero(thin)
    heff = 1.0 / (uf[it] ** 2 * dfu[it])             # local absorber scale height [m]
    out[it] = 1.0 / uf[it] + heff * _f_plane(np.exp(ln_tf[it]))
    # Newton on ln tau(u) + gamma = 0 from the floor (convex and increasing in u:
    # monotone convergence after at most one overshoot)
    sel = np.flatnonzero(~thin & ~saturated)
    u_root = np.ones(ls.size)
    d_root = np.ones(ls.size)
    u = uf[sel].copy()
    d = np.ones(sel.size)
    for _ in range(int(max_iter)):
        if sel.size == 0:
            break
        lt, d = f_and_slope(u, sel)
        step = (lt + EULER_GAMMA) / d
        u = u - step
        done = np.abs(step * bb[sel]) < 1e-7       # |dr| < 1e-7 H
        u_root[sel[done]] = u[done]
        d_root[sel[done]] = d[done]
        sel, u, d = sel[~done], u[~done], d[~done]
    u_root[sel] = u                                  # not converged (not expected)
    d_root[sel] = d
    ithick = np.flatnonzero(~thin & ~saturated)
    ur = u_root[ithick]
    b_ = bb[ithick]
    _, (w1, w2, w3), e1 = terms(ur, ithick)
    mean_e = w1 * e1 + w2 + 2.0 * w3
    d1 = b_ * mean_e - 1.5 / ur                       # d ln tau / du
    d2 = b_ * b_ * (w1 * e1 * e1 + w2 + 4.0 * w3 - mean_e ** 2) + 1.5 / ur**2   # d2 ln tau / du2
    h_a = 1.0 / (ur**2 * d1)                         # absorber scale height at the root [m]
    curv = 0.5 * (ur**4 * d2 + 2.0 * ur**3 * d1)     # (1/2) d2 ln tau / dr2 [m-2]
    # First-order corrections in H/R (derived for snrkit by carrying the expansions one
    # order further; they move R by ~3.6 H^2/R for a linear absorber):
    #  * chord integral: exact/Laplace = 1 + 9/(8 e beta) for an absorber ~ n^e,
    #    beta = r/H (9/(8 beta) for e = 1, 9/(16 beta) for n^2 absorbers);
    #  * area: R_eff^2 = r*^2 + (pi^2/6) H_a^2 (variance of the Gumbel-shaped limb
    #    profile 1 - exp(-tau));
    #  * curvature of ln tau(r): + (pi^2/6) c H_a^3 with c = (1/2) d2 ln tau/dr2.
    beta = b_ * ur
    dln_tau = np.log1p(9.0 / (8.0 * beta) * (w1 / e1 + w2 + 0.5 * w3))
    corr = h_a * dln_tau + (np.pi**2 / 12.0) * h_a**2 * ur + (np.pi**2 / 6.0) * curv * h_a**3
    near = ln_tf[ithick] < math.log(40.0)           # E1(40) < 1e-19
    corr[near] += h_a[near] * exp1(np.exp(ln_tf[ithick][near]))
    out[ithick] = 1.0 / ur + corr
    out[saturated] = 1.0 / ut[saturated]
    return out.reshape(shape), saturated.reshape(shape)


def chord_weights(radius_m):
    """Matrix giving slant optical depths from level extinction coefficients.

    ``tau(b_k) = sum_j W[k, j] alpha_j`` for impact parameters ``b_k`` equal
    to the level radii, with the extinction coefficient ``alpha`` varying
    linearly with radius inside each shell, using the closed forms
    ``Int r dr / sqrt(r^2 - b^2) = s`` and
    ``Int r^2 dr / sqrt(r^2 - b^2) = (r s + b^2 ln(r + s)) / 2``,
    ``s = sqrt(r^2 - b^2)``; the factor 2 counts both halves of the chord.

    Parameters
    ----------
    radius_m : numpy.ndarray, shape (n_planet, n_levels)
        Level radii [m], strictly increasing.

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_levels, n_levels)
        Path weights [m].
    """
    r = np.asarray(radius_m, dtype=np.float64)
    npl, nl = r.shape
    b = r[:, :, None]                    # impact parameter index k
    ra = r[:, None, :-1]                 # shell lower radius, index j
    rb = r[:, None, 1:]
    k = np.arange(nl)[:, None]
    j = np.arange(nl - 1)[None, :]
    valid = (j >= k)[None, :, :]

    def s_of(rr):
        return np.sqrt(np.clip((rr - b) * (rr + b), 0.0, None))

    sa = np.where(valid, s_of(ra), 0.0)
    sb = np.where(valid, s_of(rb), 0.0)
    dj0 = sb - sa
    log_term = np.log1p(np.where(valid, (rb - ra + sb - sa) / (ra + sa), 0.0))
    dj1 = 0.5 * (rb * sb - ra * sa) + 0.5 * b * b * log_term
    upper = (dj1 - ra * dj0) / (rb - ra)
    upper = np.where(valid, upper, 0.0)
    lower = np.where(valid, dj0 - upper, 0.0)
    w = np.zeros((npl, nl, nl))
    w[:, :, :-1] += 2.0 * lower
    w[:, :, 1:] += 2.0 * upper
    return w


def layered_radius(extinction_m, radius_m, weights=None):
    """Effective radius from chord integration through layers (layered solver).

    Parameters
    ----------
    extinction_m : numpy.ndarray, shape (n_planet, n_levels, n_wave, n_g)
        Extinction coefficient ``alpha`` at each level [m-1].
    radius_m : numpy.ndarray, shape (n_planet, n_levels)
        Level radii [m], increasing; the first level is the opaque floor
        (rays with smaller impact parameters are blocked).
    weights : numpy.ndarray, optional
        Precomputed :func:`chord_weights` of ``radius_m``.

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_wave, n_g)
        Effective radius [m], ``sqrt(A / pi)`` with
        ``A = pi r_0**2 + 2 pi Int (1 - exp(-tau(b))) b db``.
    """
    a = np.asarray(extinction_m, dtype=np.float64)
    r = np.asarray(radius_m, dtype=np.float64)
    npl, nl, nw, ng = a.shape
    w = chord_weights(r) if weights is None else weights
    tau = np.matmul(w, a.reshape(npl, nl, nw * ng))          # (p, k, w*g)
    f = -np.expm1(-tau) * r[:, :, None]
    db = np.diff(r, axis=1)[:, :, None]
    integral = np.sum(0.5 * (f[:, 1:] + f[:, :-1]) * db, axis=1)
    area = np.pi * r[:, :1] ** 2 + 2.0 * np.pi * integral
    return np.sqrt(area / np.pi).reshape(npl, nw, ng)


def bin_average_depth(radius_m, stellar_radius_m, g_weights):
    """Transit depth averaged over each bin's g-points.

    Parameters
    ----------
    radius_m : numpy.ndarray, shape (n_planet, n_wave, n_g)
        Effective radius per g-point [m].
    stellar_radius_m : array_like, shape (n_planet,)
        Stellar radius [m].
    g_weights : numpy.ndarray, shape (n_g,)
        Quadrature weights summing to one.

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_wave)
        ``sum_g w_g (R_g / R_s)**2`` (dimensionless).
    """
    w = np.asarray(g_weights, dtype=np.float64)
    if w.ndim != 1 or w.shape[0] != np.shape(radius_m)[-1] or abs(w.sum() - 1.0) > 1e-9:
        raise InputError("g_weights", f"shape {w.shape}, sum {w.sum():.6g}",
                         "one weight per g-point, summing to 1")
    rs = np.asarray(stellar_radius_m, dtype=np.float64).reshape(-1, 1, 1)
    return np.sum((np.asarray(radius_m) / rs) ** 2 * w, axis=-1)


# ---------------------------------------------------------------------------
# Public layer
# ---------------------------------------------------------------------------

#: Default top of the model atmosphere [Pa] (1e-11 bar; high enough above the
#: strongest band centres of the presets at R = 1000).
DEFAULT_TOP_PRESSURE_PA = 1e-6
#: Without a surface, the opaque floor lies this factor below the reference pressure.
DEEP_FLOOR_FACTOR = 10.0
#: Default wavelength range of generated grids [m].
DEFAULT_WAVELENGTH_RANGE_M = (0.3e-6, 30e-6)
SOLVERS = ("analytic", "layers")

#: Collision pairs and the two species whose mixing ratios weight them.
_CIA_SPECIES = {"H2-H2": ("H2", "H2"), "H2-He": ("H2", "He"), "N2-N2": ("N2", "N2"),
                "O2-O2": ("O2", "O2"), "CO2-CO2": ("CO2", "CO2")}


def wavelength_bin_edges(resolution, wavelength_min_m=DEFAULT_WAVELENGTH_RANGE_M[0],
                         wavelength_max_m=DEFAULT_WAVELENGTH_RANGE_M[1]):
    """Log-spaced wavelength bin edges at resolving power ``R = lambda / d lambda`` [m].

    ``n = ceil(R ln(max/min))`` bins of equal ``d ln lambda = ln(max/min)/n``
    (so ``d lambda / lambda`` is at most ``1/R``) exactly span the range.

    Parameters
    ----------
    resolution : float
        Resolving power R (>= 1).
    wavelength_min_m, wavelength_max_m : float
        Range [m].

    Returns
    -------
    numpy.ndarray
        ``n + 1`` edges [m].
    """
    if isinstance(resolution, bool) or not isinstance(resolution, (int, float, np.number)) \
            or not (1 <= float(resolution) <= 1e6):
        raise InputError("resolution", resolution, "a resolving power in [1, 1e6]")
    lo, hi = float(wavelength_min_m), float(wavelength_max_m)
    if not (0 < lo < hi):
        raise InputError("wavelength range", f"{lo:.4g}-{hi:.4g} m", "0 < minimum < maximum")
    n = max(1, int(math.ceil(float(resolution) * math.log(hi / lo) - 1e-9)))
    return np.geomspace(lo, hi, n + 1)


def _default_opacity_source():
    from types import SimpleNamespace
    from . import opacity, continuum
    grid = getattr(opacity, "PRESSURE_RANGE_PA", None)
    if grid is None:
        grid = (0.1, 1e7)   # the k tables' pressure decades (0.1 Pa - 100 bar)
    # cache_key: the shipped tables' opacity lattice is kept for the whole process
    return SimpleNamespace(PRESSURE_RANGE_PA=tuple(grid), cache_key="shipped-tables",
                           **{k: getattr(opacity, k) for k in (
        "OPACITY_SPECIES", "g_quadrature", "species_k_coefficients", "combine_random_overlap")},
        **{k: getattr(continuum, k) for k in (
            "RAYLEIGH_SPECIES", "rayleigh_cross_section", "CIA_PAIRS", "cia_coefficient",
            "haze_cross_section")})


def mixture_opacity(source, mixing_ratios, wavelength_edges_m, temperature_K, n_g,
                    haze_enhancement=0.0, haze_slope=-4.0, exclude=None, pressure_Pa=None):
    """Opacity arrays of a well-mixed gas at the given temperatures.

    Parameters
    ----------
    source : object
        Opacity source with the functions of :mod:`snrkit.atmosphere.opacity`
        and :mod:`snrkit.atmosphere.continuum` (see ATMOSPHERE_INTERFACE).
    mixing_ratios : dict of str to float or numpy.ndarray
        Volume mixing ratios: one value per gas, or per level (arrays
        broadcast against ``temperature_K``, e.g. from
        :meth:`snrkit.atmosphere.scenarios.Scenario.level_mixing_ratios`);
        lines, Rayleigh scattering and CIA all use the local value.
    wavelength_edges_m : numpy.ndarray, shape (n_wave + 1,)
        Bin edges [m].
    temperature_K : numpy.ndarray, shape (n_planet, n_levels)
        Temperatures [K].
    n_g : int
        Number of g-points.
    haze_enhancement, haze_slope : float
        Haze (see :func:`snrkit.atmosphere.continuum.haze_cross_section`).
    exclude : str, optional
        Species whose opacity (lines, Rayleigh, CIA) is left out, for
        contribution spectra; the mean molecular weight is unchanged.
    pressure_Pa : numpy.ndarray, optional
        Level pressures (same shape as ``temperature_K``) for the pressure
        dependence of the line shapes; clipped to the source's
        ``PRESSURE_RANGE_PA`` if it has one (line widths below 0.1 Pa are
        Doppler-dominated, so clipping there changes nothing).  Default: the
        source's reference pressure.

    Returns
    -------
    dict
        ``line`` (n_planet, n_levels, n_wave, n_g) [m2], ``continuum``
        (n_planet, n_levels, n_wave) [m2], ``cia`` (n_planet, n_levels, n_wave)
        [m5], ``g_weights`` (n_g,).
    """
    edges = np.asarray(wavelength_edges_m, dtype=np.float64)
    centres = np.sqrt(edges[1:] * edges[:-1])
    T = np.asarray(temperature_K, dtype=np.float64)
    _, gw = source.g_quadrature(n_g)
    gw = np.asarray(gw, dtype=np.float64)
    x = {k: np.asarray(v, dtype=np.float64) for k, v in mixing_ratios.items()
         if k != exclude and np.any(np.asarray(v) > 0)}
    nw = centres.size
    ks, vs = [], []
    kw = {}
    if pressure_Pa is not None:
        lo, hi = getattr(source, "PRESSURE_RANGE_PA", (0.0, np.inf))
        kw["pressure_Pa"] = np.clip(np.asarray(pressure_Pa, dtype=np.float64), lo, hi)
    for sp in source.OPACITY_SPECIES:
        if sp in x:
            ks.append(np.asarray(source.species_k_coefficients(sp, edges, T, n_g=n_g, **kw)))
            vs.append(np.broadcast_to(x[sp], T.shape))
    if ks:
        line = np.asarray(source.combine_random_overlap(ks, vs, gw))
    else:
        line = np.zeros(T.shape + (nw, gw.size))
    ray = np.zeros(nw)
    for sp in source.RAYLEIGH_SPECIES:
        if sp in x:
            ray = ray + x[sp][..., None] * np.asarray(source.rayleigh_cross_section(sp, centres))
    if haze_enhancement > 0:
        ray = ray + np.asarray(source.haze_cross_section(centres, haze_enhancement, haze_slope))
    cia = np.zeros(T.shape + (nw,))
    for pair in source.CIA_PAIRS:
        a, b = _CIA_SPECIES.get(pair, (None, None))
        if a in x and b in x:
            cia = cia + (x[a] * x[b])[..., None] * np.asarray(source.cia_coefficient(pair, centres, T))
    return {"line": line, "continuum": np.broadcast_to(ray, T.shape + (nw,)),
            "cia": cia, "g_weights": gw}


#: Spacing [decades] of the pressure nodes at which the analytic solver takes the
#: line shapes (k ~ P^s is interpolated between them).
LINE_SHAPE_DECADES = 2.0


def _line_shape_pressures(source):
    """Pressure nodes [Pa] (every LINE_SHAPE_DECADES decades) of the line-shape tables, or None."""
    rng = getattr(source, "PRESSURE_RANGE_PA", None)
    if rng is None:
        return None
    lo, hi = np.log10(rng[0]), np.log10(rng[1])
    return 10.0 ** np.arange(np.floor(lo), np.ceil(hi) + 0.5, LINE_SHAPE_DECADES)


def _profile_for(sc, temperature_K, gravity):
    from .profiles import IsothermalProfile, GreyTwoStreamProfile, TabulatedProfile
    if sc.temperature_profile == "tabulated":
        npl = np.size(temperature_K)
        return TabulatedProfile(*sc.temperature_table, factor=np.full(npl, sc.temperature_factor),
                                reference_pressure_Pa=np.full(npl, sc.reference_pressure_Pa))
    if sc.temperature_profile == "grey-two-stream":
        return GreyTwoStreamProfile(temperature_K, gravity, sc.internal_temperature_K,
                                    sc.thermal_opacity_m2_kg, sc.visible_to_thermal_ratio)
    return IsothermalProfile(temperature_K)


def _only_cold_trap(sc):
    """True when the scenario's one departure from the analytic solver is a cold trap."""
    return (sc.cold_trap is not None and not sc.mixing_ratio_profiles
            and sc.temperature_profile != "tabulated")


def _analytic_for(mixing_ratios, tag, *, source, sc, edges, t_iso, n_g, exclude, memo,
                  pressure_broadening, args):
    """Analytic radii (planet, bin, g), the top flags and the g weights for one composition.

    The opacity comes from the process-wide temperature lattice
    (:mod:`snrkit.atmosphere.analytic_kernel`), so it does not depend on which
    planets are solved together.  ``memo`` keeps the state of the previous
    solve of the same planets (the calibration's first solve): the second
    solve of the same composition is its exact translation, and a solve with
    one species left out starts from its roots.
    """
    from .analytic_kernel import lattice_opacity, root_radius
    grid_p = _line_shape_pressures(source) if pressure_broadening else None
    op = lattice_opacity(source, mixing_ratios, (sc.haze_enhancement, sc.haze_slope), edges, n_g,
                         exclude, grid_p, t_iso, memo=None if memo is None else memo.setdefault(
                             "lattice", {}))
    x_nodes = (np.array([np.log(_reference_pressure(source))]) if grid_p is None
               else np.log(grid_p))
    r0 = np.asarray(args[2], dtype=np.float64)
    key = ("state", tag, memo.get("slice", 0) if memo is not None else 0)
    prev = None if memo is None else memo.get(key)
    if prev is not None and prev["r0"].shape != r0.shape:
        prev = None
    start = None
    if prev is not None and exclude is not None:
        # the same planets without one species: start from the full model's roots
        du = (1.0 / r0 - 1.0 / prev["r0"])[:, None, None]
        start = 1.0 / (prev["u"].reshape(du.shape[0], -1, op["lnk"].shape[-1]) + du)
    radius, sat, state = root_radius(op["lnk"], x_nodes, op["ln_continuum"], op["ln_cia"], *args,
                                     radius_start_m=start,
                                     previous=prev if exclude is None else None,
                                     return_state=True)
    if memo is not None and exclude is None:
        memo[key] = state
    return radius, sat, op["g_weights"]


def _reference_pressure(source):
    from .opacity import REFERENCE_PRESSURE_PA
    return getattr(source, "REFERENCE_PRESSURE_PA", REFERENCE_PRESSURE_PA)


def _analytic_cold_trap(**kw):
    """Analytic radii for a gas cold-trapped above a tropopause.

    The chord at impact parameter b above the tropopause radius r_t sees only
    the stratospheric composition; a chord below it is dominated by the gas
    near its lowest point, i.e. the troposphere.  With r_s and r_l the roots of
    the isothermal formula for the stratospheric and the tropospheric
    compositions (r_s <= r_l), the radius is therefore r_s if r_s lies above
    the tropopause, r_l if r_l lies below it, and r_t where the opacity jump
    at the tropopause itself makes the atmosphere turn opaque: median(r_s,
    r_t, r_l) (derived here; checked against the layered solver).
    """
    from ..constants import M_U
    sc = kw["sc"]
    trap = sc.cold_trap
    strat = dict(sc.mixing_ratios)
    strat[trap["gas"]] = min(float(trap["mixing_ratio_above"]), float(strat[trap["gas"]]))
    r_l, sat_l, gw = _analytic_for(sc.mixing_ratios, "troposphere", **kw)
    r_s, sat_s, _ = _analytic_for(strat, "stratosphere", **kw)
    t_iso, mu, r0, p0, g0 = kw["args"][:5]
    h0 = K_B * t_iso / (mu * M_U * g0)
    with np.errstate(divide="ignore", invalid="ignore"):
        u_t = (1.0 + np.log(trap["tropopause_pressure_Pa"] / p0) * h0 / r0) / r0
    r_t = np.where(u_t > 0, 1.0 / u_t, np.inf)[:, None, None]
    radius = np.clip(r_t, r_s, r_l)
    return radius, np.where(radius >= r_l, sat_l, sat_s), gw


def _solve(sc, source, edges, rp, rs, g0, teq, a_m, solver, n_layers, n_g, p_top, refraction,
           exclude=None, pressure_broadening=True, memo=None):
    """Effective radius per g-point (n_planet, n_wave, n_g), g weights, extras.

    ``memo`` (a dict) keeps the analytic solver's mixture opacity between calls
    for the same planets (it depends on the temperatures, not on the radius),
    so the calibration's second solve does not rebuild it.
    """
    from .profiles import (pressure_levels, hydrostatic_radius, scale_height,
                           mixture_refractivity, refraction_floor_pressure)
    npl = rp.shape[0]
    T = sc.temperature(teq) * np.ones(npl)
    mu = np.full(npl, sc.mean_molecular_weight)
    p0 = np.full(npl, sc.reference_pressure_Pa)
    profile = _profile_for(sc, T, g0)
    floor = np.full(npl, sc.surface_pressure_Pa if sc.surface_pressure_Pa is not None
                    else DEEP_FLOOR_FACTOR * sc.reference_pressure_Pa)
    if sc.cloud_top_pressure_Pa is not None:
        floor = np.minimum(floor, sc.cloud_top_pressure_Pa)
    p_refr = np.full(npl, np.nan)
    if refraction:
        p_refr = refraction_floor_pressure(mixture_refractivity(sc.mixing_ratios), profile, mu,
                                           rp, g0, rs, a_m)
        floor = np.minimum(floor, p_refr)
    if np.any(floor <= p_top):
        raise InputError("top_pressure", f"{p_top:.3g} Pa",
                         f"below the opaque floor ({float(np.min(floor)):.3g} Pa: surface, cloud "
                         "top or refraction limit)", detail=f"scenario {sc.name!r}")
    extras = {"temperature": profile.reference_temperature(), "mu": mu,
              "floor": floor, "refraction_floor": p_refr}
    nw = edges.size - 1
    if sc.featureless:
        _, gw = source.g_quadrature(n_g) if source is not None else (None, np.ones(1))
        return np.broadcast_to(rp[:, None, None], (npl, nw, np.size(gw))).copy(), \
            np.asarray(gw, dtype=np.float64), extras
    # the analytic solver is isothermal and well-mixed (a cold trap through the two
    # compositions, _analytic_cold_trap); other scenarios take the layered one
    analytic_ok = sc.well_mixed or _only_cold_trap(sc)
    extras["layered_fallback"] = np.full(npl, solver == "analytic" and not analytic_ok)
    if solver == "analytic" and analytic_ok:
        t_iso = profile.reference_temperature()
        kw = dict(source=source, sc=sc, edges=edges, t_iso=t_iso, n_g=n_g, exclude=exclude,
                  memo=memo, pressure_broadening=pressure_broadening,
                  args=(t_iso, mu, rp, p0, g0, floor, np.full(npl, p_top)))
        if sc.well_mixed:
            radius, sat, gw = _analytic_for(sc.mixing_ratios, "mixed", **kw)
        else:
            radius, sat, gw = _analytic_cold_trap(**kw)
        extras["top_limited"] = sat.any(axis=(1, 2))
        return radius, gw, extras
    levels = pressure_levels(floor, np.full(npl, p_top), n_layers)
    mix, mu_lv = (sc.mixing_ratios, mu) if sc.well_mixed else sc.level_mixing_ratios(levels)
    r = hydrostatic_radius(levels, profile, mu_lv, rp, p0, g0)
    bad = ~np.all(np.isfinite(r), axis=1)
    if bad.any():
        import warnings
        from ..errors import SnrkitWarning
        warnings.warn(f"scenario {sc.name!r}: the hydrostatic atmosphere is unbound below the top "
                      f"pressure for {int(bad.sum())} planet(s); their spectra are NaN (raise "
                      "top_pressure)", SnrkitWarning, stacklevel=3)
        r = np.where(bad[:, None], rp[:, None] * (1.0 + np.linspace(0, 1, r.shape[1])), r)
    temp = profile.temperature(levels)
    n = levels / (K_B * temp)
    op = mixture_opacity(source, mix, edges, temp, n_g, sc.haze_enhancement,
                         sc.haze_slope, exclude,
                         pressure_Pa=levels if pressure_broadening else None)
    alpha = n[:, :, None, None] * (op["line"] + op["continuum"][..., None]) \
        + (op["cia"] * (n * n)[:, :, None])[..., None]
    radius = layered_radius(alpha, r)
    radius[bad] = np.nan
    # opacity still significant at the top: chord depth of the top level > 1e-2
    h_top = scale_height(temp[:, -1], mu_lv[:, -1] if np.ndim(mu_lv) == 2 else mu,
                         g0 * (rp / r[:, -1]) ** 2)
    tau_top = alpha[:, -1] * np.sqrt(2.0 * np.pi * r[:, -1] * h_top)[:, None, None]
    extras["top_limited"] = np.any(tau_top > 1e-2, axis=(1, 2))
    return radius, op["g_weights"], extras


#: Work-array budget (elements) per planet chunk; planets are processed in chunks
#: so that catalogues of 1e4-1e5 planets fit in memory.
_CHUNK_ELEMENTS = 4_000_000


def _solve_depth(sc, *, source, edges, rp, rs, g0, teq, a_m, solver, n_layers, n_g, p_top,
                 refraction, exclude=None, pressure_broadening=True, memo=None):
    """Bin-average depth (n_planet, n_wave) and extras, solving planet chunks in turn."""
    npl = rp.shape[0]
    per_planet = (edges.size - 1) * max(int(n_g), 1) * (
        (n_layers or 150) + 1 if solver == "layers" or not (sc.well_mixed or _only_cold_trap(sc))
        else 16)
    step = max(1, int(_CHUNK_ELEMENTS // per_planet))
    depths, extras = [], []
    for i in range(0, npl, step):
        sl = slice(i, min(npl, i + step))
        if memo is not None:
            memo["slice"] = i
        radius, gw, ex = _solve(sc, source, edges, rp[sl], rs[sl], g0[sl], teq[sl], a_m[sl],
                                solver, n_layers, n_g, p_top, refraction, exclude,
                                pressure_broadening, memo)
        depths.append(bin_average_depth(radius, rs[sl], gw))
        extras.append(ex)
    ex = {k: np.concatenate([e[k] for e in extras]) for k in extras[0]}
    return np.concatenate(depths, axis=0), ex


#: Ways of placing the model against the observed radius (see transmission_spectrum).
RADIUS_CALIBRATIONS = ("observed-depth", "reference-pressure")


def _calibration_weights(weights, edges, npl, band=None):
    """Per-planet bin weights of the band average (default: width in ln wavelength)."""
    nw = edges.size - 1
    if band is not None:
        try:
            lo, hi = (float(b) * 1e-6 for b in band)
        except (TypeError, ValueError):
            raise InputError("calibration_band", band, "two wavelengths MIN MAX in um") from None
        if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi) or hi <= edges[0] \
                or lo >= edges[-1]:
            raise InputError("calibration_band", band, f"MIN < MAX [um] overlapping the bins "
                             f"{edges[0] * 1e6:.4g}-{edges[-1] * 1e6:.4g} um")
        a, b = np.maximum(edges[:-1], lo), np.minimum(edges[1:], hi)
        inside = np.where(b > a, np.log(np.maximum(b, a) / a) / np.log(edges[1:] / edges[:-1]), 0.0)
    else:
        inside = np.ones(nw)
    if weights is None:
        w = np.log(edges[1:] / edges[:-1]) * inside
    else:
        w = np.asarray(weights, dtype=np.float64)
        if w.shape not in ((nw,), (npl, nw)) or np.any(~np.isfinite(w)) or np.any(w < 0) \
                or np.any(np.sum(np.broadcast_to(w, (npl, nw)), axis=-1) <= 0):
            raise InputError("calibration_weights", f"shape {w.shape}",
                             f"finite weights >= 0, shape ({nw},) or ({npl}, {nw}), not all zero")
        w = w * inside
    return np.broadcast_to(w, (npl, nw))


def _band_radius(depth, rs, weights):
    """Radius whose area is the weighted band average of the depth (NaN bins ignored)."""
    ok = np.isfinite(depth)
    w = np.where(ok, weights, 0.0)
    mean = np.sum(np.where(ok, depth, 0.0) * w, axis=-1) / np.maximum(np.sum(w, axis=-1), 1e-300)
    return rs * np.sqrt(mean)


def _exact_shift(depth, rs, rp, weights):
    """delta with sum w (R_i + delta)^2 / sum w = Rp^2, R_i = Rs sqrt(depth_i)."""
    ok = np.isfinite(depth)
    w = np.where(ok, weights, 0.0)
    w = w / np.maximum(np.sum(w, axis=-1, keepdims=True), 1e-300)
    r = rs[:, None] * np.sqrt(np.where(ok, depth, 0.0))
    m1, m2 = np.sum(w * r, axis=-1), np.sum(w * r * r, axis=-1)
    return -m1 + np.sqrt(np.maximum(m1 * m1 - m2 + rp * rp, 0.0))


def _calibrated(sc, rp, g0, weights, exclude, kw):
    """Reference radius R0 that makes the band-averaged depth equal (Rp/Rs)^2.

    Two solves: the first at R0 = Rp gives the offset of the band-averaged
    effective radius; shifting R0 by it moves every radius by the same
    amount to first order in H/R, so the second solve is within
    O(offset H/R) of the target; that remainder is removed exactly by a
    uniform shift of the effective radii (itself second order, well below
    1e-3 H).  Gravity
    follows R0 as g0 (Rp/R0)^2.  With ``exclude`` the calibration is that of
    the full model and the species is removed afterwards.
    """
    rs = kw["rs"]
    d1, _ = _solve_depth(sc, rp=rp, g0=g0, **kw)
    r0 = rp - (_band_radius(d1, rs, weights) - rp)
    r0 = np.where(np.isfinite(r0) & (r0 > 0.5 * rp), r0, rp)
    g0c = g0 * (rp / r0) ** 2
    d2, ex = _solve_depth(sc, rp=r0, g0=g0c, **kw)
    delta = _exact_shift(d2, rs, rp, weights)
    if exclude is not None:
        d2, ex = _solve_depth(sc, rp=r0, g0=g0c, exclude=exclude, **kw)
    return r0, g0c, _shift_radius(d2, rs, delta), ex, delta


def _shift_radius(depth, rs, delta):
    """Depths whose effective radii are moved by ``delta`` [m] (per planet)."""
    r_eff = rs[:, None] * np.sqrt(depth)
    return ((r_eff + np.asarray(delta)[:, None]) / rs[:, None]) ** 2


def transmission_spectrum(scenario, planet_radius, stellar_radius, *, planet_mass=None,
                          gravity=None, equilibrium_temperature=None, semi_major_axis=None,
                          wavelength_edges=None, resolution=100, solver="analytic",
                          n_layers=None, n_g=8, top_pressure=None, refraction=False,
                          pressure_broadening=True, contributions=False, planet_names=None,
                          opacity_source=None, exclude_species=None,
                          radius_calibration="observed-depth", calibration_weights=None,
                          calibration_band=None):
    """Transmission spectrum of one or more atmosphere scenarios.

    Parameters
    ----------
    scenario : str, dict, Scenario or list of them
        Preset name, scenario file, table of scenario keys (see
        :mod:`snrkit.atmosphere.scenarios`), or a list (adds a ``scenario``
        dimension).
    planet_radius : Quantity or float, shape (n_planet,)
        The planet's observed (white-light) transit radius (bare numbers:
        Earth radii); see ``radius_calibration``.
    stellar_radius : Quantity or float
        Bare numbers: solar radii.
    planet_mass : Quantity or float, optional
        Bare numbers: Earth masses.  Give this or ``gravity``.
    gravity : Quantity or float, optional
        Gravity at the reference radius (bare numbers: m s-2).
    equilibrium_temperature : Quantity or float, optional
        Bare numbers: K.  Needed unless every scenario fixes its temperature.
    semi_major_axis : Quantity or float, optional
        Bare numbers: AU.  Needed for ``refraction=True``.
    wavelength_edges : Quantity or array_like, optional
        Bin edges (bare numbers: um).  Default: :func:`wavelength_bin_edges`
        at ``resolution`` over 0.3-30 um.
    resolution : float
        Resolving power of the default grid.
    solver : {"analytic", "layers"}
        Analytic isothermal formula or chord integration through layers.  The
        analytic solver is isothermal: with a ``grey-two-stream`` scenario it
        uses the scenario temperature (factor x T_eq) throughout.
    n_layers : int, optional
        Layers of the layered solver (default
        :data:`snrkit.atmosphere.profiles.DEFAULT_N_LAYERS`).
    n_g : int
        k-distribution points per bin.
    top_pressure : Quantity or float, optional
        Top of the model atmosphere (bare numbers: Pa; default 1e-6 Pa).
    refraction : bool
        Limit the deepest pressure probed by refraction (needs
        ``semi_major_axis``; see
        :func:`snrkit.atmosphere.profiles.refraction_floor_pressure`).
    pressure_broadening : bool
        Layered solver: line shapes at each level's pressure (default), or,
        if False, at the opacity tables' reference pressure everywhere (as the
        analytic solver, which has no pressure axis).
    exclude_species : str, optional
        Leave this species' opacity out (mean molecular weight unchanged), as
        in the ``depth_without_species_ppm`` contributions.
    contributions : bool or sequence of str
        Also compute the spectrum with each absorbing species removed
        (``depth_without_species_ppm``), on the same reference radius; a
        sequence limits this to the species named.
    radius_calibration : {"observed-depth", "reference-pressure"}
        ``"observed-depth"`` (default): the radius at the scenario's
        reference pressure is solved so that the model's band-averaged depth
        over the bins equals the observed depth (planet_radius /
        stellar_radius)^2 -- the measured radius is a white-light quantity,
        not the radius of a deep pressure level.  ``"reference-pressure"``:
        the planet radius is placed at the reference pressure (the older
        convention; features then sit many scale heights above the observed
        depth).  Removing a species keeps the calibrated radius of the full
        model (the same planet without that opacity).
    calibration_weights : array_like, shape (n_wave,) or (n_planet, n_wave), optional
        Weights of the bins in the band average (for example the detected
        photons per bin, so that the average is the instrument's white-light
        depth).  Default: each bin's width in ln(wavelength).
    planet_names : list of str, optional
        Labels of the planet axis.
    opacity_source : object, optional
        Replacement for snrkit's opacity tables (an object with the functions
        of :mod:`snrkit.atmosphere.opacity` and
        :mod:`snrkit.atmosphere.continuum`); for tests and experts.

    Returns
    -------
    xarray.Dataset
        Dims ``(planet, wavelength)`` (and ``scenario`` for a list):
        ``transit_depth_ppm``, ``effective_height_km`` (above the observed
        radius), per planet ``scale_height_km``,
        ``annulus_ppm_per_scale_height`` (``2 H R_p / R_s**2``),
        ``observed_depth_ppm`` ((R_p/R_s)^2, the line the spectrum is
        calibrated to), ``reference_radius_km`` (radius at the reference
        pressure) and ``reference_depth_ppm``, ``temperature_K``,
        ``mean_molecular_weight``, ``floor_pressure_bar``; coordinates
        ``wavelength`` (bin centres, um), ``wavelength_lower`` and
        ``wavelength_upper`` (um).  Units are in each variable's attrs.
    """
    import astropy.units as u
    from ..constants import G
    from ..units import to_si
    from .profiles import DEFAULT_N_LAYERS, scale_height
    from .scenarios import load_scenario

    many = isinstance(scenario, (list, tuple))
    specs = list(scenario) if many else [scenario]
    if not specs:
        raise InputError("scenario", scenario, "at least one scenario")
    scenarios = [load_scenario(s) for s in specs]
    for sc in scenarios:
        if not sc.featureless and not sc.mixing_ratios:
            raise InputError(f"scenario {sc.name!r}: mixing_ratios", None,
                             "a table of species = volume mixing ratio (a spectrum needs the "
                             "gases, not only a mean molecular weight)")
    names = [s.name for s in scenarios]
    if len(set(names)) != len(names):
        raise InputError("scenario", names, "scenarios with distinct names")
    if solver not in SOLVERS:
        raise InputError("solver", solver, " or ".join(SOLVERS))
    rp = np.atleast_1d(to_si(planet_radius, "planet_radius", u.earthRad, 0.0, None,
                             low_inclusive=False))
    rs = np.atleast_1d(to_si(stellar_radius, "stellar_radius", u.solRad, 0.0, None,
                             low_inclusive=False))
    if (planet_mass is None) == (gravity is None):
        raise InputError("planet_mass/gravity", None, "exactly one of planet_mass or gravity")
    if gravity is not None:
        g0 = np.atleast_1d(to_si(gravity, "gravity", u.m / u.s**2, 0.0, None, low_inclusive=False))
    else:
        mp = np.atleast_1d(to_si(planet_mass, "planet_mass", u.earthMass, 0.0, None,
                                 low_inclusive=False))
        g0 = G * mp / np.broadcast_to(rp, np.broadcast_shapes(rp.shape, mp.shape)) ** 2
    teq = (np.atleast_1d(to_si(equilibrium_temperature, "equilibrium_temperature", u.K, 0.0,
                               None, low_inclusive=False))
           if equilibrium_temperature is not None else np.array([np.nan]))
    a_m = (np.atleast_1d(to_si(semi_major_axis, "semi_major_axis", u.AU, 0.0, None,
                               low_inclusive=False))
           if semi_major_axis is not None else np.array([np.nan]))
    if refraction and semi_major_axis is None:
        raise InputError("semi_major_axis", None, "a distance (needed for refraction=True)")
    try:
        rp, rs, g0, teq, a_m = (np.array(v, dtype=np.float64) for v in
                                np.broadcast_arrays(rp, rs, g0, teq, a_m))
    except ValueError:
        raise InputError("planet arrays", "shapes " + ", ".join(
            str(np.shape(v)) for v in (rp, rs, g0, teq, a_m)), "arrays of one common length") from None
    if rp.ndim != 1:
        raise InputError("planet_radius", f"shape {rp.shape}", "a scalar or 1-D array")
    npl = rp.shape[0]
    if wavelength_edges is None:
        edges = wavelength_bin_edges(resolution)
    else:
        edges = to_si(wavelength_edges, "wavelength_edges", u.um, 0.0, None, low_inclusive=False)
        if edges.ndim != 1 or edges.size < 2 or np.any(np.diff(edges) <= 0):
            raise InputError("wavelength_edges", f"{edges.size} values",
                             "at least 2 strictly increasing wavelengths")
    if isinstance(n_g, bool) or not isinstance(n_g, (int, np.integer)) or not 1 <= n_g <= 64:
        raise InputError("n_g", n_g, "an integer in [1, 64]")
    n_layers = DEFAULT_N_LAYERS if n_layers is None else n_layers
    p_top = (DEFAULT_TOP_PRESSURE_PA if top_pressure is None else
             float(to_si(top_pressure, "top_pressure", u.Pa, 0.0, None, low_inclusive=False)))
    if planet_names is None:
        planet_names = [f"planet {i}" for i in range(npl)] if npl > 1 else ["planet"]
    planet_names = [str(n) for n in planet_names]
    if len(planet_names) != npl:
        raise InputError("planet_names", planet_names, f"{npl} names")
    needs_opacity = any(not s.featureless for s in scenarios)
    source = opacity_source if opacity_source is not None else (
        _default_opacity_source() if needs_opacity else None)

    if radius_calibration not in RADIUS_CALIBRATIONS:
        raise InputError("radius_calibration", radius_calibration, " or ".join(RADIUS_CALIBRATIONS))
    weights = _calibration_weights(calibration_weights, edges, npl, calibration_band)
    solve_kw = dict(source=source, edges=edges, rs=rs, teq=teq, a_m=a_m, solver=solver,
                    n_layers=n_layers, n_g=n_g, p_top=p_top, refraction=refraction,
                    pressure_broadening=pressure_broadening)

    datasets, contrib = [], []
    for sc in scenarios:
        solve_kw["memo"] = {}             # opacity shared by this scenario's solves
        if radius_calibration == "observed-depth" and not sc.featureless:
            r0, g0c, depth, ex, delta = _calibrated(sc, rp, g0, weights, exclude_species,
                                                    solve_kw)
        else:
            r0, g0c, delta = rp, g0, np.zeros(npl)
            depth, ex = _solve_depth(sc, rp=rp, g0=g0, exclude=exclude_species, **solve_kw)
        _warn_top(sc, ex, p_top)
        h = scale_height(ex["temperature"], ex["mu"], g0)
        _warn_extended(sc, h, rp, planet_names)
        ds = _dataset(sc, depth, rp, rs, h, ex, edges, planet_names, r0 + delta)
        if contributions:
            import xarray as xr
            wanted = None if contributions is True else set(contributions)
            absorbers = ([] if sc.featureless else
                         [k for k in sc.mixing_ratios if _absorbs(source, k)
                          and (wanted is None or k in wanted)])
            rows = []
            for sp in absorbers:
                d_x, _ = _solve_depth(sc, rp=r0, g0=g0c, exclude=sp, **solve_kw)
                rows.append(_shift_radius(d_x, rs, delta) * 1e6)
            data = (np.stack(rows, axis=1) if rows else np.zeros((npl, 0, edges.size - 1)))
            contrib.append(xr.DataArray(
                data, dims=("planet", "species", "wavelength"),
                coords={"species": absorbers},
                attrs={"units": "ppm", "long_name": "transit depth with this species' opacity "
                       "removed (mean molecular weight unchanged)"}))
        datasets.append(ds)
    attrs = {"solver": solver, "n_g": int(n_g), "top_pressure_Pa": p_top,
             "refraction_limit": int(bool(refraction)), "radius_calibration": radius_calibration,
             "calibration_band_um": ("bins" if calibration_band is None else
                                     f"{float(calibration_band[0]):g}-{float(calibration_band[1]):g}"),
             "method": ("analytic: Heng & Kitzmann 2017 (MNRAS 470, 2972) at its own reference "
                        "level; layers: chord integration through spherical shells, "
                        "A = pi r_floor^2 + 2 pi int (1 - exp(-tau)) b db; depths averaged "
                        "over k-distribution g-points")}
    if solver == "layers":
        attrs["n_layers"] = int(n_layers)
    if not many:
        out = datasets[0]
        out = out.assign_coords(scenario=scenarios[0].name)
    else:
        import xarray as xr
        out = xr.concat(datasets, dim="scenario", join="outer", coords="different",
                        compat="equals", combine_attrs="override")
        out = out.assign_coords(scenario=("scenario", names))
        out.attrs = {}
        out["scenario_description"] = ("scenario", [s.description for s in scenarios])
    if contrib:
        import xarray as xr
        if many:
            da = xr.concat(contrib, dim="scenario", join="outer", fill_value=np.nan,
                           coords="minimal", compat="override")
            da = da.assign_coords(scenario=("scenario", names))
        else:
            da = contrib[0]
        da.attrs = dict(contrib[0].attrs)
        out["depth_without_species_ppm"] = da
    out.attrs.update(attrs)
    return out


def _absorbs(source, species):
    return (species in source.OPACITY_SPECIES or species in source.RAYLEIGH_SPECIES
            or any(species in _CIA_SPECIES.get(p, ()) for p in source.CIA_PAIRS))


#: Above this scale height, as a fraction of the planet radius, a hydrostatic
#: spectrum is only indicative (R/H < 10; common practice, no source).
EXTENDED_SCALE_HEIGHT_RATIO = 0.1


def _warn_extended(sc, h, rp, names):
    """Note planets on which the scenario is too extended for a hydrostatic spectrum."""
    ratio = np.asarray(h) / np.asarray(rp)
    bad = (ratio > EXTENDED_SCALE_HEIGHT_RATIO) & ~sc.featureless
    if np.any(bad):
        import warnings
        from ..errors import ExtremeValueWarning
        j = int(np.flatnonzero(bad)[0])
        warnings.warn(f"scenario {sc.name!r} on {names[j]}: the scale height is "
                      f"{ratio[j]:.2f} of the planet radius (> {EXTENDED_SCALE_HEIGHT_RATIO:g}); "
                      "the atmosphere is not a bound hydrostatic one and its spectrum is only "
                      "indicative", ExtremeValueWarning, stacklevel=3)


def _warn_top(sc, ex, p_top):
    lim = ex.get("top_limited")
    if lim is not None and np.any(lim):
        import warnings
        from ..errors import SnrkitWarning
        warnings.warn(f"scenario {sc.name!r}: the atmosphere is still optically thick near the "
                      f"top pressure {p_top:.3g} Pa for {int(np.sum(lim))} planet(s); the "
                      "strongest bins are capped there (lower top_pressure)",
                      SnrkitWarning, stacklevel=3)


def _dataset(sc, depth, rp, rs, h, ex, edges, planet_names, r0):
    import xarray as xr
    centres = np.sqrt(edges[1:] * edges[:-1]) * 1e6
    r_eff = rs[:, None] * np.sqrt(depth)
    ds = xr.Dataset(
        {
            "transit_depth_ppm": (("planet", "wavelength"), depth * 1e6,
                                  {"units": "ppm", "long_name": "transit depth (Rp,eff/Rs)^2, "
                                   "bin average over the k-distribution"}),
            "effective_height_km": (("planet", "wavelength"), (r_eff - rp[:, None]) / 1e3,
                                    {"units": "km", "long_name": "effective radius minus the "
                                     "observed (white-light) planet radius"}),
            "scale_height_km": ("planet", h / 1e3, {"units": "km", "long_name":
                                "pressure scale height k T / (mu m_u g) at the reference radius"}),
            "annulus_ppm_per_scale_height": ("planet", 2.0 * h * rp / rs**2 * 1e6,
                                             {"units": "ppm", "long_name": "2 H Rp / Rs^2"}),
            "observed_depth_ppm": ("planet", (rp / rs) ** 2 * 1e6,
                                   {"units": "ppm", "long_name": "observed transit depth "
                                    "(Rp/Rs)^2"}),
            "reference_radius_km": ("planet", r0 / 1e3, {"units": "km", "long_name":
                                    "radius at the scenario's reference pressure"}),
            "reference_depth_ppm": ("planet", (r0 / rs) ** 2 * 1e6,
                                    {"units": "ppm", "long_name": "(R0/Rs)^2 with R0 the radius "
                                     "at the reference pressure"}),
            "temperature_K": ("planet", ex["temperature"], {"units": "K"}),
            "mean_molecular_weight": ("planet", ex["mu"], {"units": "g/mol"}),
            "floor_pressure_bar": ("planet", ex["floor"] / 1e5, {
                "units": "bar", "long_name": "opaque floor: surface, cloud top, deep "
                "atmosphere or refraction limit"}),
        },
        coords={
            "planet": planet_names,
            "wavelength": ("wavelength", centres, {"units": "um", "long_name":
                           "bin centre (geometric mean of the edges)"}),
            "wavelength_lower": ("wavelength", edges[:-1] * 1e6, {"units": "um"}),
            "wavelength_upper": ("wavelength", edges[1:] * 1e6, {"units": "um"}),
        },
        attrs={"scenario": sc.name, "scenario_description": sc.description},
    )
    if np.any(ex.get("layered_fallback", False)):
        ds.attrs["solver_used"] = ("layers (the scenario has a vertical composition or a tabulated "
                                   "temperature profile, which the isothermal, well-mixed "
                                   "analytic solver cannot represent)")
    if np.any(np.isfinite(ex["refraction_floor"])):
        ds["refraction_floor_bar"] = ("planet", ex["refraction_floor"] / 1e5, {"units": "bar"})
    return ds


# ---------------------------------------------------------------------------
# Band amplitude in scale heights (the quick estimate's N_H)
# ---------------------------------------------------------------------------

#: Invented generic reference planets on which preset band amplitudes are computed.
FEATURE_REFERENCE_PLANETS = {
    "hot-giant": dict(planet_radius="1.2 jupiterRad", planet_mass="0.8 jupiterMass",
                      stellar_radius="1.0 solRad", equilibrium_temperature="1300 K"),
    "warm-sub-neptune": dict(planet_radius="2.6 earthRad", planet_mass="7.5 earthMass",
                             stellar_radius="0.72 solRad", equilibrium_temperature="600 K"),
    "temperate-rocky": dict(planet_radius="1.0 earthRad", planet_mass="1.0 earthMass",
                            stellar_radius="1.0 solRad", equilibrium_temperature="280 K"),
}
#: Wavelength range [um] and resolving power of the band-amplitude definition
#: (a low-resolution near-infrared spectrum; common practice, no source).
FEATURE_WAVELENGTH_RANGE_UM = (0.6, 5.0)
FEATURE_RESOLUTION = 100


def band_amplitude_scale_heights(spectrum):
    """Peak-to-trough effective height of each spectrum in scale heights.

    Parameters
    ----------
    spectrum : xarray.Dataset
        Output of :func:`transmission_spectrum`.

    Returns
    -------
    xarray.DataArray
        ``(max - min of effective_height) / scale_height`` over ``wavelength``.
    """
    eh = spectrum["effective_height_km"]
    amp = (eh.max("wavelength") - eh.min("wavelength")) / spectrum["scale_height_km"]
    amp.attrs = {"units": "scale heights", "long_name": "band amplitude (peak to trough)"}
    return amp


def feature_scale_heights(scenario, reference="hot-giant", opacity_source=None):
    """Band amplitude of a scenario in scale heights on a reference planet.

    The analytic spectrum of the scenario on one of
    :data:`FEATURE_REFERENCE_PLANETS` at R = :data:`FEATURE_RESOLUTION`
    over :data:`FEATURE_WAVELENGTH_RANGE_UM`; the peak-to-trough effective
    height divided by the scale height.  This is the N_H of the quick
    estimate ``N_H * 2 H Rp / Rs**2`` (so the two agree by construction on the
    reference planet).

    Parameters
    ----------
    scenario : str, dict or Scenario
    reference : str
        Key of :data:`FEATURE_REFERENCE_PLANETS`.
    opacity_source : object, optional
        See :func:`transmission_spectrum`.

    Returns
    -------
    float
    """
    if reference not in FEATURE_REFERENCE_PLANETS:
        raise InputError("reference", reference, ", ".join(FEATURE_REFERENCE_PLANETS))
    lo, hi = FEATURE_WAVELENGTH_RANGE_UM
    edges = wavelength_bin_edges(FEATURE_RESOLUTION, lo * 1e-6, hi * 1e-6) * 1e6
    ds = transmission_spectrum(scenario, wavelength_edges=edges, opacity_source=opacity_source,
                               **FEATURE_REFERENCE_PLANETS[reference])
    return float(band_amplitude_scale_heights(ds).values[0])
