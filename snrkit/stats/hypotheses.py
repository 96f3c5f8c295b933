"""The nested models of each test, the readout chosen for it, and the stacked result.

Compute layer between the chain (:mod:`snrkit.engine.transits`) and the stacker
(:mod:`snrkit.stats.detect`).  Every test is a likelihood-ratio test between
nested models on noise-free data with the same bins, noise and nuisances
(Cowan, Cranmer, Gross & Vitells 2011, Eur. Phys. J. C 71, 1554):

=================  =============================  ================================
test               null (rejected)                alternative (true)
=================  =============================  ================================
atmosphere         level                          level + a T(lambda), a >= 0
species X          level + b (T without X)        level + T
                   (0 <= b <= 2, profiled)
against B          level + B                      level + T
goodness of fit    level                          any spectrum (nu = bins - 1 - k)
=================  =============================  ================================

T is the scenario's spectrum.  In the species test the remaining features
of the scenario carry a free factor b between 0 and 2 (:data:`SPECIES_SCALE`):
it stands for the continuum parameters that set their amplitude (temperature,
mean molecular weight, a cloud deck muting them), so that X is credited only
with what the rest of the atmosphere cannot mimic.  b = 0 is the flat line,
so the atmosphere test is never less significant than a species test on the
same data (range: common practice, no source; ``--refit`` moves the physical
parameters themselves).  Unocculted spots and faculae multiply every
depth by epsilon(lambda) (Rackham, Apai & Giampapa 2018, ApJ 853, 122), so
the data are T epsilon.  When the contamination is *fitted*, both models
carry the nuisance a_c T (epsilon - 1) (the signature on the observed
spectrum) with a Gaussian prior on a_c of mean 1 and width 1 (the stated
active regions, uncertain by their own size);
the Asimov data then sit on the alternative at the prior mean, so a fitted
nuisance can only lower Delta chi^2.  When it is *not fitted*, the data
still hold T epsilon but neither model knows it: the contamination is a
bias, and its share of Delta chi^2 is reported.

The readout of a bright star is chosen here for the test: every readout
candidate of the precision (:func:`snrkit.photons.readout.readout_candidates`)
is tried and each target keeps the one that needs the fewest transits (ties:
the larger per-transit, then asymptotic, Delta chi^2), its saturated bins
dropped.
"""

import numpy as np

from . import detect as dt

__all__ = ["NestedModels", "build_models", "run_test", "delta_chi2_per_transit", "transits_spread",
           "fitted_null_at", "GOODNESS_OF_FIT", "SPECIES_SCALE"]

#: Bounds of the free factor on the remaining features in a species test.
SPECIES_SCALE = (0.0, 2.0)
#: Name of the model-agnostic goodness-of-fit test (never the default).
GOODNESS_OF_FIT = "goodness-of-fit"


