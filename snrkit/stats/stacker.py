"""The stacker: significance against the number of transits, probabilities, the limiting term.

The transits needed come from :mod:`snrkit.stats.search` (closed form where
lambda(N) = N lambda(1), else a few vectorized secant steps on 1/lambda against
1/N with an exact integer check); here the significance curves, detection
probabilities and the limiting term (:func:`stack_transits`), and
:func:`stack_needed`, the part the readout choice compares.
"""


import numpy as np

from ..errors import InputError
from .probability import (check_probability, check_sigma, detection_probability, expected_statistic,
                          noncentrality_for_probability, significance_at_probability,
                          significance_from_delta_chi2)
from .likelihood import nested_delta_chi2
from .search import _asymptote, _linear_transits_needed, _search_transits

__all__ = ["LIMITING_TERMS", "default_curve_transits", "stack_transits", "stack_needed"]


#: Words used in ``limiting_term``.
LIMITING_TERMS = ("white noise", "noise floor", "stellar contamination", "transit limit",
                  "no signal")


def default_curve_transits(n_max, points=40):
    """About ``points`` log-spaced integers from 1 to n_max (for curves and plots)."""
    return np.unique(np.round(np.geomspace(1, max(int(n_max), 1), points)).astype(np.int64))


def _per_dof(dof_arr, fn):
    """Evaluate ``fn(dof)`` once per distinct dof and scatter to the batch shape."""
    out = np.empty(dof_arr.shape)
    for d in np.unique(dof_arr):
        out[dof_arr == d] = fn(float(d))
    return out


#: Numbers per chunk of rows when the stacker evaluates lambda(N) (a few MB per
#: temporary array; size chosen by measurement, common practice, no source).
_CHUNK_VALUES = 1 << 18


