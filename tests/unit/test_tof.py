"""Time-of-flight model (rarefy.tof), its figures and the pure parts of `rarefy tof`.

References: the gate shapes follow from two sliding intervals (geometry); the trace
formulas S_F = Phi(L/t) L/t^2 and S_D = Phi(L/t)/t are kinetic theory (module docstring
of rarefy.tof). Tolerances: 1e-12 where both sides are closed forms in double precision;
otherwise the stated error of the numerical reference (scipy.integrate.quad, trapezoid
on a known grid).
"""

import math
import sys
import types

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.integrate import quad

from rarefy.gas.kinetic import flux_weighted_mean_speed, mean_speed as maxwell_mean_speed
from rarefy.gas.kinetic import most_probable_speed
from rarefy.post.speed_distribution import SpeedDistribution
from rarefy.tof import (Gate, channel_widths, chopper_gate, default_times, mean_speed,
                        naive_speed_distribution, peak_time, predict_trace,
                        recover_speed_distribution, rectangular_gate, response_matrix,
                        signal_mean_time, to_density_weighting, to_flux_weighting)

M_AR = 39.948 * 1.66053906660e-27
T = 300.0
VMP = float(most_probable_speed(M_AR, T))


def effusive(n_bins, v_max_over_vmp=4.0, label="Ar"):
    """Flux-weighted effusive Maxwellian, exact bin probabilities from the flux CDF
    F(u) = 1 - (1 + u^2) exp(-u^2), u = v/v_mp (kinetic theory)."""
    e = np.linspace(0.0, v_max_over_vmp * VMP, n_bins + 1)
    u = e / VMP
    return SpeedDistribution(e, np.diff(1.0 - (1.0 + u * u) * np.exp(-u * u)), None, "flux",
                             label, M_AR, T)


def small_hist():
    return SpeedDistribution(np.array([0.0, 200.0, 350.0, 500.0, 800.0]),
                             np.array([1.0, 3.0, 2.0, 0.5]), None, "flux", "h", M_AR, T)


# -------------------------------------------------------------------------------- gates
@pytest.mark.parametrize("w, b", [(1e-3, 0.0), (1e-3, 0.4e-3), (1e-3, 1e-3), (0.5e-3, 2e-3)])
def test_chopper_gate_shape_area_fwhm(w, b):
    # Overlap of slit [x, x+w] and beam [-b/2, b/2] moving at V, divided by b:
    # base (w+b)/V, top |w-b|/V, peak min(w,b)/b, integral w b / V / b = w/V,
    # FWHM = (base + top)/2 = max(w, b)/V (geometry; exact).
    V = 250.0
    g = chopper_gate(w, V, b)
    assert g.duration_s == pytest.approx((w + b) / V, rel=1e-12)
    assert g.area_s == pytest.approx(w / V, rel=1e-12)
    assert g.fwhm_s == pytest.approx(max(w, b) / V, rel=1e-12)
    peak = 1.0 if b == 0 else min(w, b) / b
    assert np.max(g.values) == pytest.approx(peak, rel=1e-12)
    top = abs(w - b) / V
    assert g.knots_s[2] - g.knots_s[1] == pytest.approx(top, abs=1e-18)
    assert g.centroid_s == pytest.approx(0.0, abs=1e-12 * g.duration_s)
    # numerical integral of transmission(): quad with the corners as break points is
    # exact for a piecewise-linear integrand to its 1e-10 relative tolerance
    val = quad(g.transmission, g.start_s, g.end_s, points=list(g.knots_s), epsrel=1e-10)[0]
    assert val == pytest.approx(w / V, rel=1e-9)


def test_chopper_gate_brute_force_overlap():
    # transmission(t) equals the overlap length of the moving slit and the beam / b,
    # computed directly on a few times (geometry; exact to rounding).
    w, b, V = 1e-3, 0.6e-3, 200.0
    g = chopper_gate(w, V, b)
    for t in np.linspace(-5e-6 - (w + b) / (2 * V), (w + b) / (2 * V) + 5e-6, 41):
        centre = V * t                      # slit centre relative to the beam centre
        lo, hi = max(centre - w / 2, -b / 2), min(centre + w / 2, b / 2)
        assert g.transmission(t) == pytest.approx(max(hi - lo, 0.0) / b, abs=1e-12)