class NestedModels:
    """The data and the two nested models of one test, arrays over (..., planet, bin).

    Attributes
    ----------
    data, null : numpy.ndarray
        Asimov data and the null's fixed part [ppm].
    alt, shape : numpy.ndarray or None
        The alternative's fixed part, or the shape whose non-negative
        amplitude it fits (atmosphere test); both None: the alternative
        reproduces the data.
    null_templates, alt_templates : numpy.ndarray or None
        Nuisance templates (..., planet, bin, k).
    template_sigma, template_mean : numpy.ndarray or None
        Their Gaussian priors.
    goodness_of_fit : bool
        The statistic is the null's chi^2 with nu = bins - 1 - k.
    null_scale : (float, float) or None
        Bounds of a free factor on the null's fixed part.
    """

    def __init__(self, data, null, *, alt=None, shape=None, null_templates=None,
                 alt_templates=None, template_sigma=None, template_mean=None,
                 goodness_of_fit=False, null_scale=None):
        self.null_scale = null_scale
        self.data = np.asarray(data, dtype=np.float64)
        self.null = np.broadcast_to(np.asarray(null, dtype=np.float64), self.data.shape)
        self.alt, self.shape = alt, shape
        self.null_templates, self.alt_templates = null_templates, alt_templates
        self.template_sigma, self.template_mean = template_sigma, template_mean
        self.goodness_of_fit = bool(goodness_of_fit)

    @property
    def n_templates(self):
        return 0 if self.null_templates is None else int(np.shape(self.null_templates)[-1])

    def masked(self, usable):
        """Copy with unusable bins zeroed (their noise is NaN: no weight)."""
        def z(a):
            return None if a is None else np.where(usable, np.broadcast_to(a, usable.shape), 0.0)

        def zt(a):
            return None if a is None else np.where(usable[..., None], a, 0.0)
        return NestedModels(z(self.data), z(self.null), alt=z(self.alt), shape=z(self.shape),
                          null_templates=zt(self.null_templates),
                          alt_templates=zt(self.alt_templates),
                          template_sigma=self.template_sigma, template_mean=self.template_mean,
                          goodness_of_fit=self.goodness_of_fit, null_scale=self.null_scale)

    def take(self, sel):
        """The models of the elements ``sel`` (a boolean mask over the batch axes)."""
        def t(a):
            return None if a is None else np.broadcast_to(a, self.data.shape + np.shape(a)[
                self.data.ndim:])[sel]
        return NestedModels(self.data[sel], self.null[sel], alt=t(self.alt), shape=t(self.shape),
                          null_templates=t(self.null_templates), alt_templates=t(self.alt_templates),
                          template_sigma=self.template_sigma, template_mean=self.template_mean,
                          goodness_of_fit=self.goodness_of_fit, null_scale=self.null_scale)

    def stack_kwargs(self):
        return dict(alt=self.alt, shape=self.shape, null_templates=self.null_templates,
                    alt_templates=self.alt_templates, template_sigma=self.template_sigma,
                    template_mean=self.template_mean, null_scale=self.null_scale)


def build_models(kind, truth, null, epsilon=None, fitted=True, goodness_of_fit=False):
    """The nested models of a test, with or without stellar contamination.

    Parameters
    ----------
    kind : {"atmosphere", "species", "against"}
    truth : numpy.ndarray (..., n_wl)
        The scenario's spectrum T [ppm].
    null : numpy.ndarray (..., n_wl) or None
        The null's spectrum (ignored for the atmosphere test: a flat line).
    epsilon : numpy.ndarray (..., n_wl), optional
        Contamination factor (Rackham et al. 2018); None: no contamination.
    fitted : bool
        Whether the contamination is a fitted nuisance (else a bias).
    goodness_of_fit : bool
        The flat-line goodness-of-fit statistic instead of the atmosphere test.
    """
    t = np.asarray(truth, dtype=np.float64)
    flat = kind == "atmosphere"
    n0 = np.zeros_like(t) if flat else np.asarray(null, dtype=np.float64)
    scale = SPECIES_SCALE if kind == "species" else None
    if epsilon is None:
        return NestedModels(t, n0, goodness_of_fit=goodness_of_fit, null_scale=scale)
    eps = np.asarray(epsilon, dtype=np.float64)
    data = t * eps
    shape = t if flat and not goodness_of_fit else None
    alt = None if flat else t
    if not fitted:
        if goodness_of_fit:
            return NestedModels(data, n0, goodness_of_fit=True)
        return NestedModels(data, n0, alt=alt, shape=shape, null_scale=scale)
    # the signature of the active regions on the observed spectrum, shared by both
    # models so that they stay nested (on the null's own spectrum it would differ by
    # (T - null)(epsilon - 1), second order in both small quantities)
    signature = (t * (eps - 1.0))[..., None]
    kw = dict(null_templates=signature, template_sigma=np.array([1.0]),
              template_mean=np.array([1.0]))
    if goodness_of_fit:
        return NestedModels(data, n0, goodness_of_fit=True, **kw)
    return NestedModels(data, n0, alt=alt, shape=shape, null_scale=scale,
                        alt_templates=signature, **kw)


def _usable(white, saturated, models):
    ok = ~saturated & np.isfinite(white) & (white > 0)
    ok = ok & np.isfinite(models.data) & np.isfinite(models.null)
    if models.alt is not None:
        ok = ok & np.isfinite(models.alt)
    return ok


