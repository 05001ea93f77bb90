"""Checks of rarefy.theory.maxwell against outside references.

Sources named in each test:
* scipy.stats.maxwell (scipy's implementation of the Maxwell distribution, pdf/cdf/
  mean/mode), with scale sqrt(kT/m);
* scipy.integrate.quad (adaptive quadrature) for normalisations and moments whose
  values come from kinetic theory: flux-weighted mean speed sqrt(9 pi kT/8m) and mean
  energy 2kT of crossing molecules (Bird 1994, ch. 4, from memory), mean square speed
  u^2 + 3kT/m of a drifting Maxwellian (equipartition plus the drift, Bird 1994 ch. 4,
  from memory);
* CODATA 2018 k_B = 1.380649e-23 J/K (exact) and the IUPAC standard atomic weight of
  argon, 39.948, with the CODATA 2018 atomic mass constant 1.66053906660e-27 kg.

Tolerances: closed forms against scipy agree to rounding, ~1e-15 relative; 1e-12 is
used. quad reports its own error estimate (asserted below 1e-10); 1e-9 relative is used.
Every pytest.approx sets abs=0: its default absolute tolerance (1e-12) would exceed SI
energies (~1e-20 J) and pdfs (~1e-3 s/m) and make the check vacuous.
"""

import math

import numpy as np
import pytest
from scipy import integrate, stats

from rarefy.theory import (
    characteristic_speeds,
    component_pdf,
    drifting_speed_pdf,
    flux_speed_cdf,
    flux_speed_pdf,
    speed_cdf,
    speed_pdf,
)
from rarefy.theory.maxwell import DRIFT_ZERO_FRACTION

KB = 1.380649e-23  # J/K, CODATA 2018 (exact)
M_AR = 39.948 * 1.66053906660e-27  # kg, IUPAC atomic weight x CODATA 2018 u
M_HE = 4.002602 * 1.66053906660e-27  # kg, IUPAC atomic weight of helium

CLOSED = 1e-12  # closed form vs scipy: rounding only
QUAD = 1e-9  # adaptive quadrature, error estimate checked below 1e-10

CASES = [(M_AR, 300.0), (M_AR, 77.0), (M_HE, 1500.0)]


def _scale(m, t):
    """scipy.stats.maxwell scale parameter sqrt(kT/m), m/s."""
    return math.sqrt(KB * t / m)


def _quad(f, lo, hi):
    val, err = integrate.quad(f, lo, hi, limit=200, epsabs=0.0, epsrel=1e-12)
    assert err < 1e-10 * max(abs(val), 1.0)
    return val


@pytest.mark.parametrize("m, t", CASES)
def test_speed_pdf_and_cdf_match_scipy_maxwell(m, t):
    """scipy.stats.maxwell pdf and cdf with scale sqrt(kT/m)."""
    ref = stats.maxwell(scale=_scale(m, t))
    v = np.linspace(0.0, 8.0, 161) * _scale(m, t)
    np.testing.assert_allclose(speed_pdf(v, m, t), ref.pdf(v), rtol=CLOSED,
                               atol=CLOSED * ref.pdf(v).max())
    np.testing.assert_allclose(speed_cdf(v, m, t), ref.cdf(v), rtol=CLOSED, atol=CLOSED)


def test_speed_pdf_zero_below_zero_speed():
    """A speed distribution has no weight at negative speed (definition)."""
    v = np.array([-100.0, -1e-9])
    for f in (speed_pdf, flux_speed_pdf, speed_cdf, flux_speed_cdf):
        assert np.all(f(v, M_AR, 300.0) == 0.0)
    assert np.all(drifting_speed_pdf(v, M_AR, 300.0, 200.0) == 0.0)


@pytest.mark.parametrize("m, t", CASES)
def test_characteristic_speeds_match_scipy_maxwell(m, t):
    """scipy.stats.maxwell mean, mode (argmax of pdf) and second moment."""
    ref = stats.maxwell(scale=_scale(m, t))
    c = characteristic_speeds(m, t)
    assert c["mean_m_s"] == pytest.approx(ref.mean(), rel=CLOSED, abs=0.0)
    assert c["rms_m_s"] == pytest.approx(math.sqrt(ref.moment(2)), rel=CLOSED, abs=0.0)
    mode = ref.ppf(0.5)  # start the mode search near the median
    from scipy.optimize import minimize_scalar

    res = minimize_scalar(lambda v: -ref.pdf(v), bracket=(0.5 * mode, mode),
                          options={"xtol": 1e-12})
    # the pdf is flat at its peak: a relative error e in v_mp costs e^2 in f, so the
    # optimiser locates the mode to ~sqrt(machine eps) ~ 1e-8
    assert c["most_probable_m_s"] == pytest.approx(res.x, rel=1e-6, abs=0.0)