def test_triangle_and_rectangle():
    tri = chopper_gate(1e-3, 100.0, 1e-3)
    assert tri.transmission(0.0) == pytest.approx(1.0)
    assert tri.transmission(0.5e-5) == pytest.approx(0.5)      # half way down the side
    rect = rectangular_gate(20e-6)
    assert rect.area_s == pytest.approx(20e-6, rel=1e-12)
    assert rect.fwhm_s == pytest.approx(20e-6, rel=1e-12)
    assert rect.transmission(np.array([-11e-6, -9e-6, 9e-6, 11e-6])).tolist() == [0, 1, 1, 0]
    line = chopper_gate(1e-3, 100.0)                          # b = 0: a rectangle
    assert line.area_s == pytest.approx(1e-5) and line.fwhm_s == pytest.approx(1e-5)


@pytest.mark.parametrize("args", [(0.0, 100.0), (1e-3, 0.0), (1e-3, 100.0, -1e-4)])
def test_chopper_gate_rejects_bad_input(args):
    with pytest.raises(ValueError):
        chopper_gate(*args)


def test_gate_validation():
    with pytest.raises(ValueError):
        Gate(np.array([0.0, 1.0, 0.5]), np.array([0.0, 1.0, 0.0]))   # not increasing
    with pytest.raises(ValueError):
        Gate(np.array([0.0, 1.0]), np.array([1.0, 0.0]))               # not closed
    with pytest.raises(ValueError):
        rectangular_gate(0.0)


# ------------------------------------------------------------------------------- traces
def test_trace_normalised_to_unit_area():
    d = effusive(200)
    gate = chopper_gate(1e-3, 200.0, 0.5e-3)
    tr = predict_trace(d, 0.5, gate)
    assert tr.sampling == "channel"
    assert np.sum(tr.signal * channel_widths(tr.times_s)) == pytest.approx(1.0, abs=1e-12)
    assert tr.times_s.size == 400 and tr.detector == "density"
    assert tr.mass_kg == M_AR and tr.label == "Ar"
    pt = predict_trace(d, 0.5, gate, sampling="point")
    area = np.sum(0.5 * (pt.signal[1:] + pt.signal[:-1]) * np.diff(pt.times_s))
    assert area == pytest.approx(1.0, abs=1e-12)


def test_channel_widths():
    np.testing.assert_allclose(channel_widths([1.0, 2.0, 4.0, 5.0]), [1.0, 1.5, 1.5, 1.0])
    assert np.allclose(channel_widths(np.linspace(0, 1, 11)), 0.1)


def test_instantaneous_gate_is_the_kinetic_formula():
    # Delta gate, pdf constant per bin: S_D(t) = p(L/t)/t and S_F(t) = p(L/t) L/t^2
    # exactly (kinetic theory), up to the common normalisation.
    d, L = small_hist(), 0.4
    t = np.linspace(3e-4, 8e-3, 301)
    pdf = d.pdf()
    v = L / t
    k = np.clip(np.searchsorted(d.edges_m_s, v, side="right") - 1, 0, 3)
    inside = v < d.edges_m_s[-1]
    p_at = np.where(inside, pdf[k], 0.0)
    for detector, ref in (("density", p_at / t), ("flux", p_at * L / t ** 2)):
        tr = predict_trace(d, L, None, detector, times_s=t, sampling="point")
        ref = ref / np.sum(0.5 * (ref[1:] + ref[:-1]) * np.diff(t))
        np.testing.assert_allclose(tr.signal, ref, rtol=1e-12, atol=1e-12 * ref.max())


