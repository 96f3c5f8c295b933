"""Up-the-ramp readout: groups per integration, duty cycle, read noise and saturation.

Up-the-ramp readout (Rauscher et al. 2007, PASP 119, 768): an integration
of ``n`` groups spaced ``t_group`` apart, followed by ``n_reset`` reset
frames, collects light for ``(n - 1) t_group`` of its elapsed
``n t_group + n_reset t_frame``.  The read-noise variance of a pixel's
fitted ramp is ``12 (n - 1) sigma_read^2 / (m n (n + 1))`` for ``m`` frames
per group (their eq. 1, read term; equation number from memory).

For bright stars the readout is chosen for the test, not for zero
saturation: :func:`readout_candidates` offers the largest unsaturated
number of groups and a few larger numbers that let the brightest bins
saturate (and be dropped) in exchange for a higher duty cycle in the rest;
the chain keeps, per target, the option that serves its test best.
"""

import numpy as np

__all__ = ["choose_readout", "readout_candidates", "CANDIDATE_FACTORS"]

#: Multiples of the largest unsaturated number of groups offered to the test
#: (common practice, no source: a geometric ladder up to five times the
#: unsaturated choice, beyond which most bins of a bright star saturate).
CANDIDATE_FACTORS = (1.0, 1.5, 2.0, 3.0, 5.0)


def _ramp_read_variance(n, sigma_read, frames_per_group=1):
    """Read-noise variance of one pixel's fitted ramp of ``n`` groups [e-^2].

    Rauscher et al. 2007, PASP 119, 768, eq. 1 (read-noise term).
    """
    n = np.asarray(n, dtype=np.float64)
    return 12.0 * (n - 1.0) * sigma_read**2 / (frames_per_group * n * (n + 1.0))


def choose_readout(mode, peak_star, peak_other, groups=None):
    """Choose groups per integration and derive duty cycle and saturation.

    Parameters
    ----------
    mode : Mode
    peak_star : numpy.ndarray
        Stellar electrons s-1 in each bin's brightest pixel, (n_star, n_bin).
    peak_other : numpy.ndarray
        Background + dark electrons s-1 per pixel, (n_bin,).
    groups : int, array_like of int (n_star,) or None
        Fixed groups per integration (one value or one per star); ``None``
        chooses the most groups below the usable well, within
        [min_groups, max_groups].

    Returns
    -------
    dict of numpy.ndarray
        ``groups`` (n_star,) int; ``t_int`` elapsed time per integration [s];
        ``t_eff`` light-collecting time per integration [s]; ``duty``;
        ``read_var`` read variance per pixel per integration [e-^2];
        ``saturated`` (n_star, n_bin) bool; ``too_bright`` (n_star,) bool
        (saturates even in the shortest integration); ``limit_dmag``
        (n_star,) magnitude offset to the brightest usable star (add to the
        star's magnitude; NaN for scan readout); ``well_fill`` (n_star,)
        brightest-pixel electrons at the last read over the usable well.
    """
    n_star = peak_star.shape[0]
    if mode.scheme == "scan":
        n = np.full(n_star, mode.reads_per_exposure, dtype=int)
        t_int = np.full(n_star, mode.exposure_time_s / mode.scan_duty_cycle)
        t_eff = np.full(n_star, mode.exposure_time_s)
        nan = np.full(n_star, np.nan)
        return {"groups": n, "t_int": t_int, "t_eff": t_eff,
                "duty": t_eff / t_int,
                "read_var": _ramp_read_variance(n, mode.read_noise),
                "saturated": np.zeros(peak_star.shape, dtype=bool),
                "too_bright": np.zeros(n_star, dtype=bool),
                "limit_dmag": nan, "well_fill": nan}
    tg = mode.group_time_s
    well = mode.usable_well
    peak = peak_star + peak_other[None, :]
    peak_max = peak.max(axis=1)
    with np.errstate(divide="ignore"):
        n_fit = np.floor(well / (peak_max * tg))
    if groups is None:
        n = np.clip(n_fit, mode.min_groups, mode.max_groups).astype(int)
    else:
        n = np.broadcast_to(np.asarray(groups, dtype=np.int64), (n_star,)).copy()
    t_int = n * tg + mode.resets_per_integration * mode.frame_time_s
    t_eff = (n - 1) * tg
    saturated = peak * (n * tg)[:, None] > well
    t_short = mode.min_groups * tg
    too_bright = peak_max * t_short > well
    # brightest usable star: the magnitude offset at which the stellar part of every bin's
    # brightest pixel, scaled by 10^(-0.4 dm), still fits beside background and dark
    room = well / t_short - peak_other                          # (n_bin,)
    with np.errstate(divide="ignore", invalid="ignore"):
        per_bin = np.where(room[None, :] > 0,
                           2.5 * np.log10(peak_star / room[None, :]), np.inf)
    limit_dmag = per_bin.max(axis=1)
    return {"groups": n, "t_int": t_int, "t_eff": t_eff, "duty": t_eff / t_int,
            "read_var": _ramp_read_variance(n, mode.read_noise, mode.frames_per_group),
            "saturated": saturated, "too_bright": too_bright,
            "limit_dmag": limit_dmag, "well_fill": peak_max * n * tg / well}


def readout_candidates(mode, peak_star, peak_other, factors=CANDIDATE_FACTORS):
    """Groups per integration worth trying for each star, shape (n_options, n_star).

    Option 0 is the largest number of groups that saturates no bin (at least
    ``min_groups``); the others multiply it by ``factors[1:]``, clipped to
    [min_groups, max_groups].  A star whose unsaturated choice already
    reaches ``max_groups`` has every option equal to it.  Scan readout has
    one option.
    """
    n_star = peak_star.shape[0]
    if mode.scheme == "scan":
        return np.full((1, n_star), mode.reads_per_exposure, dtype=np.int64)
    peak_max = (peak_star + peak_other[None, :]).max(axis=1)
    with np.errstate(divide="ignore"):
        n_fit = np.floor(mode.usable_well / (peak_max * mode.group_time_s))
    base = np.clip(n_fit, mode.min_groups, mode.max_groups)
    opts = [np.clip(np.ceil(base * f), mode.min_groups, mode.max_groups) for f in factors]
    return np.stack(opts).astype(np.int64)
