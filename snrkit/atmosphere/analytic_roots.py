"""The analytic solver's per-element root: safeguarded Newton steps on ln tau(u), H/R terms.

Each element (planet, bin, g-point) carries its planet's constants and the
line cross-section at a few pressure nodes, uniform in ln P; ln k is linear
in ln P between nodes (a local power law ``k ~ P**s``, extrapolated with the
end segments' clipped slopes).  The root of the chord optical depth,
``tau(b) = exp(-gamma)`` (Heng & Kitzmann 2017, MNRAS 470, 2972; Lecavelier
des Etangs et al. 2008, A&A 481, L83), is found by safeguarded Newton steps
on ``ln tau(u) + gamma`` with ``u = 1/r``
(:func:`~snrkit.atmosphere.analytic_tau.ln_tau`), re-reading the line shape
at the pressure of each iterate.  The chord depth of each absorber
``~ n**e`` carries ``sqrt(2 pi r H / e)``, with ``e = 1 + s`` for the lines,
1 for the smooth continuum and 2 for collision-induced absorption.  The H/R
terms take the shares of the last Newton evaluation, carried to the root
(:func:`~snrkit.atmosphere.analytic_tau.shares_near`).  The floor term
``H E1(tau_floor)`` and the first-order terms in ``H/R`` are those of
:func:`~snrkit.atmosphere.analytic.analytic_radius`.  The driver over chunks
and threads is :func:`snrkit.atmosphere.analytic_kernel.root_radius`.
"""

import math

import numpy as np

from ..constants import K_B, M_U
# the reference solver's constants and floor function (the solvers import the kernel
# only inside functions, so there is no import cycle)
from .analytic import EULER_GAMMA, _TAU_THIN, _f_plane
from .analytic_tau import line_shape, ln_tau, shares_near

__all__ = ["Planets", "solve_chunk", "shifted_chunk", "LN_ABSENT"]

#: ln of an absent absorber's opacity (finite, so that exp() gives exactly 0).
LN_ABSENT = -1e4
#: Below this chord optical depth at the floor the radius comes from the floor
#: (see snrkit.atmosphere.analytic._TAU_THIN).
_LN_TAU_THIN = math.log(_TAU_THIN)
#: Newton steps at most (convergence: a step under 1e-4 H; see _newton for the accuracy).
_MAX_STEPS = 40


class Planets:
    """Per-planet constants of the isothermal atmosphere with g ~ 1/r**2."""

    def __init__(self, T, mu, r0, p0, g0, pf, pt):
        h0 = K_B * T / (mu * M_U * g0)
        self.B = r0 * r0 / h0                          # r**2 / H(r)  [m]
        self.lnn0 = np.log(p0 / (K_B * T)) - r0 / h0   # ln n = lnn0 + B u
        self.lnkT = np.log(K_B * T)                    # ln P = ln n + ln kT
        self.base = 0.5 * math.log(2.0 * math.pi) - 0.5 * np.log(self.B)
        with np.errstate(divide="ignore", invalid="ignore"):
            self.uf = (1.0 + np.log(pf / p0) * h0 / r0) / r0
            ut = (1.0 + np.log(pt / p0) * h0 / r0) / r0
        # where the isothermal gas would be unbound below the top, the top is put
        # where r/H(r) = 3 (the Laplace chord formula needs r >> H)
        self.ut = np.maximum(ut, 3.0 / self.B)
        self.capped = ~(ut >= 3.0 / self.B)
        self.lnut, self.inv_ut = np.log(self.ut), 1.0 / self.ut   # (the -1.5 ln u term)
        self.r0 = r0
        self.lnpf = np.log(pf)


def _take(el, idx):
    out = {k: v[idx] for k, v in el.items() if k not in ("lnk", "e", "row")}
    out["lnk"], out["e"], out["row"] = el["lnk"], el["e"], el["row"][idx]
    return out


