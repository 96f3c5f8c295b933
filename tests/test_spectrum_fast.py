"""The analytic solver gives a planet the same spectrum alone and in any chunk of a catalogue.

The opacity comes from a process-wide temperature lattice
(:mod:`snrkit.atmosphere.analytic_kernel`), so grouping cannot change an
answer; and the lattice's interpolation in temperature stays close to the
opacity computed at each planet's own temperature.  Tolerances: 1e-3 scale
heights for grouping and chunking (the one-engine requirement), 0.05 scale
heights for the lattice interpolation (a planning tolerance, common practice,
no source).
"""

import numpy as np
import pytest

from snrkit.atmosphere import spectrum as spm
from snrkit.atmosphere import analytic
from snrkit.atmosphere import solve
from snrkit.atmosphere import mixture
from snrkit.atmosphere import analytic_kernel as ak
from snrkit.atmosphere import analytic_lattice as al

SCENARIOS = ["h2-clear-solar", {"scenario": "n2-o2-temperate", "cold_trap": {}}, "h2-cloudy-solar",
             "n2-o2-temperate"]
IDS = ["h2-clear-solar", "n2-o2-temperate-well-mixed", "h2-cloudy-solar", "n2-o2-cold-trap"]


def _planets(n, seed=8):
    rng = np.random.default_rng(seed)
    rp = rng.uniform(1.5, 12.0, n)
    return dict(rp=rp, mp=1.436 * rp ** 1.7, rs=rng.uniform(0.3, 1.2, n),
                teq=np.geomspace(250.0, 1900.0, n))


def _spectrum(p, sl, edges, scenario):
    return spm.transmission_spectrum(scenario, p["rp"][sl], p["rs"][sl], planet_mass=p["mp"][sl],
                                     equilibrium_temperature=p["teq"][sl], wavelength_edges=edges)


@pytest.mark.parametrize("scenario", SCENARIOS, ids=IDS)
def test_planet_alone_equals_planet_in_catalogue(scenario, monkeypatch):
    p = _planets(40)
    edges = mixture.wavelength_bin_edges(30, 0.6e-6, 5.0e-6) * 1e6
    whole = _spectrum(p, slice(None), edges, scenario)
    al.clear_lattice_cache()                         # a fresh process, other chunk sizes
    monkeypatch.setattr(ak, "CHUNK_ELEMENTS", 997)
    monkeypatch.setattr(solve, "_CHUNK_ELEMENTS", 20_000)
    for i in range(0, 40, 9):
        one = _spectrum(p, slice(i, i + 1), edges, scenario)
        h = float(one["scale_height_km"].values[0])
        diff = np.abs(whole["effective_height_km"].values[i] - one["effective_height_km"].values[0])
        assert np.max(diff) < 1e-3 * h, (i, np.max(diff) / h)


def _kernel_setup(scenario, n, seed):
    """Scenario, source, bins, line-shape nodes, planets, temperatures and lattice opacity."""
    from snrkit.atmosphere.scenarios import load_scenario
    sc = load_scenario(scenario)
    src = mixture._default_opacity_source()
    edges = mixture.wavelength_bin_edges(30, 0.6e-6, 5.0e-6)
    nodes = solve._line_shape_pressures(src)
    p = _planets(n, seed=seed)
    t = sc.temperature(p["teq"]) * np.ones(n)
    lat = al.lattice_opacity(src, sc.mixing_ratios, (sc.haze_enhancement, sc.haze_slope), edges,
                             8, None, nodes, t)
    r0 = p["rp"] * 6.371e6
    g0 = 6.674e-11 * p["mp"] * 5.972e24 / r0 ** 2
    return sc, src, edges, nodes, t, lat, r0, g0


@pytest.mark.parametrize("scenario", SCENARIOS[:3], ids=IDS[:3])
def test_lattice_close_to_opacity_at_each_temperature(scenario):
    # the kernel with the lattice's opacity against the kernel with the mixture at the
    # planet's own temperature (the former per-planet path), same radii otherwise
    sc, src, edges, nodes, t, lat, r0, g0 = _kernel_setup(scenario, 12, 3)
    exact = mixture.mixture_opacity(src, sc.mixing_ratios, edges, np.broadcast_to(t[:, None], (12, nodes.size)),
                                8, sc.haze_enhancement, sc.haze_slope, None,
                                pressure_Pa=np.broadcast_to(nodes, (12, nodes.size)))
    floor = np.full(12, sc.cloud_top_pressure_Pa or 1e3 * sc.reference_pressure_Pa)
    args = (t, np.full(12, sc.mean_molecular_weight), r0, np.full(12, sc.reference_pressure_Pa),
            g0, floor, np.full(12, 1e-6))
    with np.errstate(divide="ignore"):
        ln_ex = (np.log(np.maximum(exact["line"], 1e-300)), np.log(exact["continuum"][:, 0]),
                 np.log(exact["cia"][:, 0]))
    r_lat, _ = ak.root_radius(lat["lnk"], np.log(nodes), lat["ln_continuum"], lat["ln_cia"], *args)
    r_ex, _ = ak.root_radius(ln_ex[0], np.log(nodes), ln_ex[1], ln_ex[2], *args)
    h = 1.380649e-23 * t / (sc.mean_molecular_weight * 1.66054e-27 * g0)
    w = lat["g_weights"]
    # bin-average effective height, in scale heights
    d_lat = np.sqrt(np.sum(w * r_lat ** 2, axis=-1))
    d_ex = np.sqrt(np.sum(w * r_ex ** 2, axis=-1))
    err = np.abs(d_lat - d_ex) / h[:, None]
    i, j = np.unravel_index(np.argmax(err), err.shape)
    assert np.max(err) < 0.05, (np.max(err), t[i], edges[j] * 1e6)