@pytest.mark.parametrize("m, t", CASES)
def test_flux_mean_speed_and_energy_by_quadrature(m, t):
    """Bird 1994 ch. 4: crossing molecules have <v> = sqrt(9 pi kT/8m), <E> = 2kT."""
    c = characteristic_speeds(m, t)
    hi = 12.0 * _scale(m, t)  # exp(-72) beyond: negligible
    norm = _quad(lambda v: flux_speed_pdf(v, m, t), 0.0, hi)
    assert norm == pytest.approx(1.0, rel=QUAD, abs=0.0)
    mean = _quad(lambda v: v * flux_speed_pdf(v, m, t), 0.0, hi)
    assert mean == pytest.approx(math.sqrt(9.0 * math.pi * KB * t / (8.0 * m)), rel=QUAD, abs=0.0)
    assert c["flux_mean_m_s"] == pytest.approx(mean, rel=QUAD, abs=0.0)
    energy = _quad(lambda v: 0.5 * m * v * v * flux_speed_pdf(v, m, t), 0.0, hi)
    assert energy == pytest.approx(2.0 * KB * t, rel=QUAD, abs=0.0)
    assert c["flux_mean_energy_j"] == pytest.approx(energy, rel=QUAD, abs=0.0)


@pytest.mark.parametrize("m, t", CASES)
def test_flux_pdf_is_v_f_over_mean_and_cdf_integrates_it(m, t):
    """Definition g = v f / <v> with f and <v> from scipy.stats.maxwell; quad for G."""
    ref = stats.maxwell(scale=_scale(m, t))
    v = np.linspace(0.0, 8.0, 81) * _scale(m, t)
    expect = v * ref.pdf(v) / ref.mean()
    np.testing.assert_allclose(flux_speed_pdf(v, m, t), expect, rtol=CLOSED,
                               atol=CLOSED * expect.max())
    for vi in v[1::10]:
        integral = _quad(lambda s: flux_speed_pdf(s, m, t), 0.0, vi)
        assert float(flux_speed_cdf(vi, m, t)) == pytest.approx(integral, rel=QUAD, abs=0.0)


@pytest.mark.parametrize("x", [1e-6, 1e-4, 1e-2])
def test_cdfs_keep_precision_at_small_speed(x):
    """Taylor series at small reduced speed x = v/a (integrate the pdfs term by term):
    F = (4/sqrt(pi)) (x^3/3 - x^5/5 + x^7/14), G = x^4/2 - x^6/3 + x^8/8; the next
    terms are below 1e-16 relative for x <= 1e-2, so 1e-13 allows for rounding only.
    """
    a = math.sqrt(2.0 * KB * 300.0 / M_AR)
    f = 4.0 / math.sqrt(math.pi) * (x ** 3 / 3 - x ** 5 / 5 + x ** 7 / 14)
    g = x ** 4 / 2 - x ** 6 / 3 + x ** 8 / 8
    assert float(speed_cdf(x * a, M_AR, 300.0)) == pytest.approx(f, rel=1e-13, abs=0.0)
    assert float(flux_speed_cdf(x * a, M_AR, 300.0)) == pytest.approx(g, rel=1e-13, abs=0.0)


@pytest.mark.parametrize("u", [1.0, 300.0, 1000.0, 5000.0])
def test_drifting_pdf_normalised_and_second_moment(u):
    """quad: integral 1 and <v^2> = u^2 + 3kT/m (Bird 1994 ch. 4, from memory)."""
    m, t = M_AR, 300.0
    a = math.sqrt(2.0 * KB * t / m)
    lo, hi = max(0.0, u - 10.0 * a), u + 10.0 * a
    pts = [u] if lo < u < hi else None

    def q(f):
        val, err = integrate.quad(f, lo, hi, points=pts, limit=200, epsabs=0.0,
                                  epsrel=1e-12)
        assert err < 1e-10 * abs(val)
        return val

    assert q(lambda v: drifting_speed_pdf(v, m, t, u)) == pytest.approx(1.0, rel=QUAD, abs=0.0)
    assert q(lambda v: v * v * drifting_speed_pdf(v, m, t, u)) == pytest.approx(
        u * u + 3.0 * KB * t / m, rel=QUAD, abs=0.0)