def _dominant_start(u, el, lk, e1):
    """A start just below the root: the highest of the single-absorber roots.

    Each absorber alone, with its extinction ~ n**e extrapolated from u, would
    reach ln tau = -gamma at ``u - (l_i + gamma) / (e_i B)``; together they
    reach it higher (smaller u), by at most ln 3 / B.  Starting at the highest
    single root (F >= 0 there, to first order) the Newton steps on the convex
    ln tau(u) then converge monotonically and quadratically.  ``lk`` and
    ``e1`` are the line shape at u (the floor's evaluation).
    """
    B = el["B"]
    lnn = el["lnn0"] + B * u
    c = EULER_GAMMA - 1.5 * np.log(u)
    # (float64 here, float32 in ln_tau: a start, whose rounding the Newton steps remove)
    u1 = u - (lk + lnn + el["base"] - 0.5 * np.log(e1) + c) / (e1 * B)
    u2 = u - (el["a2"] + B * u + c) / B
    u3 = u - (el["a3"] + 2.0 * B * u + c) / (2.0 * B)
    start = np.minimum(np.minimum(u1, u2), u3)
    return np.clip(start, el["ut"], np.maximum(u, el["ut"]))


def _start_from_floor(el, x0, dx, n_p):
    """:func:`_dominant_start` from the floor, evaluating the line shape there."""
    uf = el["uf"]
    pos = (el["lnn0"] + el["B"] * uf + el["lnkT"] - x0) * (1.0 / dx)
    lk, e1, _, _ = line_shape(pos, el, dx, n_p)
    return _dominant_start(uf, el, lk, e1)


def _newton(u, el, x0, dx, n_p):
    """Safeguarded Newton on ln tau(u) + gamma = 0: roots, slopes and shares there.

    Bracketed: a step that leaves the interval known to hold the root is
    replaced by the false-position point of the bracket.  The shares and line
    exponent at the root, for the H/R terms, are carried from the last
    evaluation (:func:`~snrkit.atmosphere.analytic_tau.shares_near`).
    """
    n = u.size
    u_root = u.copy()
    d_root = np.ones(n)
    shares = [np.empty(n) for _ in range(4)]
    lo, f_lo = el["ut"].copy(), np.full(n, -1.0)
    hi, f_hi = np.full(n, np.inf), np.full(n, np.nan)
    act = np.arange(n)
    cur = el
    live = np.ones(n, dtype=bool)
    for it in range(_MAX_STEPS):
        ev = ln_tau(u, cur, x0, dx, n_p, exact_slope=True)
        f, d = ev.f, ev.d
        below = f < 0
        lo, f_lo = np.where(below, np.maximum(lo, u), lo), np.where(below, f, f_lo)
        hi, f_hi = np.where(below, hi, np.minimum(hi, u)), np.where(below, f_hi, f)
        step = f / d
        new = u - step
        # a Newton step under 1e-4 H: the updated root is good to ~1e-8 H (quadratic) in
        # this ln tau, whose float32 terms leave it ~1e-7 H from the float64 one
        # (a few 1e-5 H where tau barely grows with depth; see analytic_tau.ln_tau)
        done = live & (np.abs(step * cur["B"]) < 1e-4)
        bad = (~((new > lo) & (new < hi)) | ~np.isfinite(new)) & ~done
        if np.any(bad):
            fp = lo - f_lo * (hi - lo) / (f_hi - f_lo)          # false position
            ok_fp = np.isfinite(hi) & np.isfinite(fp) & (fp > lo) & (fp < hi)
            new = np.where(bad, np.where(ok_fp, fp, np.where(np.isfinite(hi), 0.5 * (lo + hi),
                                                             u + 1.0 / cur["B"])), new)
        if np.any(done):
            idx = np.flatnonzero(done)
            u_root[act[idx]] = u[idx] - step[idx]
            d_root[act[idx]] = d[idx]
            _store_shares(shares, act[idx], ev.take(idx), cur["B"][idx], -step[idx])
        live &= ~done
        u_eval, u = u, new
        if not live.any():
            return u_root, d_root, shares
        if it < _MAX_STEPS - 1 and live.sum() * 2 < live.size:   # compact the work arrays
            act, u, lo, hi, f_lo, f_hi = (v[live] for v in (act, u, lo, hi, f_lo, f_hi))
            cur = _take(cur, live)
            live = np.ones(act.size, dtype=bool)
    # not converged (not expected): the last iterate, with the shares of the last
    # evaluation carried to it (the arrays are not compacted after the last one)
    idx = np.flatnonzero(live)
    u_root[act[idx]] = u[idx]
    d_root[act[idx]] = d[idx]
    _store_shares(shares, act[idx], ev.take(idx), cur["B"][idx], u[idx] - u_eval[idx])
    return u_root, d_root, shares