def test_instantaneous_gate_channel_means():
    # Channel means of the same formulas, integrated here piece by piece: over a piece
    # of a channel inside bin k's arrival window, int p/t dt = p ln(b/a) (density) and
    # int p L/t^2 dt = p L (1/a - 1/b) (flux). Closed forms on both sides: 1e-12.
    d, L = small_hist(), 0.4
    t = np.linspace(3e-4, 8e-3, 57)
    w = channel_widths(t)
    pdf = d.pdf()
    arrival = np.sort(L / d.edges_m_s[1:])          # L/800, L/500, L/350, L/200
    for detector in ("density", "flux"):
        ref = np.zeros(t.size)
        for i in range(t.size):
            cuts = np.concatenate([[t[i] - w[i] / 2],
                                   [x for x in arrival if t[i] - w[i] / 2 < x < t[i] + w[i] / 2],
                                   [t[i] + w[i] / 2]])
            for a, b in zip(cuts[:-1], cuts[1:], strict=True):
                v = L / (0.5 * (a + b))
                k = int(np.searchsorted(d.edges_m_s, v, side="right") - 1)
                if k > 3:
                    continue
                ref[i] += pdf[k] * (np.log(b / a) if detector == "density"
                                    else L * (1 / a - 1 / b))
            ref[i] /= w[i]
        tr = predict_trace(d, L, None, detector, times_s=t)
        ref = ref / np.sum(ref * w)
        np.testing.assert_allclose(tr.signal, ref, rtol=1e-12, atol=1e-12 * ref.max())


def test_density_and_flux_detectors_differ_by_t():
    # S_F / S_D = L/t for any distribution with an instantaneous gate (kinetic theory:
    # density = flux / v), so S_D / (t S_F) is the same constant at every time.
    d, L = effusive(100), 0.5
    t = default_times(d, L, None)
    sd = predict_trace(d, L, None, "density", times_s=t, sampling="point").signal
    sf = predict_trace(d, L, None, "flux", times_s=t, sampling="point").signal
    ok = sf > 1e-6 * sf.max()
    ratio = sd[ok] / (sf[ok] * t[ok])
    assert np.ptp(ratio) / np.mean(ratio) < 1e-12
    # with a finite gate it holds only approximately, to first order in gate/t: the
    # check is sharp enough to see the gate (the ratio moves by more than 1e-6)
    g = rectangular_gate(0.1 * L / VMP)
    sd_g = predict_trace(d, L, g, "density", times_s=t, sampling="point").signal
    sf_g = predict_trace(d, L, g, "flux", times_s=t, sampling="point").signal
    ratio_g = sd_g[ok] / (sf_g[ok] * t[ok])
    assert np.ptp(ratio_g) / np.mean(ratio_g) > 1e-6


@pytest.mark.parametrize("detector, ell", [("flux", 0.0), ("density", 0.0),
                                           ("density", 0.04)])
def test_response_matrix_matches_numerical_convolution(detector, ell):
    # Closed-form gate convolution vs scipy quad of g(t') S_delta(t - t') (tolerance:
    # quad's 1e-10 relative, times the column scale).
    d, L = small_hist(), 0.5
    t = np.linspace(4e-4, 6e-3, 23)
    gate = chopper_gate(1e-3, 40.0, 0.7e-3)       # a wide gate, 25 us base x 2
    m = response_matrix(d.edges_m_s, t, L, gate, detector, ell, sampling="point")

    def delta(tt):
        return response_matrix(d.edges_m_s, [tt], L, None, detector, ell, "point")[0]

    scale = np.abs(m).max()
    for i, ti in enumerate(t):
        for k in range(4):
            def f(tp, ti=ti, k=k):
                return gate.transmission(tp) * delta(ti - tp)[k]
            val = quad(f, gate.start_s, gate.end_s, points=list(gate.knots_s), limit=200,
                       epsabs=1e-12 * scale)[0]
            assert abs(val - m[i, k]) <= 1e-8 * scale


@pytest.mark.parametrize("detector, ell", [("flux", 0.0), ("density", 0.05)])
@pytest.mark.parametrize("gate", [None, chopper_gate(1e-3, 100.0, 0.5e-3),
                                  rectangular_gate(1e-3)])
def test_channel_means_match_numerical_average(detector, ell, gate):
    # Channel sampling = (1/w) int over the channel of the point-sampled signal; quad
    # with every kink and step as a break point (tolerance: quad's 1e-13 absolute on a
    # unit-scale integrand, i.e. 1e-10 of the column scale).
    d, L = small_hist(), 0.5
    t = np.linspace(1e-3, 6e-3, 11)                 # channels 0.5 ms wide
    w = channel_widths(t)
    m = response_matrix(d.edges_m_s, t, L, gate, detector, ell, sampling="channel")
    knots = [0.0] if gate is None else list(gate.knots_s)
    arrivals = [L / v for v in d.edges_m_s[1:]]
    if ell:
        arrivals = [x * (L + s) / L for x in arrivals for s in (-ell / 2, ell / 2)]
    for i in (0, 3, 6, 10):
        c0, c1 = t[i] - w[i] / 2, t[i] + w[i] / 2
        pts = sorted({a + g for a in arrivals for g in knots if c0 < a + g < c1})
        for k in range(4):
            def f(tt, k=k):
                return response_matrix(d.edges_m_s, [tt], L, gate, detector, ell,
                                       "point")[0, k]
            val = quad(f, c0, c1, points=pts or None, limit=500, epsabs=1e-13)[0] / w[i]
            assert abs(val - m[i, k]) <= 1e-10 * np.abs(m).max()