def test_single_power_law_matches_reference_formula():
    # root_radius with pressure-independent lines equals analytic_radius (the
    # reference implementation of the same formulas) to 1e-6 scale heights
    rng = np.random.default_rng(1)
    npl, nw, ng = 5, 7, 4
    T = rng.uniform(300, 1500, npl)
    mu = rng.uniform(2.3, 30, npl)
    r0 = rng.uniform(6e6, 7e7, npl)
    g0 = rng.uniform(5, 25, npl)
    p0 = np.full(npl, 1e5)
    floor = np.full(npl, 1e8)
    top = np.full(npl, 1e-6)
    line = 10 ** rng.uniform(-32, -24, (npl, nw, ng))
    cont = 10 ** rng.uniform(-33, -30, (npl, nw))
    cia = 10 ** rng.uniform(-60, -56, (npl, nw))
    args = (T, mu, r0, p0, g0, floor, top)
    ref, sref = analytic.analytic_radius(line, cont, cia, *args)
    got, sgot = ak.root_radius(np.log(line)[:, None], np.log([1e3]), np.log(cont), np.log(cia), *args)
    h = 1.380649e-23 * T / (mu * 1.66054e-27 * g0)
    assert np.array_equal(sref, sgot)
    assert np.max(np.abs(got - ref) / h[:, None, None]) < 1e-6


def test_same_answer_with_one_or_two_threads_and_any_chunk(monkeypatch):
    p = _planets(30, seed=4)
    edges = mixture.wavelength_bin_edges(30, 0.6e-6, 5.0e-6) * 1e6
    monkeypatch.setenv("SNRKIT_THREADS", "1")
    one = _spectrum(p, slice(None), edges, "h2-clear-solar")["transit_depth_ppm"].values
    monkeypatch.setenv("SNRKIT_THREADS", "2")
    monkeypatch.setattr(ak, "CHUNK_ELEMENTS", 1531)
    two = _spectrum(p, slice(None), edges, "h2-clear-solar")["transit_depth_ppm"].values
    np.testing.assert_array_equal(one, two)


def test_thread_setting_is_checked(monkeypatch):
    from snrkit.errors import InputError
    monkeypatch.setenv("SNRKIT_THREADS", "many")
    with pytest.raises(InputError, match="SNRKIT_THREADS"):
        ak.worker_threads()


@pytest.mark.parametrize("shift_km", [-300.0, -40.0, 25.0, 500.0])
def test_shifted_resolve_equals_fresh_solve(shift_km):
    # the calibration's second solve by translation (G M fixed) against a solve from
    # scratch at the new reference radius: 1e-5 scale heights (two Newton steps from
    # the translated root; the H/R terms take the second step's shares carried to the
    # new root -- left uncarried or carried the wrong way they move radii by ~3e-4 H)
    sc, src, edges, nodes, t, op, r0, g0 = _kernel_setup("h2-clear-solar", 6, 11)
    mu = np.full(6, sc.mean_molecular_weight)
    rest = (np.full(6, sc.reference_pressure_Pa),)
    tail = (np.full(6, 1e3 * sc.reference_pressure_Pa), np.full(6, 1e-6))
    lin = (op["lnk"], np.log(nodes), op["ln_continuum"], op["ln_cia"])
    _, _, state = ak.root_radius(*lin, t, mu, r0, *rest, g0, *tail, return_state=True)
    r1 = r0 + shift_km * 1e3
    g1 = g0 * (r0 / r1) ** 2
    shifted, s_sat = ak.root_radius(*lin, t, mu, r1, *rest, g1, *tail, previous=state)
    fresh, f_sat = ak.root_radius(*lin, t, mu, r1, *rest, g1, *tail)
    h = 1.380649e-23 * t / (mu * 1.66054e-27 * g1)
    assert np.array_equal(s_sat, f_sat)
    err = np.abs(shifted - fresh) / h[:, None, None]
    assert np.max(err) < 1e-5, (np.max(err), np.unravel_index(np.argmax(err), err.shape), h, r1 / h)