def _store_shares(shares, where, ev, B, delta):
    """Write the shares of ``ev`` carried by ``delta`` into ``shares`` at elements ``where``."""
    (w1, w2, w3), e1 = shares_near(ev, B, delta)
    for arr, v in zip(shares, (w1, w2, w3, e1)):
        arr[where] = v


def _corrections(ur, shares, B, ln_tf):
    """First-order H/R terms and the floor term at the root (see analytic_radius).

    ``shares`` are (w1, w2, w3, e1) at the root (:func:`_newton`).
    """
    from scipy.special import exp1
    w1, w2, w3, e1 = shares
    mean_e = w1 * e1 + w2 + 2.0 * w3
    d1 = B * mean_e - 1.5 / ur
    # (products, not ** 3 or ** 4: numpy's power for exponents other than 2 costs 25 ns)
    u2 = ur * ur
    d2 = B * B * (w1 * e1 * e1 + w2 + 4.0 * w3 - mean_e * mean_e) + 1.5 / u2
    h_a = 1.0 / (u2 * d1)
    curv = 0.5 * u2 * (u2 * d2 + 2.0 * ur * d1)
    beta = B * ur
    h_a2 = h_a * h_a
    corr = (h_a * np.log1p(9.0 / (8.0 * beta) * (w1 / e1 + w2 + 0.5 * w3))
            + (math.pi ** 2 / 12.0) * h_a2 * ur + (math.pi ** 2 / 6.0) * curv * h_a2 * h_a)
    near = ln_tf < math.log(40.0)                      # E1(40) < 1e-19
    if np.any(near):
        corr[near] += h_a[near] * exp1(np.exp(ln_tf[near]))
    return corr


def _thin_radius(el, it, ln_tf, dfu):
    """Radius where the floor is nearly transparent: r_floor + H [E1 + gamma + ln](tau_f)."""
    uf = el["uf"][it]
    heff = 1.0 / (uf ** 2 * dfu[it])
    return 1.0 / uf + heff * _f_plane(np.exp(ln_tf[it]))


def solve_chunk(el, x0, dx, n_p, u_start):
    """Radii, top flags and the solve's state (for a shifted re-solve) of one chunk."""
    at_floor = ln_tau(el["uf"], el, x0, dx, n_p)
    ln_tf, dfu = at_floor.f - EULER_GAMMA, at_floor.d
    f_top = ln_tau(el["ut"], el, x0, dx, n_p).f
    saturated = f_top >= 0.0
    thin = (ln_tf < _LN_TAU_THIN) & ~saturated
    out = np.empty(el["B"].size)
    it = np.flatnonzero(thin)
    if it.size:
        out[it] = _thin_radius(el, it, ln_tf, dfu)
    state = {"u": np.full(out.size, np.nan), "d": np.full(out.size, np.nan), "ln_tf": ln_tf,
             "dfu": dfu, "f_top": f_top}
    ik = np.flatnonzero(~thin & ~saturated)
    if ik.size:
        sub = _take(el, ik)
        u0 = sub["uf"]
        if u_start is not None:
            us = u_start[ik]
            u0 = np.where(np.isfinite(us) & (us > 0), np.clip(us, sub["ut"], sub["uf"]), u0)
        else:
            u0 = _dominant_start(u0, sub, at_floor.lk[ik], at_floor.e1[ik])
        ur, dr, shares = _newton(u0, sub, x0, dx, n_p)
        state["u"][ik], state["d"][ik] = ur, dr
        out[ik] = 1.0 / ur + _corrections(ur, shares, sub["B"], ln_tf[ik])
    out[saturated] = 1.0 / el["ut"][saturated]
    return out, saturated, state