def test_ionizer_kernel_is_the_average_over_flight_length():
    # Instantaneous gate: S(t; L, l) = (1/l) int S(t; L') dL' over L +- l/2
    # (definition); quad over L' with the bin-edge kinks as break points.
    d, L, ell = small_hist(), 0.5, 0.05
    t = np.linspace(5e-4, 1.2e-2, 17)
    m = response_matrix(d.edges_m_s, t, L, None, "density", ell, sampling="point")
    for i, ti in enumerate(t):
        for k in range(4):
            def f(lp, ti=ti, k=k):
                return response_matrix(d.edges_m_s, [ti], lp, None, "density", 0.0,
                                       "point")[0, k]
            pts = [x for x in ti * d.edges_m_s if L - ell / 2 < x < L + ell / 2]
            val = quad(f, L - ell / 2, L + ell / 2, points=pts or None, epsabs=1e-14)[0]
            assert val / ell == pytest.approx(m[i, k], rel=1e-9, abs=1e-12 * m.max())


def test_flux_detector_with_ionizer_is_rejected():
    with pytest.raises(ValueError, match="density detector"):
        predict_trace(small_hist(), 0.5, None, "flux", ionizer_length_m=0.01)
    with pytest.raises(ValueError):
        predict_trace(small_hist(), 0.5, None, "current")


def test_density_weighted_input_is_converted():
    # Phi ~ v f (kinetic theory): a density histogram and its flux conversion give the
    # same trace.
    dens = to_density_weighting(effusive(60))
    assert dens.weighting == "density"
    a = predict_trace(dens, 0.5, rectangular_gate(1e-5))
    b = predict_trace(to_flux_weighting(dens), 0.5, rectangular_gate(1e-5))
    np.testing.assert_allclose(a.signal, b.signal, rtol=1e-12)


def test_weighting_round_trip_and_maxwell_means():
    # Flux mean sqrt(9 pi kT/8m), density mean sqrt(8kT/(pi m)) (kinetic theory, Bird
    # 1994 ch. 4). Bin-centre means of a 2000-bin histogram to 5 v_mp: midpoint-rule
    # error ~ w^2/24 |f''| relative ~ (1/400)^2 -> 1e-5; tail beyond 5 v_mp ~ 1e-10.
    d = effusive(2000, 5.0)
    assert mean_speed(d) == pytest.approx(float(flux_weighted_mean_speed(M_AR, T)), rel=2e-5)
    assert mean_speed(d, "density") == pytest.approx(float(maxwell_mean_speed(M_AR, T)),
                                                     rel=2e-5)
    back = to_flux_weighting(to_density_weighting(d))
    np.testing.assert_allclose(back.counts, d.counts, rtol=1e-13)
    assert to_flux_weighting(d) is d


def test_mean_time_of_an_effusive_trace():
    # Instantaneous gate, flux detector: the signal-weighted mean arrival time is
    # L <1/v>_flux = L sqrt(pi) / (2 v_mp) (kinetic theory: int u^2 e^-u^2 du /
    # int u^3 e^-u^2 du = (sqrt(pi)/4) / (1/2)). Error budget: molecules slower than
    # v_mp/40 arrive after the window, (2/3)(1/40)^3 / (sqrt(pi)/2) = 1.2e-5 of the mean;
    # the histogram's constant pdf in the slowest bins, of the same order; the channel
    # sum of t S differs from int t S dt by sum S' dt^3/12, which telescopes to the
    # (vanishing) end values -> about 2.5e-5 in all, tolerance 1e-4 (measured 7e-7).
    d, L = effusive(1000, 6.0), 0.5
    a = L / VMP
    t = np.linspace(0.05 * a, 40 * a, 4000)
    tr = predict_trace(d, L, None, "flux", times_s=t)
    assert signal_mean_time(tr) == pytest.approx(L * math.sqrt(math.pi) / (2 * VMP),
                                                 rel=1e-4)