def test_drifting_pdf_tends_to_speed_pdf():
    """u -> 0 limit: the drifting Maxwellian becomes the gas at rest (scipy maxwell).

    The relative difference is (4/3) x^2 s^2 + O(s^4) at reduced speed x and drift s
    (Taylor expansion of the closed form), so it must shrink by ~100 per factor 10 in u.
    """
    m, t = M_AR, 300.0
    a = math.sqrt(2.0 * KB * t / m)
    v = np.linspace(0.05, 4.0, 80) * a
    ref = stats.maxwell(scale=_scale(m, t)).pdf(v)
    prev = None
    for s in (1e-2, 1e-3, 1e-4):
        rel = np.max(np.abs(drifting_speed_pdf(v, m, t, s * a) / ref - 1.0))
        assert rel < 1.5 * (4.0 / 3.0) * 16.0 * s * s  # x <= 4
        if prev is not None:
            assert rel < prev / 50.0
        prev = rel
    # across the switch to the at-rest formula the curve is continuous to rounding
    below = drifting_speed_pdf(v, m, t, 0.5 * DRIFT_ZERO_FRACTION * a)
    above = drifting_speed_pdf(v, m, t, 2.0 * DRIFT_ZERO_FRACTION * a)
    np.testing.assert_allclose(below, ref, rtol=CLOSED)
    np.testing.assert_allclose(above, ref, rtol=1e-9)
    np.testing.assert_allclose(drifting_speed_pdf(v, m, t, 0.0), ref, rtol=CLOSED)
    # the sign of the drift does not matter
    np.testing.assert_allclose(drifting_speed_pdf(v, m, t, -300.0),
                               drifting_speed_pdf(v, m, t, 300.0), rtol=CLOSED)


def test_drifting_pdf_matches_direct_formula():
    """Closed form v/(u a sqrt(pi)) [e^{-(v-u)^2/a^2} - e^{-(v+u)^2/a^2}] evaluated naively
    where it has no cancellation (u comparable to a)."""
    m, t, u = M_AR, 300.0, 400.0
    a = math.sqrt(2.0 * KB * t / m)
    v = np.linspace(0.0, 2000.0, 41)
    direct = v / (u * a * math.sqrt(math.pi)) * (np.exp(-(v - u) ** 2 / a ** 2)
                                                 - np.exp(-(v + u) ** 2 / a ** 2))
    np.testing.assert_allclose(drifting_speed_pdf(v, m, t, u), direct, rtol=1e-12,
                               atol=1e-15 * direct.max())


@pytest.mark.parametrize("u", [0.0, -250.0, 800.0])
def test_component_pdf_is_normal(u):
    """scipy.stats.norm(loc=u, scale=sqrt(kT/m)): one velocity component."""
    m, t = M_AR, 300.0
    sd = _scale(m, t)
    v = np.linspace(-6.0, 6.0, 121) * sd + u
    np.testing.assert_allclose(component_pdf(v, m, t, u), stats.norm(u, sd).pdf(v),
                               rtol=CLOSED, atol=CLOSED * stats.norm(u, sd).pdf(u))


def test_vectorised_over_temperature_and_mass():
    """Broadcasting gives the same numbers as scalar calls (scipy.stats.maxwell)."""
    t = np.array([[100.0], [300.0], [1000.0]])
    v = np.linspace(0.0, 1500.0, 7)
    got = speed_pdf(v, M_AR, t)
    assert got.shape == (3, 7)
    for i, ti in enumerate(t[:, 0]):
        np.testing.assert_allclose(got[i], stats.maxwell(scale=_scale(M_AR, ti)).pdf(v),
                                   rtol=CLOSED, atol=1e-18)
    c = characteristic_speeds(np.array([M_AR, M_HE]), 300.0)
    assert c["mean_m_s"] == pytest.approx(
        [stats.maxwell(scale=_scale(M_AR, 300.0)).mean(),
         stats.maxwell(scale=_scale(M_HE, 300.0)).mean()], rel=CLOSED, abs=0.0)
    assert isinstance(characteristic_speeds(M_AR, 300.0)["rms_m_s"], float)


@pytest.mark.parametrize("m, t", [(M_AR, 0.0), (M_AR, -5.0), (0.0, 300.0),
                                  (M_AR, float("nan"))])
def test_rejects_non_positive_mass_or_temperature(m, t):
    """T > 0 K and m > 0 kg are required (the distribution is undefined otherwise)."""
    with pytest.raises(ValueError):
        speed_pdf(100.0, m, t)
    with pytest.raises(ValueError):
        characteristic_speeds(m, t)