# size: a class of six short methods (the longest 20 lines) sharing the stacker's arrays
class _Stack:
    """The statistic of one stacking problem as a function of N, over the batch.

    Holds the arrays of :func:`stack_transits` once; ``full(n)`` evaluates the
    whole batch (as the curves do), ``at(idx, n)`` only the flat elements
    ``idx`` (as the search does, so that converged elements cost nothing),
    both in chunks of rows.
    ``evaluations`` counts element evaluations of :func:`nested_delta_chi2`.
    """

    def __init__(self, d, nul, s2, fl, floor_averages, kw, n_max):
        self.d, self.nul, self.s2, self.fl, self.kw = d, nul, s2, fl, kw
        self.f2 = fl ** 2
        self.floor_averages = floor_averages
        self.batch = d.shape[:-1]
        self.size = int(np.prod(self.batch, dtype=np.int64))
        self.n_max = n_max
        self.evaluations = 0
        self._flat = None

    def full(self, n):
        """lambda at ``n`` (batch shape) for every element."""
        n = np.broadcast_to(np.asarray(n, dtype=np.float64), self.batch).reshape(-1)
        return self.at(np.arange(self.size), n).reshape(self.batch)

    def _flatten(self):
        n_wl = self.d.shape[-1]

        def rows(a, extra=()):
            return None if a is None else np.broadcast_to(
                np.asarray(a, dtype=np.float64), self.d.shape + extra).reshape(
                    (self.size, n_wl) + extra)
        kw = dict(self.kw)
        for name in ("alt", "shape"):
            kw[name] = rows(kw[name])
        for name in ("null_templates", "alt_templates"):
            if kw[name] is not None:
                kw[name] = rows(kw[name], np.shape(kw[name])[-1:])
        self._flat = (rows(self.d), rows(self.nul), rows(self.s2), rows(self.f2), kw)

    def at(self, idx, n):
        """lambda at ``n`` for the flat batch elements ``idx``, in chunks of rows.

        Chunks of about :data:`_CHUNK_VALUES` numbers keep the temporaries of
        :func:`nested_delta_chi2` small (about twice as fast per element as
        one 40,000-row call on a 100-bin grid, measured for this change); each
        row's arithmetic is the same at any chunk size.
        """
        if self._flat is None:
            self._flatten()
        idx = np.asarray(idx, dtype=np.int64).reshape(-1)
        n = np.asarray(n, dtype=np.float64).reshape(-1)
        self.evaluations += idx.size
        k = sum(np.shape(self.kw[name])[-1] for name in ("null_templates", "alt_templates")
                if self.kw[name] is not None)
        rows = max(1, _CHUNK_VALUES // (max(self.d.shape[-1], 1) * (1 + k)))
        if idx.size <= rows:
            return self._at(idx, n)
        return np.concatenate([self._at(idx[i:i + rows], n[i:i + rows])
                               for i in range(0, idx.size, rows)])

    def _at(self, idx, n):
        d, nul, s2, f2, kw = self._flat
        n = n[:, None]
        s2, f2 = s2[idx], f2[idx]
        sig = np.sqrt((s2 + f2) / n) if self.floor_averages else np.sqrt(s2 / n + f2)
        sub = {k: (v[idx] if k in ("alt", "shape", "null_templates", "alt_templates")
                   and v is not None else v) for k, v in kw.items()}
        return np.reshape(nested_delta_chi2(d[idx], nul[idx], sig, **sub), (idx.size,))

    def needed(self, lam1, lam_inf, target):
        """(N needed, lambda at that N) by :func:`_search_transits` where lambda(1) > 0.

        ``lam_inf`` is lambda as N -> infinity (the secant's first far point).
        """
        one = np.reshape(lam1, -1)
        t = np.reshape(np.broadcast_to(target, self.batch), -1)
        pos = np.flatnonzero(one > 0)
        limit = np.reshape(np.broadcast_to(lam_inf, self.batch), -1)[pos]
        n_sub, lam_sub = _search_transits(lambda p, n: self.at(pos[p], n), t[pos], self.n_max,
                                          one[pos], limit)
        n_out = np.zeros(self.size, dtype=np.int64)
        lam_out = one.copy()
        n_out[pos], lam_out[pos] = n_sub, lam_sub
        return n_out.reshape(self.batch), lam_out.reshape(self.batch)


def _stack_setup(data, null, sigma1, floor, floor_averages, kw, n_max):
    """The :class:`_Stack`, lambda(1), lambda(inf), whether lambda(N) = N lambda(1), bins used."""
    d = np.asarray(data, dtype=np.float64)
    nul = np.broadcast_to(np.asarray(null, dtype=np.float64), d.shape)
    s2 = np.broadcast_to(np.asarray(sigma1, dtype=np.float64), d.shape) ** 2
    fl = np.broadcast_to(np.asarray(floor, dtype=np.float64), d.shape)
    stk = _Stack(d, nul, s2, fl, floor_averages, kw, n_max)
    lam1 = stk.full(np.ones(stk.batch))
    template_sigma = kw.get("template_sigma")
    has_prior = template_sigma is not None and np.any(np.isfinite(np.asarray(template_sigma, float)))
    no_floor = not np.any(stk.f2 > 0)
    linear = (no_floor or floor_averages) and not has_prior
    used = np.isfinite(s2)
    if no_floor or floor_averages:
        lam_inf = np.where(lam1 > 0, np.inf, 0.0)
    else:
        lam_inf = np.where(lam1 > 0, _asymptote(d, nul, fl, used, kw), 0.0)
    return stk, lam1, lam_inf, linear, used


def _needed(stk, lam1, lam_inf, linear, target):
    """Transits needed for ``target`` (0: not reached) and lambda there (None if not known).

    Closed form where lambda(N) = N lambda(1); otherwise the secant search.
    """
    if linear:
        return np.where(lam1 > 0, _linear_transits_needed(lam1, target, stk.n_max), 0), None
    return stk.needed(lam1, lam_inf, target)


def _check_stack_inputs(sigma, probabilities, n_max, templates, null_templates):
    sigma = check_sigma(sigma)
    probabilities = tuple(check_probability(p, "probability") for p in probabilities)
    if int(n_max) < 1:
        raise InputError("n_max", n_max, "an integer >= 1")
    if templates is not None and null_templates is not None:
        raise InputError("templates", "both templates and null_templates", "one of them")
    return sigma, probabilities, int(n_max), (templates if null_templates is None
                                              else null_templates)


# size: the docstring documents the stacker's options and outputs; the body is a list of steps
def stack_transits(data, null, sigma1, *, alt=None, shape=None, templates=None,
                   null_templates=None, alt_templates=None, template_sigma=None,
                   template_mean=None, null_scale=None, floor=0.0, floor_averages=False, dof=1,
                   sigma=5.0, probabilities=(0.5, 0.9), n_max=1000, n_curve=None):
    """Significance against the number of transits, and the transits needed.

    All spectra are depths on one wavelength grid, in one unit (ppm or
    dimensionless), with any leading batch axes (planet, scenario, ...).
    The statistic after N transits is :func:`nested_delta_chi2` with the
    noise of :func:`noise_per_bin`.  Where lambda(N) = N lambda(1) (no floor,
    or a floor that averages down, and no finite prior) N is in closed form;
    otherwise it comes from a few vectorized secant steps with an exact
    integer check (:func:`transits_needed`).

    Parameters
    ----------
    data : array_like, shape (..., n_wl)
        The noise-free ("Asimov") data: the spectrum assumed true, as observed.
    null : array_like, shape (..., n_wl)
        Fixed part of the model to reject (zeros for a flat line, the
        scenario without a species, another scenario).
    sigma1 : array_like, shape (..., n_wl)
        White noise of one transit per bin (NaN: bin unused).
    alt, shape :
        The alternative (see :func:`nested_delta_chi2`); default: it
        reproduces the data exactly.
    templates : array_like (..., n_wl, k), optional
        Same as ``null_templates`` (nuisance templates of the null).
    null_templates, alt_templates, template_sigma, template_mean, null_scale :
        Nuisance templates and their Gaussian priors, and the bounds of a
        free factor on the null (see :func:`nested_delta_chi2`).  With a finite prior, lambda(N) is not
        N lambda(1), so it is recomputed per N.
    floor : float or array_like
        Systematics floor per bin (same unit).
    floor_averages : bool
        True: the floor averages down as 1/sqrt(N); False: it does not.
    dof : int or array_like
        1 for the nested tests; n_bins - 1 for the goodness-of-fit rejection
        of a flat line.
    sigma : float
        Target significance.
    probabilities : sequence of float
        Detection probabilities for which N is also reported.
    n_max : int
        Largest number of transits considered.
    n_curve : array_like of int, optional
        N values for the returned curve (default :func:`default_curve_transits`).

    Returns
    -------
    dict
        ``transits_needed`` (int array; 0 = not reachable), ``reachable``,
        ``no_signal`` (bool: the two models are identical), ``limiting_term``
        (str array), ``significance_per_transit`` (Z at N = 1),
        ``asymptotic_significance`` (Z as N -> infinity; inf without a
        non-averaging floor), ``delta_chi2_per_transit``,
        ``transits_for_probability`` ({p: int array}), ``curve_transits``,
        ``curve_significance`` (the expected, median Z) and
        ``curve_probability`` (..., n_curve), ``curve_significance_at_probability``
        ({p: the Z reached with probability p, (..., n_curve)}), ``target_sigma``,
        ``dof``.
    """
    sigma, probabilities, n_max, null_templates = _check_stack_inputs(
        sigma, probabilities, n_max, templates, null_templates)
    kw = dict(alt=alt, shape=shape, null_templates=null_templates, alt_templates=alt_templates,
              template_sigma=template_sigma, template_mean=template_mean, null_scale=null_scale)
    stk, lam1, lam_inf, linear, used = _stack_setup(data, null, sigma1, floor, floor_averages, kw,
                                                    n_max)
    batch = stk.batch
    dof_arr = np.broadcast_to(np.asarray(dof, dtype=np.float64), batch)

    need_expected = _per_dof(dof_arr, lambda k: noncentrality_for_probability(0.5, sigma, k))
    n_needed, lam_found = _needed(stk, lam1, lam_inf, linear, need_expected)
    n_prob = {p: _needed(stk, lam1, lam_inf, linear, _per_dof(
        dof_arr, lambda k, p=p: noncentrality_for_probability(p, sigma, k)))[0]
        for p in probabilities}

    def z_of(lam):
        dd = np.broadcast_to(dof_arr.reshape(dof_arr.shape + (1,) * (np.ndim(lam) - dof_arr.ndim)),
                             np.shape(lam))
        finite = np.where(np.isinf(lam), 0.0, lam)
        z = significance_from_delta_chi2(expected_statistic(finite, dd), dd)
        return np.where(np.isinf(lam), np.inf, np.where(lam > 0, z, 0.0))

    no_signal = ~(lam1 > 0)
    reachable = n_needed > 0

    def lam_at_n():
        # lambda at the N needed: known from the search, else one evaluation
        if lam_found is not None:
            return lam_found
        return stk.full(np.maximum(n_needed, 1))
    limiting = _limiting_terms(stk.d, stk.nul, stk.s2, stk.fl, used, lam1, lam_inf,
                               need_expected, n_needed, lam_at_n, kw)

    if n_curve is None:
        n_curve = default_curve_transits(n_max)
    n_curve = np.asarray(n_curve, dtype=np.int64)
    p_curve, z_curve, zp_curve = _curves(stk, lam1, linear, dof_arr, sigma, probabilities, n_curve,
                                         z_of)
    return {
        "transits_needed": n_needed, "reachable": reachable, "no_signal": no_signal,
        "limiting_term": limiting,
        "significance_per_transit": z_of(lam1),
        "asymptotic_significance": z_of(lam_inf),
        "delta_chi2_per_transit": lam1, "delta_chi2_asymptotic": lam_inf,
        "transits_for_probability": n_prob,
        "curve_transits": n_curve, "curve_significance": z_curve,
        "curve_probability": p_curve, "curve_significance_at_probability": zp_curve,
        "target_sigma": sigma, "dof": dof_arr,
    }


def _curves(stk, lam1, linear, dof_arr, sigma, probabilities, n_curve, z_of):
    """Curves over ``n_curve``: detection probability, expected Z and the Z reached with each probability.

    lambda(N) is evaluated once per N and serves all three; the quantiles come
    from :func:`snrkit.stats.probability.significance_at_probability`.
    """
    if linear:
        lam_curve = lam1[..., None] * n_curve.astype(np.float64)
    else:
        # N = 1 is lambda(1), already known
        lam_curve = np.stack([lam1 if n == 1 else stk.full(np.full(stk.batch, n)) for n in n_curve],
                             axis=-1)
    p_curve = np.empty_like(lam_curve)
    for k in np.unique(dof_arr):
        sel = dof_arr == k
        p_curve[sel] = detection_probability(lam_curve[sel], sigma, k)
    p_curve = np.where(lam_curve > 0, p_curve, 0.0)
    # a curve of the single point N = 1 is the per-transit significance itself
    z_curve = z_of(lam1)[..., None] if n_curve.tolist() == [1] else z_of(lam_curve)
    dd = np.broadcast_to(dof_arr[..., None], lam_curve.shape)
    zp_curve = {p: significance_at_probability(lam_curve, p, dd) for p in probabilities}
    return p_curve, z_curve, zp_curve


def stack_needed(data, null, sigma1, *, alt=None, shape=None, templates=None,
                 null_templates=None, alt_templates=None, template_sigma=None,
                 template_mean=None, null_scale=None, floor=0.0, floor_averages=False, dof=1,
                 sigma=5.0, n_max=1000):
    """Only the transits needed and the per-transit and asymptotic Delta chi^2.

    The part of :func:`stack_transits` that choosing between readouts needs
    (same arguments, same values): no significances, curves or limiting
    terms.

    Returns
    -------
    dict
        ``transits_needed`` (int array; 0 = not reachable),
        ``delta_chi2_per_transit`` and ``delta_chi2_asymptotic``
        (dimensionless, batch shape).
    """
    sigma, _, n_max, null_templates = _check_stack_inputs(sigma, (), n_max, templates,
                                                          null_templates)
    kw = dict(alt=alt, shape=shape, null_templates=null_templates, alt_templates=alt_templates,
              template_sigma=template_sigma, template_mean=template_mean, null_scale=null_scale)
    stk, lam1, lam_inf, linear, _ = _stack_setup(data, null, sigma1, floor, floor_averages, kw,
                                                 n_max)
    dof_arr = np.broadcast_to(np.asarray(dof, dtype=np.float64), stk.batch)
    target = _per_dof(dof_arr, lambda k: noncentrality_for_probability(0.5, sigma, k))
    n_needed, _ = _needed(stk, lam1, lam_inf, linear, target)
    return {"transits_needed": n_needed, "delta_chi2_per_transit": lam1,
            "delta_chi2_asymptotic": lam_inf}


def _limiting_terms(d, nul, s2, fl, used, lam1, lam_inf, target, n_needed, lam_at_n, kw):
    """Name what limits each test: white noise, the floor, contamination, N or no signal.

    ``lam_at_n()`` returns lambda at the N needed; it is called only when a
    floor can limit a reachable test.
    """
    reachable = n_needed > 0
    limiting = np.full(lam1.shape, "white noise", dtype="<U24")
    masked = np.zeros(lam1.shape, dtype=bool)
    if kw.get("null_templates") is not None:
        # "masked" when the fitted signature removes three quarters of the signal
        # (threshold: common practice, no source)
        sig1 = np.sqrt(s2 + fl ** 2)
        free = nested_delta_chi2(d, nul, sig1, null_scale=kw.get("null_scale"))
        masked = lam1 < 0.25 * free
    floor_limited = lam_inf < target
    limiting = np.where(~reachable & floor_limited, "noise floor", limiting)
    limiting = np.where(~reachable & ~floor_limited, "transit limit", limiting)
    limiting = np.where(~reachable & masked, "stellar contamination", limiting)
    limiting = np.where(~(lam1 > 0) & ~masked, "no signal", limiting)
    if np.any(reachable) and np.any(fl > 0):
        # the floor limits a reachable test when it removes more than half of the
        # Delta chi^2 that white noise alone would give at the N needed (threshold:
        # common practice, no source)
        n_at = np.maximum(n_needed, 1)[..., None].astype(np.float64)
        s1 = np.sqrt(s2 / n_at)
        white_only = nested_delta_chi2(d, nul, np.where(used, s1, np.nan), **kw)
        limiting = np.where(reachable & (lam_at_n() < 0.5 * white_only), "noise floor", limiting)
    return limiting