def test_opacity_under_the_floor_is_never_read():
    # A cloud deck at 100 Pa, between the 10 Pa and 1e3 Pa line-shape nodes: the radii
    # (including roots "below" the deck, which stand for the floor term H E1(tau_f))
    # must not change when the opacity at the deeper nodes (1e5, 1e7 Pa) changes.
    sc, src, edges, nodes, t, op, r0, g0 = _kernel_setup("h2-warm-solar", 6, 5)
    mu = np.full(6, sc.mean_molecular_weight)
    args = (t, mu, r0, np.full(6, sc.reference_pressure_Pa), g0, np.full(6, 100.0),
            np.full(6, 1e-6))
    lin = (np.log(nodes), op["ln_continuum"], op["ln_cia"])
    base, _ = ak.root_radius(op["lnk"], *lin, *args)
    deep = np.log(nodes) > np.log(1e3) + 1e-9
    changed = op["lnk"].copy()
    changed[:, deep] += 9.0                     # 8000 times the opacity under the deck
    other, _ = ak.root_radius(changed, *lin, *args)
    np.testing.assert_array_equal(base, other)


def test_range_note_on_every_call():
    # temperatures outside the tables' range are noted each time, with the planets' own values
    from snrkit.atmosphere.opacity import OpacityRangeWarning
    from snrkit.atmosphere.scenarios import load_scenario
    sc = load_scenario("h2-clear-solar")
    src = mixture._default_opacity_source()
    edges = mixture.wavelength_bin_edges(30, 0.6e-6, 5.0e-6)
    for _ in range(2):
        with pytest.warns(OpacityRangeWarning, match="3500"):
            al.lattice_opacity(src, sc.mixing_ratios, (0.0, -4.0), edges, 8, None, None,
                               np.array([3500.0]))


def test_moved_floor_is_solved_afresh():
    # a refraction floor moves with R0 and g0: the translation does not apply and the
    # answer equals a fresh solve
    sc, src, edges, nodes, t, op, r0, g0 = _kernel_setup("h2-clear-solar", 4, 2)
    mu = np.full(4, sc.mean_molecular_weight)
    p0 = np.full(4, sc.reference_pressure_Pa)
    lin = (op["lnk"], np.log(nodes), op["ln_continuum"], op["ln_cia"])
    _, _, state = ak.root_radius(*lin, t, mu, r0, p0, g0, np.full(4, 1e4), np.full(4, 1e-6),
                                 return_state=True)
    r1 = r0 + 50e3
    g1 = g0 * (r0 / r1) ** 2
    moved = (np.full(4, 3e3), np.full(4, 1e-6))
    again, _ = ak.root_radius(*lin, t, mu, r1, p0, g1, *moved, previous=state)
    fresh, _ = ak.root_radius(*lin, t, mu, r1, p0, g1, *moved)
    np.testing.assert_array_equal(again, fresh)


def test_no_raw_slope_outside_the_nodes():
    # A g-point with its ln k at the tables' floor (1e-300) at every node but the top one
    # (a far wing listed only at the lowest pressure): above the top node the line must
    # continue with a physical exponent, not the raw node-to-node slope (which would
    # make the atmosphere opaque at 1e-6 Pa and put the radius 28 H up).
    sc, src, edges, nodes, t, op, r0, g0 = _kernel_setup("co2-thick", 3, 6)
    mu = np.full(3, sc.mean_molecular_weight)
    args = (t, mu, r0, np.full(3, sc.reference_pressure_Pa), g0,
            np.full(3, 1e3 * sc.reference_pressure_Pa), np.full(3, 1e-6))
    lin = (np.log(nodes), op["ln_continuum"], op["ln_cia"])
    absent = np.full_like(op["lnk"], np.log(1e-300))
    wing = absent.copy()
    wing[:, 0] = -318.0
    r_absent, s_absent = ak.root_radius(absent, *lin, *args)
    r_wing, s_wing = ak.root_radius(wing, *lin, *args)
    h = 1.380649e-23 * t / (mu * 1.66054e-27 * g0)
    assert not s_wing.any()
    assert np.max(np.abs(r_wing - r_absent) / h[:, None, None]) < 1e-3


def test_floor_above_the_bound_atmosphere_is_noted():
    # a floor where r/H(r) < 3: the isothermal atmosphere is unbound there, and the
    # analytic radii are not meaningful -- said, as the layered solver says it
    from snrkit.errors import SnrkitWarning
    sc, src, edges, nodes, t, op, r0, g0 = _kernel_setup("h2-clear-solar", 2, 3)
    mu = np.full(2, 2.3)
    weak = g0 * np.array([1.0, 1e-3])              # the second planet barely holds its gas
    args = (np.full(2, 3000.0), mu, r0, np.full(2, 1e5), weak, np.full(2, 1e2), np.full(2, 1e-6))
    with pytest.warns(SnrkitWarning, match="1 planet"):
        ak.root_radius(op["lnk"], np.log(nodes), op["ln_continuum"], op["ln_cia"], *args)