def test_flux_quantiles_skip_empty_bins():
    # piecewise-linear flux CDF: with counts 1, 2, 1 in bins [3,4], [6,7], [8,9] the
    # 25 % and 75 % points are 4 and 7, the 0.05 % / 99.95 % points 3.002 and 8.998
    # (empty bins carry no molecules, so no quantile falls inside them)
    from rarefy.tof import flux_quantile_speeds

    d = SpeedDistribution(np.arange(0.0, 11.0), np.array([0, 0, 0, 1, 0, 0, 2, 0, 1, 0.0]),
                          None, "flux", "x", M_AR)
    assert flux_quantile_speeds(d, 0.5) == pytest.approx((4.0, 7.0), rel=1e-12)
    assert flux_quantile_speeds(d, 0.999) == pytest.approx((3.002, 8.998), rel=1e-12)


def test_mean_speed_stderr_by_hand():
    # two bins, centres 50 and 150 m/s, counts 1 and 3 (mean 125), errors 0.1 and 0.2:
    # sigma = sqrt((75 * 0.1)^2 + (25 * 0.2)^2) / 4 (linear propagation)
    from rarefy.tof import mean_speed_stderr

    d = SpeedDistribution(np.array([0.0, 100.0, 200.0]), np.array([1.0, 3.0]),
                          np.array([0.1, 0.2]), "flux", "h", M_AR)
    assert mean_speed(d) == pytest.approx(125.0, rel=1e-14)
    assert mean_speed_stderr(d) == pytest.approx(math.hypot(7.5, 5.0) / 4.0, rel=1e-14)
    assert math.isnan(mean_speed_stderr(small_hist()))


def test_peak_time_of_the_analytic_density_trace():
    # t^-4 exp(-(a/t)^2) peaks at t = a / sqrt(2) (d/dt of its logarithm). peak_time
    # fits a parabola through three samples 1e-3 a apart: offset ~ h^2 S'''/S'' ~ 1e-6
    # relative -> tolerance 1e-5. (A histogram trace is not used here: its bin steps,
    # ~1e-3 of the signal, move the maximum of the flat top by up to ~1 %.)
    from rarefy.tof import Trace

    a = 1e-3
    t = np.arange(0.3, 3.0, 1e-3) * a
    s = t ** -4 * np.exp(-(a / t) ** 2)
    tr = Trace(t, s / np.sum(0.5 * (s[1:] + s[:-1]) * np.diff(t)), "density", 0.5, None)
    assert peak_time(tr) == pytest.approx(a / math.sqrt(2.0), rel=1e-5)
    assert abs(peak_time(tr) - a / math.sqrt(2.0)) < abs(t[np.argmax(s)] - a / math.sqrt(2.0))


@pytest.mark.parametrize("sampling, tol", [("channel", 1.5e-3), ("point", 3e-3)])
def test_naive_mapping_inverts_an_ideal_trace(sampling, tol):
    # With an instantaneous gate the naive t -> L/t mapping is the exact inverse up to
    # the integration of the sampled trace, which spreads each bin's step over one
    # sample interval: error proportional to dt (measured at 20000 samples: 8e-4 of the
    # peak pdf for channel means, 1.6e-3 for point values; 1.0e-2 and 1.9e-2 at 2000)
    # -> tolerances of about twice that.
    d, L = effusive(40), 0.5
    t = np.linspace(0.2 * L / VMP, 30 * L / VMP, 20000)
    for det in ("density", "flux"):
        tr = predict_trace(d, L, None, det, times_s=t, sampling=sampling)
        nv = naive_speed_distribution(tr, d.edges_m_s)
        assert nv.weighting == "flux"
        np.testing.assert_allclose(nv.pdf(), d.pdf(), atol=tol * d.pdf().max())