def shifted_chunk(el, prev, du, x0, dx, n_p):
    """Re-solve after the reference radius moved with G M fixed (the calibration's second solve).

    With g0 R0**2 fixed, B = R0**2 / H0 does not change and every absorber's
    ln n(u) is translated by du = 1/R0' - 1/R0, so the new ln tau is the old
    one at u - du plus 1.5 ln((u - du)/u) -- exactly.  The floor and top values
    follow without new evaluations (the top is evaluated again only where it
    is set by r/H = 3, which does not translate), each old root gives the new
    one in two Newton steps (the first from the stored slope, without a new
    evaluation; the shift of the -1.5 ln u term is ~1e-2 H), and the H/R terms
    take the shares of the second step's evaluation, carried to the new root.
    """
    uf, ut = el["uf"], el["ut"]
    ln_tf = prev["ln_tf"] - 1.5 * np.log(uf / (uf - du))
    dfu = prev["dfu"] + 1.5 / (uf - du) - 1.5 / uf
    f_top = prev["f_top"] - 1.5 * np.log(ut / (ut - du))
    capped = el["capped"] | prev["capped"]
    if np.any(capped):
        ic = np.flatnonzero(capped)
        f_top[ic] = ln_tau(ut[ic], _take(el, ic), x0, dx, n_p).f
    saturated = f_top >= 0.0
    thin = (ln_tf < _LN_TAU_THIN) & ~saturated
    out = np.empty(uf.size)
    it = np.flatnonzero(thin)
    if it.size:
        out[it] = _thin_radius(el, it, ln_tf, dfu)
    state = {"u": np.full(out.size, np.nan), "d": np.full(out.size, np.nan), "ln_tf": ln_tf,
             "dfu": dfu, "f_top": f_top}
    thick = ~thin & ~saturated
    easy = np.flatnonzero(thick & np.isfinite(prev["u"]))
    if easy.size:
        u_old = prev["u"][easy]
        u_s = u_old + du[easy]
        slope = prev["d"][easy] + 1.5 / u_old - 1.5 / u_s
        ur = u_s - 1.5 * np.log(u_old / u_s) / slope
        sub = _take(el, easy)
        ev = ln_tau(ur, sub, x0, dx, n_p, exact_slope=True)
        slope = ev.d
        step = ev.f / slope
        ur = ur - step                                 # a second step: as good as _newton's
        (w1, w2, w3), e1 = shares_near(ev, sub["B"], -step)
        shares = [w1, w2, w3, e1]                      # (float64: float32 shares x float64)
        slow = np.flatnonzero(np.abs(step * sub["B"]) > 1e-3)
        if slow.size:                                  # not yet quadratic (near the r/H = 3 cap)
            ur[slow], slope[slow], sh = _newton(ur[slow], _take(sub, slow), x0, dx, n_p)
            for arr, v in zip(shares, sh):
                arr[slow] = v
        state["u"][easy], state["d"][easy] = ur, slope
        out[easy] = 1.0 / ur + _corrections(ur, shares, sub["B"], ln_tf[easy])
    hard = np.flatnonzero(thick & ~np.isfinite(prev["u"]))
    if hard.size:                                     # newly thick: a full solve
        sub = _take(el, hard)
        ur, dr, shares = _newton(_start_from_floor(sub, x0, dx, n_p), sub, x0, dx, n_p)
        state["u"][hard], state["d"][hard] = ur, dr
        out[hard] = 1.0 / ur + _corrections(ur, shares, sub["B"], ln_tf[hard])
    out[saturated] = 1.0 / ut[saturated]
    return out, saturated, state
