"""ln tau(u) of one analytic-solver element: the line shape at a pressure and the three terms.

An element (planet, bin, g-point) carries its planet's constants and the
line cross-section at a few pressure nodes, uniform in ln P; ln k is linear
in ln P between nodes (a local power law ``k ~ P**s``, extrapolated with the
end segments' clipped slopes).  The chord optical depth at the tangent
radius ``r = 1/u`` sums three absorbers, each ``~ n**e`` with its
``sqrt(2 pi r H / e)`` (Heng & Kitzmann 2017, MNRAS 470, 2972): the lines
(``e = 1 + s``), the smooth continuum (1) and collision-induced absorption
(2).  :func:`ln_tau` gives ``ln tau(u) + gamma``, its slope and the terms'
shares, which the root finder (:mod:`snrkit.atmosphere.analytic_roots`)
and the H/R terms use.
"""

import numpy as np

from .analytic import EULER_GAMMA

__all__ = ["Evaluation", "ln_tau", "shares_near", "line_shape", "node_exponents",
           "EXPONENT_BLEND"]

#: Range of the line segments' slopes s = d ln k / d ln P.
_SLOPE_RANGE = (-0.9, 2.0)
#: e-folds of pressure (about one scale height, the reach of a chord above its
#: tangent point) over which the line exponent turns from the segment above a
#: node to the segment below it.
EXPONENT_BLEND = 1.0


class Evaluation:
    """One evaluation of ``ln tau(u) + gamma`` at the elements' u.

    Attributes
    ----------
    f : numpy.ndarray
        ``ln tau + gamma`` (the root is where it is 0).
    d : numpy.ndarray
        Its slope d/du [m]: the exact one or the power-law model's (see :func:`ln_tau`).
    w : tuple of three numpy.ndarray (float32)
        Shares of the lines, the continuum and the CIA in tau.
    e1 : numpy.ndarray
        Line exponent e (extinction ~ n**e) at u.
    dl1, de : numpy.ndarray
        d l1 / d ln n of the line term and d e / d ln P (to move the shares, :func:`shares_near`).
    lk : numpy.ndarray
        ln of the line cross-section at u [ln m2].
    """

    __slots__ = ("f", "d", "w", "e1", "dl1", "de", "lk")

    def __init__(self, f, d, w, e1, dl1, de, lk):
        self.f, self.d, self.w, self.e1, self.dl1, self.de, self.lk = f, d, w, e1, dl1, de, lk

    def take(self, idx):
        """What :func:`shares_near` needs of the evaluation, at elements ``idx`` only."""
        return Evaluation(None, None, tuple(w[idx] for w in self.w), self.e1[idx],
                          self.dl1[idx], self.de[idx], None)


def ln_tau(u, el, x0, dx, n_p, exact_slope=False):
    """``ln tau(u) + gamma`` at u, with its slope, the shares and the line shape.

    Parameters
    ----------
    u : numpy.ndarray
        1/r [1/m] per element.
    el : dict of numpy.ndarray
        The elements' constants (:func:`snrkit.atmosphere.analytic_kernel.root_radius`).
    x0, dx : float
        ln of the first line-shape node pressure [ln Pa] and the node spacing.
    n_p : int
        Line-shape nodes per element.
    exact_slope : bool
        The slope of the piecewise function itself (for Newton steps); otherwise
        that of the local power-law model (B times the mean exponent), as the
        H/R terms need.

    Returns
    -------
    Evaluation

    Notes
    -----
    Float32 (numpy has SIMD exp and log for float32 on every x86-64 machine,
    for float64 only with AVX-512: a third of the cost): the differences
    ``l_i - max l``, their exponentials, their sum and its log, the shares,
    ``ln e`` and ``ln(u / u_t)``.  Float64: the terms ``l_i`` themselves,
    their maximum, ``ln u_t`` and the sum that makes ``f``.  ln tau is good
    to ~3e-7 (against the float64 formula), the root to ~1e-7 H where tau
    grows with depth at least as fast as n**0.5 (median 2e-8 H measured),
    and to a few 1e-5 H where it barely grows (mean exponent ~0.1 at r/H ~
    15).
    """
    B = el["B"]
    bu = B * u
    lnn = el["lnn0"] + bu
    lk, e1, dlk, de = line_shape((lnn + el["lnkT"] - x0) * (1.0 / dx), el, dx, n_p)
    # absent absorbers carry ln values of about -1e4 (never -inf), so exp() gives 0
    l1 = lk + lnn + el["base"] - 0.5 * np.log(e1.astype(np.float32))
    l2 = el["a2"] + bu
    l3 = el["a3"] + 2.0 * bu
    top = np.maximum(np.maximum(l1, l2), l3)
    x = _shares32(l1, l2, l3, top)
    tot = x[0] + x[1] + x[2]
    inv = np.float32(1.0) / tot
    w1, w2, w3 = x[0] * inv, x[1] * inv, x[2] * inv
    f = top + np.log(tot) - 1.5 * (el["lnut"] + np.log((u * el["inv_ut"]).astype(np.float32))) \
        + EULER_GAMMA
    # the exact derivative of this f (slope of ln k, change of e along it)
    dl1 = 1.0 + dlk - 0.5 * de / e1
    d = B * ((w1 * dl1 if exact_slope else w1 * e1) + w2 + 2.0 * w3) - 1.5 / u
    return Evaluation(f, d, (w1, w2, w3), e1, dl1, de, lk)