def test_recovery_returns_flux_histogram_with_errors():
    d, L = effusive(400), 0.5
    gate = rectangular_gate(0.05 * L / VMP)
    tr = predict_trace(d, L, gate, "density", times_s=np.linspace(0.5 * L / VMP, 3 * L / VMP,
                                                                  300))
    edges = np.linspace(0.0, 4 * VMP, 41)
    rec = recover_speed_distribution(tr, gate, edges)
    assert rec.weighting == "flux" and rec.mass_kg == M_AR
    assert np.sum(rec.counts) == pytest.approx(1.0)
    assert np.all(rec.counts >= 0)
    # bins arriving wholly outside 0.5..3 L/v_mp + gate (v < L/(3 L/v_mp) + ...) are
    # not seen: zero with NaN error
    seen = np.isfinite(rec.counts_stderr)
    assert not seen[0] and not seen[-1] and seen[20]
    assert np.all(rec.counts[~seen] == 0)
    with pytest.raises(ValueError):
        recover_speed_distribution(tr, gate, edges, regularisation=-1.0)


# ---------------------------------------------------------------------------------- CLI
def test_gate_from_options():
    from rarefy.cli_errors import InputError
    from rarefy.cli_tof import gate_from_options

    g = gate_from_options(open_time="20 us")
    assert g.area_s == pytest.approx(20e-6)
    g = gate_from_options(slit_width="1 mm", rim_speed="200 m/s", beam_width="0.5 mm")
    assert g.area_s == pytest.approx(5e-6) and g.fwhm_s == pytest.approx(5e-6)
    bad = [dict(), dict(open_time="1 us", slit_width="1 mm", rim_speed="1"),
           dict(slit_width="1 mm"), dict(open_time="0 s"), dict(open_time="1 us",
                                                              rim_speed="3"),
           dict(slit_width="-1 mm", rim_speed="100"), dict(open_time="5 mm"),
           dict(slit_width="1 mm", rim_speed="100", beam_width="-1 mm")]
    for kw in bad:
        with pytest.raises(InputError) as exc:
            gate_from_options(**kw)
        assert "\n" not in str(exc.value.format_message())


def test_coarsen_and_file_stem():
    from rarefy.cli_tof import coarsen, file_stem

    d = SpeedDistribution(np.linspace(0, 250, 251), np.ones(250), np.ones(250), "flux", "x",
                          M_AR)
    c = coarsen(d, 100)
    assert len(c.counts) <= 100 and c.edges_m_s[-1] == 250 and np.sum(c.counts) == 250
    assert c.counts_stderr[0] == pytest.approx(math.sqrt(3))   # 3 bins in quadrature
    assert coarsen(small_hist()) .counts.size == 4
    assert file_stem("inlet probe/1") == "inlet_probe_1"


def test_choose_n_times():
    # channels at most half the gate FWHM and half the arrival spread L dv/v^2 of a
    # recovery bin at the 99.95 % flux speed, unless capped at MAX_TIMES
    from rarefy.cli_tof import MAX_TIMES, MIN_TIMES, choose_n_times
    from rarefy.tof import flux_quantile_speeds

    d, L = effusive(160), 0.5
    edges = d.edges_m_s
    for gate in (rectangular_gate(50e-6), rectangular_gate(5e-6), rectangular_gate(1e-3)):
        n = choose_n_times(d, L, gate, 0.0, edges)
        t = default_times(d, L, gate, 0.0, n)
        dt = t[1] - t[0]
        v_high = flux_quantile_speeds(d)[1]
        limit = 0.5 * min(gate.fwhm_s, L * (edges[1] - edges[0]) / v_high ** 2)
        assert MIN_TIMES <= n <= MAX_TIMES
        assert dt <= limit * (1 + 1e-9) or n == MAX_TIMES
        assert n == MIN_TIMES or dt > 0.5 * limit     # not needlessly fine


