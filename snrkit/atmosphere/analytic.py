"""The analytic reference solver: the isothermal transit radius root by root.

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
"""

import math

import numpy as np

from ..constants import K_B

__all__ = ["EULER_GAMMA", "heng_kitzmann_radius", "analytic_radius"]


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
    from scipy.special import exp1
    el, shape = _elements(line_sigma, continuum_sigma, cia_coefficient, temperature_K, mu_g_mol,
                          reference_radius_m, reference_pressure_Pa, reference_gravity_m_s2,
                          floor_pressure_Pa, top_pressure_Pa)
    n_el = el["bb"].size
    all_sel = slice(None)
    uf, ut = el["uf"], el["ut"]
    ln_tf, dfu = _f_and_slope(el, uf, all_sel)
    ln_tt, _ = _f_and_slope(el, ut, all_sel)
    saturated = ln_tt >= -EULER_GAMMA

    # Exact plane-parallel result for one exponential absorber above an opaque floor:
    # R = r* + H E1(tau_floor), r* the radius where tau = exp(-gamma) (below the floor
    # if tau_floor < exp(-gamma)).  For a nearly transparent floor (tau_f < _TAU_THIN)
    # the equivalent R = r_floor + H [E1 + gamma + ln](tau_floor) avoids placing r*
    # far below the floor.
    out = np.empty(n_el)
    thin = (ln_tf < math.log(_TAU_THIN)) & ~saturated
    it = np.flatnonzero(thin)
    heff = 1.0 / (uf[it] ** 2 * dfu[it])             # local absorber scale height [m]
    out[it] = 1.0 / uf[it] + heff * _f_plane(np.exp(ln_tf[it]))
    ithick = np.flatnonzero(~thin & ~saturated)
    ur = _newton_roots(el, ithick, max_iter)
    corr, h_a = _h_over_r_terms(el, ur, ithick)
    near = ln_tf[ithick] < math.log(40.0)           # E1(40) < 1e-19
    corr[near] += h_a[near] * exp1(np.exp(ln_tf[ithick][near]))
    out[ithick] = 1.0 / ur + corr
    out[saturated] = 1.0 / ut[saturated]
    return out.reshape(shape), saturated.reshape(shape)


def _elements(line_sigma, continuum_sigma, cia_coefficient, temperature_K, mu_g_mol,
              reference_radius_m, reference_pressure_Pa, reference_gravity_m_s2,
              floor_pressure_Pa, top_pressure_Pa):
    """Per-element constants of :func:`analytic_radius` (elements: planet x bin x g) and the shape.

    Work in u = 1/r: for the isothermal atmosphere with g = GM/r^2, ln n(u) =
    lnn0 + B u and H(u) = 1/(B u^2), so the Laplace chord depth tau = sigma n
    sqrt(2 pi r H) has ln tau = const + B u - 1.5 ln u: nearly linear in u,
    convex, increasing, so Newton converges in a few steps (monotonically
    after at most one overshoot).
    """
    from ..constants import M_U
    ls = np.asarray(line_sigma, dtype=np.float64)
    npl, nw, ng = ls.shape
    cs = np.broadcast_to(np.asarray(continuum_sigma, dtype=np.float64), (npl, nw))
    cc = np.broadcast_to(np.asarray(cia_coefficient, dtype=np.float64), (npl, nw))
    T, mu, r0, p0, g0, pf, pt = (np.broadcast_to(np.asarray(v, dtype=np.float64), (npl,)) for v in (
        temperature_K, mu_g_mol, reference_radius_m, reference_pressure_Pa,
        reference_gravity_m_s2, floor_pressure_Pa, top_pressure_Pa))
    h0 = K_B * T / (mu * M_U * g0)
    big_b = r0 * r0 / h0                 # lambda0 R0 = G M mu m_u / (k T)  [m]
    lnn0 = np.log(p0 / (K_B * T)) - r0 / h0

    def u_at(p):
        with np.errstate(divide="ignore", invalid="ignore"):
            return (1.0 + np.log(p / p0) * h0 / r0) / r0

    shape = (npl, nw, ng)
    ip = np.broadcast_to(np.arange(npl)[:, None, None], shape).ravel()
    bb = big_b[ip]
    # Three absorbers, each with extinction ~ n**e: lines (e = 1 + slope), the smooth
    # continuum (e = 1) and CIA (e = 2).  Chord depth of each: sigma n sqrt(2 pi r H / e).
    # (the production kernel, snrkit.atmosphere.analytic_kernel, gives the lines a
    # pressure-dependent exponent; here they have e = 1)
    e_line = np.ones(ls.size)
    base = 0.5 * math.log(2.0 * np.pi) - 0.5 * np.log(bb)
    el = {"bb": bb, "e_line": e_line,
          "c1": _log_or_minf(ls).ravel() + e_line * lnn0[ip] + base - 0.5 * np.log(e_line),
          "c2": np.broadcast_to(_log_or_minf(cs)[:, :, None], shape).ravel() + lnn0[ip] + base,
          "c3": (np.broadcast_to(_log_or_minf(cc)[:, :, None], shape).ravel() + 2.0 * lnn0[ip]
                 + base - 0.5 * math.log(2.0)),
          "uf": u_at(pf)[ip],
          # top of the model; where the isothermal gas would be unbound below it, the top
          # is put where r/H(r) = 3 (the Laplace chord formula needs r >> H)
          "ut": np.maximum(u_at(pt)[ip], 3.0 / bb)}
    return el, shape