def _dof(models, usable):
    if not models.goodness_of_fit:
        return 1
    return np.maximum(usable.sum(axis=-1) - 1 - models.n_templates, 1)


def _stack(models, white, floor, usable, floor_averages, **kw):
    m = models.masked(usable)
    return dt.stack_transits(m.data, m.null, np.where(usable, white, np.nan),
                             floor=np.where(usable, floor, 0.0), floor_averages=floor_averages,
                             dof=_dof(models, usable), **m.stack_kwargs(), **kw)


def _choose(models, options, floor, floor_averages, sigma, n_max):
    """Index of the readout option that serves each element's test best."""
    n_opt = options["white"].shape[0]
    batch = models.data.shape[:-1]
    shape = (n_opt,) + batch
    n_need = np.full(shape, np.inf)
    lam_inf = np.zeros(shape)
    lam1 = np.zeros(shape)
    groups = options["groups"]                       # (n_opt, planet)
    for j in range(n_opt):
        white = np.broadcast_to(options["white"][j], models.data.shape)
        sat = np.broadcast_to(options["saturated"][j], models.data.shape)
        # options equal to option 0 need no second evaluation
        differs = np.broadcast_to(groups[j] != groups[0], batch) if j else np.ones(batch, bool)
        if not differs.any():
            n_need[j], lam_inf[j], lam1[j] = n_need[0], lam_inf[0], lam1[0]
            continue
        sub = models.take(differs)
        usable = _usable(white[differs], sat[differs], sub)
        m = sub.masked(usable)
        res = dt.stack_needed(m.data, m.null, np.where(usable, white[differs], np.nan),
                              floor=np.where(usable, np.broadcast_to(
                                  floor, models.data.shape)[differs], 0.0),
                              floor_averages=floor_averages, dof=_dof(sub, usable),
                              **m.stack_kwargs(), sigma=sigma, n_max=n_max)
        n = res["transits_needed"].astype(np.float64)
        n_need[j][differs] = np.where(n > 0, n, np.inf)
        lam_inf[j][differs] = res["delta_chi2_asymptotic"]
        lam1[j][differs] = res["delta_chi2_per_transit"]
        if j:
            same = ~differs
            n_need[j][same], lam_inf[j][same], lam1[j][same] = (
                n_need[0][same], lam_inf[0][same], lam1[0][same])
    # fewest transits, then the larger per-transit, then asymptotic Delta chi^2; where no
    # option reaches the target, the larger asymptote first (the best the test can do);
    # the first (unsaturated) option wins exact ties
    never = np.isinf(n_need)
    first = np.where(never, -lam_inf, -lam1)
    second = np.where(never, -lam1, -lam_inf)
    order = np.lexsort((np.broadcast_to(np.arange(n_opt).reshape((n_opt,) + (1,) * len(batch)),
                                        shape), second, first, n_need), axis=0)
    return order[0]


def run_test(models, obs, *, sigma, probabilities, n_max, curves=True):
    """Choose the readout per element, then stack with it.

    Parameters
    ----------
    models : NestedModels
        Arrays over (..., planet, bin).
    obs : dict
        The observation (:func:`snrkit.engine.transits.observe`): ``white``,
        ``floor`` (planet, bin), ``saturated``, ``floor_averages``,
        ``groups``, ``duty`` and optional ``options``.

    Returns
    -------
    (dict, dict)
        The stacker's result and the readout used per element: ``groups``,
        ``duty``, ``bins_saturated``, ``usable`` (..., planet, bin), ``white``.
    """
    floor = obs["floor"]
    opts = obs.get("options")
    batch = models.data.shape[:-1]
    if opts is not None and opts["white"].shape[0] > 1:
        pick = _choose(models, opts, floor, obs["floor_averages"], sigma, n_max)
        planet = np.broadcast_to(np.arange(batch[-1]), batch)
        white = opts["white"][pick, planet]
        sat = opts["saturated"][pick, planet]
        groups = opts["groups"][pick, planet]
        duty = opts["duty"][pick, planet]
    else:
        white = np.broadcast_to(obs["white"], models.data.shape)
        sat = np.broadcast_to(obs["saturated"], models.data.shape)
        groups = np.broadcast_to(obs["groups"], batch)
        duty = np.broadcast_to(obs["duty"], batch)
    usable = _usable(white, sat, models)
    res = _stack(models, white, np.broadcast_to(floor, models.data.shape), usable,
                 obs["floor_averages"], sigma=sigma, probabilities=probabilities, n_max=n_max,
                 n_curve=None if curves else [1])
    used = {"groups": np.asarray(groups), "duty": np.asarray(duty),
            "bins_saturated": np.asarray(sat).sum(axis=-1), "saturated": np.asarray(sat),
            "usable": usable, "white": white}
    return res, used


