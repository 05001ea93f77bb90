"""Maxwell-Boltzmann distributions of molecular speed and velocity (SI units throughout).

Reference curves to draw beside sampled speed histograms. Every function takes numpy
arrays (broadcast against each other) or plain floats: speeds ``v`` in m/s, molecular
mass ``mass_kg`` in kg, temperature ``t_k`` in K, drift speed ``drift_m_s`` in m/s.
Probability densities are returned in s/m (probability per m/s), cumulative
probabilities as pure numbers.

Notation: a = sqrt(2kT/m) is the most probable speed, x = v/a the reduced speed,
k the Boltzmann constant (:data:`rarefy.constants.K_B`).

Sources: [B94] G. A. Bird, Molecular Gas Dynamics and the Direct Simulation of Gas
Flows (Oxford, 1994), ch. 4 (the equilibrium distribution, its speed distribution
and the flux of molecules across a surface) -- section-level citations from memory,
equation numbers not checked; [M1860] J. C. Maxwell, "Illustrations of the dynamical
theory of gases", Phil. Mag. (4) 19, 19 (1860), the original speed law (from
memory). Formulas without a published source say so and are derived in their notes.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import gammainc as _gammainc

from rarefy.constants import K_B
from rarefy.gas.kinetic import (
    flux_weighted_mean_speed,
    mean_speed,
    most_probable_speed,
    rms_speed,
)
from rarefy.theory.effusion import flux_weighted_mean_energy

__all__ = [
    "speed_pdf",
    "speed_cdf",
    "flux_speed_pdf",
    "flux_speed_cdf",
    "drifting_speed_pdf",
    "component_pdf",
    "characteristic_speeds",
    "DRIFT_ZERO_FRACTION",
]

_SQRT_PI = math.sqrt(math.pi)

# Below this drift speed (as a fraction of a = sqrt(2kT/m)) the drifting speed pdf is
# replaced by the speed pdf of a gas at rest; the relative difference is of order
# (v u / a^2)^2 <= 1e-16 x (v/a)^2 there (see drifting_speed_pdf).
DRIFT_ZERO_FRACTION = 1e-8


def _scale(mass_kg, t_k) -> np.ndarray:
    """Most probable speed a = sqrt(2kT/m), m/s, after checking m > 0 and T > 0."""
    m = np.asarray(mass_kg, dtype=float)
    t = np.asarray(t_k, dtype=float)
    if np.any(~(m > 0.0)):
        raise ValueError(f"mass_kg must be > 0 kg, got {mass_kg!r}")
    if np.any(~(t > 0.0)):
        raise ValueError(f"t_k must be > 0 K, got {t_k!r}")
    return np.sqrt(2.0 * K_B * t / m)


def _reduced(v, mass_kg, t_k):
    a = _scale(mass_kg, t_k)
    v = np.asarray(v, dtype=float)
    return v / a, a, v >= 0.0


def speed_pdf(v, mass_kg, t_k):
    """Maxwell speed distribution of the molecules in a volume, s/m.

    f(v) = 4 pi v^2 (m / (2 pi k T))^(3/2) exp(-m v^2 / (2 k T))
         = 4 x^2 exp(-x^2) / (sqrt(pi) a),   x = v / a,  a = sqrt(2kT/m);
    zero for v < 0.

    Parameters
    ----------
    v : speed, m/s. mass_kg : molecular mass, kg. t_k : temperature, K.

    Notes
    -----
    [M1860]; [B94] ch. 4 (speed distribution of the equilibrium gas), from memory.
    Equal to ``scipy.stats.maxwell.pdf(v, scale=sqrt(kT/m))``.
    """
    x, a, ok = _reduced(v, mass_kg, t_k)
    return np.where(ok, 4.0 * x * x * np.exp(-x * x) / (_SQRT_PI * a), 0.0)


def speed_cdf(v, mass_kg, t_k):
    """Fraction of molecules slower than v, dimensionless.

    F(v) = erf(x) - (2 / sqrt(pi)) x exp(-x^2) = P(3/2, x^2),  x = v / a;
    zero for v < 0.

    Notes
    -----
    Integral of :func:`speed_pdf` by parts ([B94] ch. 4, from memory). Evaluated as the
    regularised lower incomplete gamma function P(3/2, x^2) (substitute s = t^2 in the
    integral; Abramowitz & Stegun 1964, ch. 6.5, from memory), which keeps full
    relative precision at small speeds where the erf form cancels. Equal to
    ``scipy.stats.maxwell.cdf(v, scale=sqrt(kT/m))``.
    """
    x, _, ok = _reduced(v, mass_kg, t_k)
    xc = np.where(ok, x, 0.0)
    return np.where(ok, _gammainc(1.5, xc * xc), 0.0)


def flux_speed_pdf(v, mass_kg, t_k):
    """Speed distribution of the molecules crossing a surface from a gas at rest, s/m.

    g(v) = v f(v) / <v> = 2 x^3 exp(-x^2) / a,   x = v / a;  zero for v < 0,
    with f the :func:`speed_pdf` and <v> = 2 a / sqrt(pi) the mean speed.

    Notes
    -----
    The flux across a plane weights each molecule by its normal velocity v cos(theta);
    integrating over the half-space of directions leaves a weight proportional to v,
    [B94] ch. 4 (molecular flux across a surface), from memory. This is also the
    speed distribution of an effusive beam. Its mean is sqrt(9 pi k T / (8 m)) and its
    mean kinetic energy 2 k T.
    """
    x, a, ok = _reduced(v, mass_kg, t_k)
    return np.where(ok, 2.0 * x ** 3 * np.exp(-x * x) / a, 0.0)


def flux_speed_cdf(v, mass_kg, t_k):
    """Fraction of the crossing molecules slower than v, dimensionless.

    G(v) = 1 - (1 + x^2) exp(-x^2) = P(2, x^2),  x = v / a;  zero for v < 0.

    Notes
    -----
    Closed-form integral of :func:`flux_speed_pdf` (substitute s = x^2; derived here).
    Evaluated as the regularised lower incomplete gamma function P(2, x^2)
    (Abramowitz & Stegun 1964, ch. 6.5, from memory: P(n, s) = 1 - e^-s sum_{k<n}
    s^k / k!), which keeps full relative precision at small speeds where the closed
    form cancels.
    """
    x, _, ok = _reduced(v, mass_kg, t_k)
    xc = np.where(ok, x, 0.0)
    return np.where(ok, _gammainc(2.0, xc * xc), 0.0)


def drifting_speed_pdf(v, mass_kg, t_k, drift_m_s):
    """Speed distribution of a Maxwellian gas drifting at speed u, s/m.

    f(v) = v / (u a sqrt(pi)) [exp(-(v - u)^2 / a^2) - exp(-(v + u)^2 / a^2)],
    a = sqrt(2kT/m); zero for v < 0; normalised to 1 over v >= 0.

    Parameters
    ----------
    v : speed, m/s. mass_kg : molecular mass, kg. t_k : temperature, K.
    drift_m_s : drift (bulk) speed, m/s; only its magnitude matters.

    Notes
    -----
    The drifting equilibrium distribution of [B94] ch. 4, (pi^(-3/2) / a^3)
    exp(-|c - u|^2 / a^2), integrated over the sphere |c| = v (derived here):
    v^2 2 pi int_{-1}^{1} exp(-(v^2 + u^2 - 2 v u mu) / a^2) dmu / (pi^(3/2) a^3)
    gives the expression above. It is evaluated as
    v / (u a sqrt(pi)) exp(-(v - u)^2 / a^2) (1 - exp(-4 v u / a^2)) with ``expm1``,
    which has no cancellation for small u. For u < 1e-8 a
    (:data:`DRIFT_ZERO_FRACTION`) the :func:`speed_pdf` of the gas at rest is returned;
    the two differ there by a relative amount of order (v u / a^2)^2. Its mean square
    speed is u^2 + 3 k T / m.
    """
    x, a, ok = _reduced(v, mass_kg, t_k)
    s = np.abs(np.asarray(drift_m_s, dtype=float)) / a
    if np.any(~np.isfinite(s)):
        raise ValueError(f"drift_m_s must be finite, got {drift_m_s!r}")
    x, s = np.broadcast_arrays(x, s)
    at_rest = s < DRIFT_ZERO_FRACTION
    s_safe = np.where(at_rest, 1.0, s)
    xc = np.where(ok, x, 0.0)
    moving = (xc / (s_safe * a * _SQRT_PI) * np.exp(-(xc - s_safe) ** 2)
              * -np.expm1(-4.0 * xc * s_safe))
    rest = 4.0 * xc * xc * np.exp(-xc * xc) / (_SQRT_PI * a)
    return np.where(ok, np.where(at_rest, rest, moving), 0.0)


def component_pdf(v, mass_kg, t_k, drift_m_s=0.0):
    """Distribution of one Cartesian velocity component, s/m.

    f(v) = exp(-(v - u)^2 / a^2) / (sqrt(pi) a),  a = sqrt(2kT/m),
    a Gaussian of mean u (the drift along that axis) and variance k T / m; v may be
    negative.

    Notes
    -----
    The equilibrium distribution factorises into three such Gaussians, [M1860];
    [B94] ch. 4, from memory.
    """
    a = _scale(mass_kg, t_k)
    d = (np.asarray(v, dtype=float) - np.asarray(drift_m_s, dtype=float)) / a
    return np.exp(-d * d) / (_SQRT_PI * a)


def _plain(value):
    arr = np.asarray(value, dtype=float)
    return float(arr) if arr.ndim == 0 else arr


def characteristic_speeds(mass_kg, t_k) -> dict:
    """Characteristic speeds and the mean energy of crossing molecules of a Maxwellian.

    Parameters
    ----------
    mass_kg : molecular mass, kg. t_k : temperature, K (floats or arrays).

    Returns
    -------
    dict
        ``most_probable_m_s`` sqrt(2kT/m), ``mean_m_s`` sqrt(8kT/(pi m)),
        ``rms_m_s`` sqrt(3kT/m), ``flux_mean_m_s`` sqrt(9 pi kT/(8m)) (m/s), and
        ``flux_mean_energy_j`` 2kT (J, mean kinetic energy of the molecules crossing a
        surface). Floats for scalar input, arrays otherwise.

    Notes
    -----
    Computed by :mod:`rarefy.gas.kinetic` and :func:`rarefy.theory.effusion.
    flux_weighted_mean_energy`; [B94] ch. 4, from memory.
    """
    _scale(mass_kg, t_k)
    t = np.asarray(t_k, dtype=float)
    m = np.asarray(mass_kg, dtype=float)
    return {
        "most_probable_m_s": _plain(most_probable_speed(m, t)),
        "mean_m_s": _plain(mean_speed(m, t)),
        "rms_m_s": _plain(rms_speed(m, t)),
        "flux_mean_m_s": _plain(flux_weighted_mean_speed(m, t)),
        "flux_mean_energy_j": _plain(flux_weighted_mean_energy(t) + 0.0 * m),
    }