def _terms(el, u, sel):
    """ln tau(u), the shares (w1, w2, w3) of lines, continuum and CIA, and e_line."""
    b, e1 = el["bb"][sel] * u, el["e_line"][sel]
    l1, l2, l3 = el["c1"][sel] + e1 * b, el["c2"][sel] + b, el["c3"][sel] + 2.0 * b
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


def _f_and_slope(el, u, sel):
    """ln tau(u) and d ln tau / du for the elements ``sel``."""
    lt, (w1, w2, w3), e1 = _terms(el, u, sel)
    return lt, el["bb"][sel] * (w1 * e1 + w2 + 2.0 * w3) - 1.5 / u


def _newton_roots(el, ithick, max_iter):
    """u of ln tau(u) + gamma = 0 for the elements ``ithick``, by Newton from the floor.

    ln tau is convex and increasing in u: monotone convergence after at most
    one overshoot; converged where the step is below 1e-7 H.
    """
    u_root = np.ones(ithick.size)
    sel = np.arange(ithick.size)
    u = el["uf"][ithick].copy()
    for _ in range(int(max_iter)):
        if sel.size == 0:
            break
        lt, d = _f_and_slope(el, u, ithick[sel])
        step = (lt + EULER_GAMMA) / d
        u = u - step
        done = np.abs(step * el["bb"][ithick[sel]]) < 1e-7       # |dr| < 1e-7 H
        u_root[sel[done]] = u[done]
        sel, u = sel[~done], u[~done]
    u_root[sel] = u                                  # not converged (not expected)
    return u_root


def _h_over_r_terms(el, ur, ithick):
    """First-order corrections in H/R at the roots ``ur`` of the elements ``ithick`` [m].

    Returns the corrections and the absorber scale height at each root [m].

    Derived for snrkit by carrying the expansions one order further; they move
    R by ~3.6 H^2/R for a linear absorber:

    * chord integral: exact/Laplace = 1 + 9/(8 e beta) for an absorber ~ n^e,
      beta = r/H (9/(8 beta) for e = 1, 9/(16 beta) for n^2 absorbers);
    * area: R_eff^2 = r*^2 + (pi^2/6) H_a^2 (variance of the Gumbel-shaped limb
      profile 1 - exp(-tau));
    * curvature of ln tau(r): + (pi^2/6) c H_a^3 with c = (1/2) d2 ln tau/dr2.
    """
    b_ = el["bb"][ithick]
    _, (w1, w2, w3), e1 = _terms(el, ur, ithick)
    mean_e = w1 * e1 + w2 + 2.0 * w3
    d1 = b_ * mean_e - 1.5 / ur                       # d ln tau / du
    d2 = b_ * b_ * (w1 * e1 * e1 + w2 + 4.0 * w3 - mean_e ** 2) + 1.5 / ur**2   # d2 ln tau / du2
    h_a = 1.0 / (ur**2 * d1)                         # absorber scale height at the root [m]
    curv = 0.5 * (ur**4 * d2 + 2.0 * ur**3 * d1)     # (1/2) d2 ln tau / dr2 [m-2]
    beta = b_ * ur
    dln_tau = np.log1p(9.0 / (8.0 * beta) * (w1 / e1 + w2 + 0.5 * w3))
    return (h_a * dln_tau + (np.pi**2 / 12.0) * h_a**2 * ur
            + (np.pi**2 / 6.0) * curv * h_a**3), h_a