def delta_chi2_per_transit(models, used, obs):
    """Delta chi^2 of one transit for other models on the noise and bins already chosen."""
    usable = used["usable"] & np.isfinite(models.data) & np.isfinite(models.null)
    m = models.masked(usable)
    sig = np.where(usable, np.sqrt(used["white"] ** 2 + obs["floor"] ** 2), np.nan)
    return dt.nested_delta_chi2(m.data, m.null, sig, **m.stack_kwargs())


def fitted_null_at(models, used, obs, n_transits):
    """The null at its best fit to the data after N transits (per planet), as the test profiles it.

    The level, any nuisance templates and a species test's factor b at
    their profiled values (:func:`snrkit.stats.likelihood.fitted_null`),
    on the bins and noise the test used: white noise and floor stacked over
    ``n_transits`` (one per planet, >= 1).

    Returns
    -------
    numpy.ndarray (planet, bin)
        The fitted null [ppm]; NaN in bins the test did not use.
    """
    from .likelihood import fitted_null, noise_per_bin
    usable = used["usable"] & np.isfinite(models.data) & np.isfinite(models.null)
    m = models.masked(usable)
    n = np.maximum(np.asarray(n_transits, dtype=np.float64), 1.0)[..., None]
    sig = np.where(usable, noise_per_bin(used["white"], n, obs["floor"], obs["floor_averages"]),
                   np.nan)
    fit = fitted_null(m.data, m.null, sig, null_templates=m.null_templates,
                      template_sigma=m.template_sigma, template_mean=m.template_mean,
                      null_scale=m.null_scale)
    return np.where(usable, fit, np.nan)


def transits_spread(models, used, obs, scale, *, sigma, n_max):
    """Percentiles of the transits needed when every feature is scaled by a draw.

    ``scale`` (draws, planet) multiplies data, models and templates alike
    (the level is free, so only the features change; the feature amplitude
    of a hydrostatic atmosphere scales as Rp^3 / Mp at fixed temperature and
    composition, :func:`snrkit.stats.forecast.feature_scale_draws`).

    Returns
    -------
    dict
        ``median``, ``p16``, ``p84`` (NaN where the draws beyond the
        percentile do not reach the target) and ``fraction_reachable``.
    """
    s = np.asarray(scale, dtype=np.float64)[..., None]

    def sc(a):
        return None if a is None else a[None] * s

    def sct(a):
        return None if a is None else a[None] * s[..., None]
    m = models.masked(used["usable"])
    scaled = NestedModels(sc(m.data), sc(m.null), alt=sc(m.alt),
                        shape=None if m.shape is None else np.broadcast_to(m.shape, s.shape[:1] + m.shape.shape),
                        null_templates=sct(m.null_templates), alt_templates=sct(m.alt_templates),
                        template_sigma=m.template_sigma, template_mean=m.template_mean,
                        goodness_of_fit=m.goodness_of_fit, null_scale=m.null_scale)
    usable = np.broadcast_to(used["usable"], scaled.data.shape)
    res = _stack(scaled, np.broadcast_to(used["white"], scaled.data.shape),
                 np.broadcast_to(obs["floor"], scaled.data.shape), usable, obs["floor_averages"],
                 sigma=sigma, probabilities=(), n_max=n_max, n_curve=[1])
    from .forecast import spread_summary
    return spread_summary(res["transits_needed"])