def shares_near(ev, B, delta):
    """Shares (w1, w2, w3) and line exponent moved by ``delta`` in u from ``ev`` (first order).

    The H/R terms are wanted at the root; the last Newton evaluation lies within
    1e-4 H of it (1e-3 H after the translated re-solve's step), so the shares are
    carried there along their exact derivatives, d w_i / du = w_i (l_i' - sum_j
    w_j l_j'), instead of evaluating again (error second order in the step).
    """
    w1, w2, w3 = ev.w
    s1 = B * ev.dl1
    mean = w1 * s1 + B * (w2 + 2.0 * w3)
    return ((w1 * (1.0 + (s1 - mean) * delta), w2 * (1.0 + (B - mean) * delta),
             w3 * (1.0 + (2.0 * B - mean) * delta)), ev.e1 + B * ev.de * delta)


def _shares32(l1, l2, l3, top):
    """exp(l_i - top) for the three terms, in float32 (3, n).

    The differences lie in [-60, 0] (exponents clipped at -60: exp = 9e-27 next to
    the largest term's 1, and no subnormal results, which cost 100 times more);
    float32 gives each share to ~1e-7 absolute (6e-8 |l_i - top| relative for the
    small ones), so ln tau to ~3e-7, at a third of float64's cost (numpy's SIMD
    exp and log exist for float32 on every x86-64 machine, for float64 only with
    AVX-512).
    """
    x = np.empty((3, top.size), dtype=np.float32)
    for i, v in enumerate((l1, l2, l3)):
        np.subtract(v, top, out=x[i], casting="same_kind")
    np.maximum(x, np.float32(-60.0), out=x)
    np.exp(x, out=x)
    return x


def line_shape(pos, el, dx, n_p):
    """ln k, the exponent e and d(ln k)/d(ln P), de/d(ln P) at ``pos`` (node units).

    Between nodes ln k is linear in ln P.  The chord through a tangent point
    crosses only lower pressures, so just below a node e is the exponent of
    the segment above; it turns linearly to the segment's own over
    :data:`EXPONENT_BLEND` e-folds of pressure (continuous, so tau(u) has no
    jumps, and no deeper segment is ever read).  Below the opaque floor
    (a root there stands for the floor term H E1(tau_floor)) the line keeps
    the floor's own power law, k ~ P**(e_floor - 1): the opacity hidden under
    a cloud deck or surface is never read.
    """
    pc = np.minimum(pos, el["posf"])
    m = pc.astype(np.intp)                            # floor for pos >= 0; clipped below
    np.minimum(np.maximum(m, 0, out=m), n_p - 2, out=m)
    rows = el["row"] + m
    la, lb = el["lnk"].take(rows), el["lnk"].take(rows + 1)
    ea, eb = el["e"].take(rows), el["e"].take(rows + 1)
    t = pc - m
    # ea: the segment above this one; eb: this segment's own exponent
    blend = t * (dx / EXPONENT_BLEND)
    tc = np.minimum(np.maximum(blend, 0.0), 1.0)     # (np.clip costs more per call)
    e1 = ea + tc * (eb - ea)
    below = pos - pc
    # outside the nodes (above the top one, below the deepest) the power law of the
    # end segment continues with its clipped exponent, never a raw slope (a g-point
    # absent at one node has ln k at the tables' floor there, and its raw slope is
    # not a line shape)
    inside = np.minimum(np.maximum(t, 0.0), 1.0)
    outside = (t - inside) * dx
    lk = la + inside * (lb - la) + (e1 - 1.0) * (outside + below * dx)
    dlk = np.where((below > 0) | (outside != 0), e1 - 1.0, (lb - la) * (1.0 / dx))
    de = np.where((tc == blend) & (below <= 0) & (outside == 0),
                  (eb - ea) * (1.0 / EXPONENT_BLEND), 0.0)
    return lk, e1, dlk, de


def node_exponents(lnk_nodes, dx):
    """Line-extinction exponent 1 + s seen from each pressure node (last axis).

    A chord with its tangent point at a node crosses only lower pressures, so
    the exponent there is that of the segment above the node (the first
    segment's at the top node); within a segment it turns to the segment's own
    slope over :data:`EXPONENT_BLEND` e-folds of pressure (about one scale
    height, the chord's reach), see :func:`line_shape`.  Slopes are clipped to a
    physical range.
    """
    out = np.empty(lnk_nodes.shape)
    np.subtract(lnk_nodes[..., 1:], lnk_nodes[..., :-1], out=out[..., 1:])
    seg = out[..., 1:]
    seg *= 1.0 / dx
    np.minimum(np.maximum(seg, _SLOPE_RANGE[0], out=seg), _SLOPE_RANGE[1], out=seg)
    seg += 1.0
    out[..., 0] = out[..., 1]
    return out