def test_analyse_and_outputs(tmp_path):
    from rarefy.cli_tof import analyse, format_summary, write_outputs

    d = effusive(160)
    gate = rectangular_gate(50e-6)
    res = analyse(d, 0.5, gate, "density", 0.01)
    text = format_summary(res, "throat")
    for word in ("peak arrival time", "mean flight time", "m/s", "ms", "recovered"):
        assert word in text
    ref = float(flux_weighted_mean_speed(M_AR, T))
    assert res["source_mean_speed_m_s"] == pytest.approx(ref, rel=1e-3)
    assert res["recovered_mean_speed_m_s"] == pytest.approx(ref, rel=0.02)
    paths = write_outputs(res, tmp_path, "throat")
    assert [p.name for p in paths] == ["tof_throat.csv", "tof_throat.png",
                                       "speeds_from_tof_throat.csv",
                                       "speeds_from_tof_throat.png"]
    data = _read_csv(tmp_path / "tof_throat.csv", "time_s,signal_per_s")
    assert data.shape == (res["n_times"], 2)
    assert "time channels" in text and "standard error" not in text   # no stderr here
    assert np.sum(data[:, 1] * channel_widths(data[:, 0])) == pytest.approx(
        1.0, rel=1e-6)   # channel means, 9 significant digits written
    sp = _read_csv(tmp_path / "speeds_from_tof_throat.csv", "speed_low_m_s,speed_high_m_s,"
                   "recovered_pdf_s_per_m,recovered_pdf_stderr_s_per_m,naive_pdf_s_per_m,"
                   "source_pdf_s_per_m")
    assert sp.shape == (80, 6)   # 160 source bins merged in pairs to <= 100
    assert all(p.stat().st_size > 1000 for p in paths)


def _read_csv(path, header):
    lines = path.read_text().splitlines()
    assert all(x.startswith("#") for x in lines[:lines.index(header)])
    return np.loadtxt(lines[lines.index(header) + 1:], delimiter=",", ndmin=2)


def _invoke(*args):
    from rarefy.cli_tof import tof

    return CliRunner().invoke(tof, list(args))


@pytest.mark.parametrize("args, words", [
    (["--flight-length", "0.5 m", "--open-time", "10 us"], "--source"),
    (["--source", "throat", "--open-time", "10 us"], "--flight-length"),
    (["--source", "throat", "--flight-length", "0 m", "--open-time", "1 us"],
     "--flight-length must be > 0"),
    (["--source", "throat", "--flight-length", "0.5 Pa", "--open-time", "1 us"],
     "--flight-length"),
    (["--source", "throat", "--flight-length", "0.5", "--open-time", "1 us",
      "--slit-width", "1 mm", "--rim-speed", "100"], "not both"),
    (["--source", "throat", "--flight-length", "0.5"], "--open-time"),
    (["--source", "throat", "--flight-length", "0.5", "--open-time", "1 us",
      "--detector", "current"], "--detector"),
    (["--source", "throat", "--flight-length", "0.5", "--open-time", "1 us",
      "--detector", "flux", "--ionizer-length", "1 cm"], "--ionizer-length"),
    (["--source", "throat", "--flight-length", "0.5", "--open-time", "1 us",
      "--ionizer-length", "1.5 m"], "--ionizer-length"),
])
def test_command_input_errors(tmp_path, args, words):
    r = _invoke(str(tmp_path), *args)
    assert r.exit_code == 2, r.output
    assert words in r.output and len(r.output.strip().splitlines()) == 1, r.output


def test_command_rundir_must_exist(tmp_path):
    r = _invoke(str(tmp_path / "nope"), "--source", "a", "--flight-length", "1",
                "--open-time", "1 us")
    assert r.exit_code == 2 and "RUNDIR" in r.output


def test_command_end_to_end_with_a_stand_in_loader(tmp_path, monkeypatch):
    # The loader rarefy.post.probes.load_speed_distribution is supplied elsewhere; a
    # stand-in module in sys.modules serves the import inside the command either way.
    calls = []

    def load(rundir, name):
        calls.append((rundir, name))
        return effusive(120, label=name)

    fake = types.ModuleType("rarefy.post.probes")
    fake.load_speed_distribution = load
    monkeypatch.setitem(sys.modules, "rarefy.post.probes", fake)
    out = tmp_path / "out"
    r = _invoke(str(tmp_path), "--source", "throat", "--flight-length", "50 cm",
                "--slit-width", "1 mm", "--rim-speed", "250 m/s", "--beam-width", "1 mm",
                "--ionizer-length", "1 cm", "-o", str(out))
    assert r.exit_code == 0, r.output
    assert calls and calls[0][1] == "throat"
    for name in ("tof_throat.csv", "tof_throat.png", "speeds_from_tof_throat.csv",
                 "speeds_from_tof_throat.png"):
        assert (out / name).is_file()
    assert "peak arrival time" in r.output and "m/s" in r.output
