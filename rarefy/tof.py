"""Time-of-flight (TOF) traces of a molecular beam, and speeds recovered from them.

A chopper at flight length 0 opens the beam with a gate g(t) (transmission against
time); a detector at flight length L records either the number density of the beam
(an electron-impact ionizer: signal ~ flux / v) or its flux. With the flux-weighted
speed distribution Phi(v) of the molecules passing the open chopper, an instantaneous
gate gives

* flux detector:    S_F(t) ~ Phi(L/t) L / t**2,
* density detector: S_D(t) ~ Phi(L/t) L / t**2 / (L/t) = Phi(L/t) / t,

(kinetic theory: a molecule of speed v arrives at t = L/v, so |dv/dt| = L/t**2, and
density = flux / v). A gate of finite length convolves, S(t) = int g(t') S_delta(t - t')
dt'; an ionizer of length l averages the density signal over flight lengths L +- l/2.
For an effusive source Phi(v) ~ v**3 exp(-v**2/v_mp**2), so that S_D ~ t**-4
exp(-(L/(v_mp t))**2) and S_F ~ t**-5 exp(...) (kinetic theory; e.g. G. Scoles (ed.),
Atomic and Molecular Beam Methods vol. 1, Oxford 1988, chapter on time-of-flight
methods -- from memory).

Conventions (SI throughout): times in s, speeds in m/s, lengths in m. Flight times are
measured from the centre of the gate (the constructors here build gates symmetric about
t = 0), so a symmetric gate broadens a trace without shifting its mean. Histograms
(:class:`rarefy.post.speed_distribution.SpeedDistribution`) are taken as piecewise
constant: the flux-weighted pdf is constant within a bin, so a bin [v0, v1] arrives over
[L/v1, L/v0] with the 1/t**2 (flux) or 1/t (density) shape, and every integral over the
bins, the gate and the time channels is done in closed form -- no sampling noise.
Traces hold by default the mean signal over each sample's time channel (as a counter
with consecutive channels records it; exact however narrow the bins or the gate), or
optionally the signal at the sample times (a digitiser); either is normalised to unit
area over the sampled window.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import nnls

from rarefy.post.speed_distribution import SpeedDistribution

__all__ = [
    "DETECTORS", "SAMPLINGS", "DEFAULT_REGULARISATION", "Gate", "Trace", "chopper_gate",
    "rectangular_gate", "to_flux_weighting", "to_density_weighting", "mean_speed",
    "mean_speed_stderr", "flux_quantile_speeds", "channel_widths", "default_times",
    "response_matrix", "predict_trace", "recover_speed_distribution",
    "naive_speed_distribution", "signal_mean_time", "peak_time",
]

DETECTORS = ("density", "flux")
SAMPLINGS = ("channel", "point")
_BLOCK_ELEMENTS = 1_000_000   # samples x bins evaluated at once in response_matrix

# Weight of the second-difference smoothing penalty relative to the rms column norm of
# the normalised forward matrix (see recover_speed_distribution). Chosen by trial on
# effusive and drifting (speed ratio 4 and 8) argon beams recovered onto 80 bins, gates
# of 0.1 % to 30 % of the flight time, with and without 1 % noise: at 0.1 the flux-
# weighted mean speed stays within 0.2 %, the pdf within 1 % of its peak without noise
# and within 4 % (gates up to 10 %) or 6 % (30 %) with 1 % noise; weaker smoothing lets
# the noise through (pdf errors up to 15 % at 0.003), much stronger smoothing (0.3 and
# up) starts to flatten narrow beams. tests/validation/test_tof_effusive.py uses this
# default.
DEFAULT_REGULARISATION = 0.1


# ------------------------------------------------------------------------------- gates
@dataclass(frozen=True)
class Gate:
    """Chopper gate: piecewise-linear transmission against time, zero outside.

    Attributes
    ----------
    knots_s : times of the corners (s), non-decreasing; repeated times make vertical
        edges (a rectangle).
    values : transmission at the knots (dimensionless, 0..1); zero at both ends.
    label : description for plots and file headers.
    """

    knots_s: np.ndarray
    values: np.ndarray
    label: str = ""

    def __post_init__(self):
        k = np.asarray(self.knots_s, dtype=float)
        g = np.asarray(self.values, dtype=float)
        object.__setattr__(self, "knots_s", k)
        object.__setattr__(self, "values", g)
        if k.ndim != 1 or k.shape != g.shape or k.size < 2:
            raise ValueError("a gate needs at least two knots and one value per knot")
        if not (np.all(np.isfinite(k)) and np.all(np.isfinite(g))):
            raise ValueError("gate knots and values must be finite")
        if np.any(np.diff(k) < 0):
            raise ValueError("gate knots must be non-decreasing")
        if np.any(g < 0) or g[0] != 0 or g[-1] != 0:
            raise ValueError("gate transmission must be >= 0 and zero at both ends")
        if not np.any(np.diff(k) > 0) or not np.any(g > 0):
            raise ValueError("a gate must be open for a time > 0")

    def segments(self):
        """Linear pieces of positive length: list of (t0, t1, g0, g1), s and 1."""
        k, g = self.knots_s, self.values
        return [(k[j], k[j + 1], g[j], g[j + 1]) for j in range(k.size - 1)
                if k[j + 1] > k[j]]

    def transmission(self, t) -> np.ndarray:
        """Transmission at times ``t`` (s), dimensionless; 0 outside the gate."""
        t = np.asarray(t, dtype=float)
        out = np.zeros_like(t)
        for t0, t1, g0, g1 in self.segments():
            inside = (t >= t0) & (t < t1)
            out = np.where(inside, g0 + (g1 - g0) * (t - t0) / (t1 - t0), out)
        return out

    @property
    def start_s(self) -> float:
        return float(self.knots_s[0])

    @property
    def end_s(self) -> float:
        return float(self.knots_s[-1])

    @property
    def duration_s(self) -> float:
        """Total time the gate is at least partly open (its base), s."""
        return self.end_s - self.start_s

    @property
    def area_s(self) -> float:
        """Open-time integral int g(t) dt, s (exact for the piecewise-linear shape)."""
        return float(sum(0.5 * (g0 + g1) * (t1 - t0) for t0, t1, g0, g1 in self.segments()))

    @property
    def centroid_s(self) -> float:
        """Transmission-weighted mean time int t g dt / int g dt, s."""
        num = sum((t1 - t0) * (g0 * (2 * t0 + t1) + g1 * (t0 + 2 * t1)) / 6.0
                  for t0, t1, g0, g1 in self.segments())
        return float(num / self.area_s)

    @property
    def fwhm_s(self) -> float:
        """Full width at half maximum of the transmission, s.

        Exact for the piecewise-linear shape: the first and last crossings of half the
        peak transmission.
        """
        k, g = self.knots_s, self.values
        half = 0.5 * float(np.max(g))
        cross = []
        for j in range(k.size - 1):
            a, b = g[j] - half, g[j + 1] - half
            if a == b or a * b > 0:
                continue
            cross.append(k[j] + (k[j + 1] - k[j]) * (-a) / (b - a))
        return float(max(cross) - min(cross))


def chopper_gate(slit_width_m: float, rim_speed_m_s: float, beam_width_m: float = 0.0) -> Gate:
    """Gate of a slit of width w moving at rim speed V across a beam of width b.

    Parameters
    ----------
    slit_width_m : slit width w along the rim, m (> 0).
    rim_speed_m_s : speed V of the slit across the beam, m/s (> 0).
    beam_width_m : beam width b at the wheel along the rim, m (>= 0); 0 is a line beam.

    Returns
    -------
    Gate
        The transmitted fraction of a uniform beam, overlap(slit, beam) / b: a trapezoid
        of base (w + b)/V and top |w - b|/V with peak min(w, b)/b (a triangle when
        w = b), or a rectangle of length w/V and transmission 1 when b = 0; centred on
        t = 0. Its area is w/V for every b (the overlap integrates to w b / V), and its
        FWHM is max(w, b)/V.

    Notes
    -----
    Geometry of two sliding intervals (common practice for slotted-disc choppers); the
    beam is taken as uniform across its width and the slit as straight over it.
    """
    w, v, b = float(slit_width_m), float(rim_speed_m_s), float(beam_width_m)
    if not w > 0 or not v > 0 or not b >= 0 or not all(map(math.isfinite, (w, v, b))):
        raise ValueError("need slit width > 0, rim speed > 0 and beam width >= 0")
    base = (w + b) / v
    top = abs(w - b) / v
    peak = 1.0 if b == 0.0 else min(w, b) / b
    knots = np.array([-0.5 * base, -0.5 * top, 0.5 * top, 0.5 * base])
    label = (f"chopper: slit {w * 1e3:.4g} mm, rim speed {v:.4g} m/s"
             + (f", beam {b * 1e3:.4g} mm" if b > 0 else ""))
    return Gate(knots, np.array([0.0, peak, peak, 0.0]), label)


def rectangular_gate(open_time_s: float) -> Gate:
    """Gate fully open (transmission 1) for ``open_time_s`` (s, > 0), centred on t = 0."""
    t = float(open_time_s)
    if not t > 0 or not math.isfinite(t):
        raise ValueError("open time must be > 0")
    return Gate(np.array([-0.5 * t, -0.5 * t, 0.5 * t, 0.5 * t]),
                np.array([0.0, 1.0, 1.0, 0.0]), f"rectangular gate {t * 1e6:.4g} us")


# ----------------------------------------------------------------- speed distributions
def _check_edges(edges) -> np.ndarray:
    e = np.asarray(edges, dtype=float)
    if e.ndim != 1 or e.size < 2 or not np.all(np.isfinite(e)):
        raise ValueError("speed edges must be a 1-D array of at least two finite values")
    if e[0] < 0 or np.any(np.diff(e) <= 0):
        raise ValueError("speed edges must be >= 0 and strictly increasing")
    return e


def to_flux_weighting(dist: SpeedDistribution) -> SpeedDistribution:
    """Flux-weighted copy of a histogram: Phi(v) ~ v f(v) (kinetic theory).

    A density-weighted bin whose pdf is constant over [v0, v1] carries the flux
    int v f dv = f (v1**2 - v0**2)/2 = (f dv) * v_centre, so counts (and standard
    errors) are multiplied by the bin centre; exact for a piecewise-constant f. A
    flux-weighted input is returned unchanged.
    """
    if dist.weighting == "flux":
        return dist
    c = dist.centres_m_s
    err = None if dist.counts_stderr is None else np.asarray(dist.counts_stderr) * c
    return SpeedDistribution(np.asarray(dist.edges_m_s, float), np.asarray(dist.counts) * c,
                             err, "flux", dist.label, dist.mass_kg, dist.temperature_k)


def to_density_weighting(dist: SpeedDistribution) -> SpeedDistribution:
    """Density-weighted copy of a histogram: f(v) ~ Phi(v) / v (kinetic theory).

    The exact inverse of :func:`to_flux_weighting` (counts divided by the bin centre,
    i.e. the density pdf taken as constant within a bin). A density-weighted input is
    returned unchanged.
    """
    if dist.weighting == "density":
        return dist
    c = dist.centres_m_s
    err = None if dist.counts_stderr is None else np.asarray(dist.counts_stderr) / c
    return SpeedDistribution(np.asarray(dist.edges_m_s, float), np.asarray(dist.counts) / c,
                             err, "density", dist.label, dist.mass_kg, dist.temperature_k)


def mean_speed(dist: SpeedDistribution, weighting: str | None = None) -> float:
    """Mean speed of a histogram, m/s.

    Parameters
    ----------
    dist : the histogram.
    weighting : ``"flux"`` or ``"density"`` to take the mean of that weighting (converted
        with :func:`to_flux_weighting` / :func:`to_density_weighting`); default the
        histogram's own weighting.

    Notes
    -----
    sum(counts * centre) / sum(counts): exact for a pdf constant within each bin. For an
    effusive Maxwellian the flux-weighted mean is sqrt(9 pi kT/(8m)) and the
    density-weighted one sqrt(8kT/(pi m)) (kinetic theory; Bird 1994 ch. 4).
    """
    if weighting == "flux":
        dist = to_flux_weighting(dist)
    elif weighting == "density":
        dist = to_density_weighting(dist)
    elif weighting is not None:
        raise ValueError(f"weighting must be 'flux', 'density' or None, not {weighting!r}")
    counts = np.asarray(dist.counts, dtype=float)
    return float(np.sum(counts * dist.centres_m_s) / np.sum(counts))


def mean_speed_stderr(dist: SpeedDistribution, weighting: str | None = None) -> float:
    """Standard error of :func:`mean_speed` from the bins' standard errors, m/s.

    Linear propagation with the bins taken as independent: d(mean)/d(c_k) =
    (v_k - mean) / sum(c), so sigma**2 = sum((v_k - mean)**2 sigma_k**2) / sum(c)**2
    (common practice). NaN when the histogram has no standard errors.
    """
    if weighting == "flux":
        dist = to_flux_weighting(dist)
    elif weighting == "density":
        dist = to_density_weighting(dist)
    elif weighting is not None:
        raise ValueError(f"weighting must be 'flux', 'density' or None, not {weighting!r}")
    if dist.counts_stderr is None:
        return float("nan")
    counts = np.asarray(dist.counts, dtype=float)
    err = np.asarray(dist.counts_stderr, dtype=float)
    c = dist.centres_m_s
    mean = float(np.sum(counts * c) / np.sum(counts))
    return float(np.sqrt(np.nansum(((c - mean) * err) ** 2)) / np.sum(counts))


def _flux_probabilities(dist: SpeedDistribution) -> tuple[np.ndarray, np.ndarray]:
    flux = to_flux_weighting(dist)
    edges = _check_edges(flux.edges_m_s)
    counts = np.asarray(flux.counts, dtype=float)
    if np.any(counts < 0) or not np.sum(counts) > 0 or not np.all(np.isfinite(counts)):
        raise ValueError("histogram counts must be finite, >= 0 and not all zero")
    return edges, counts / np.sum(counts)


def flux_quantile_speeds(dist: SpeedDistribution, fraction: float = 0.999):
    """Speeds (m/s) between which the central ``fraction`` of the flux lies.

    The flux cumulative distribution is piecewise linear (pdf constant in a bin);
    returns (v_low, v_high) with (1 - fraction)/2 of the flux below and above.
    """
    if not 0.0 < fraction < 1.0:
        raise ValueError("fraction must be between 0 and 1")
    edges, p = _flux_probabilities(dist)
    cdf = np.concatenate([[0.0], np.cumsum(p)])
    tail = 0.5 * (1.0 - fraction)

    def quantile(q):   # bin k with cdf[k] < q <= cdf[k+1]; empty bins are skipped
        k = min(int(np.searchsorted(cdf[1:], q, side="left")), p.size - 1)
        while p[k] == 0.0 and k > 0:
            k -= 1
        return float(edges[k] + (q - cdf[k]) / p[k] * (edges[k + 1] - edges[k]))

    return quantile(tail), quantile(1.0 - tail)


# ------------------------------------------------------------------------------ traces
@dataclass(frozen=True)
class Trace:
    """A TOF trace.

    Attributes
    ----------
    times_s : sample times (s) after the gate centre, increasing.
    signal : detector signal (1/s) normalised to unit area: with ``sampling`` "channel"
        the mean over each sample's channel (sum of signal x channel width = 1), with
        "point" the value at the sample time (trapezoidal area = 1).
    detector : ``"density"`` or ``"flux"``.
    flight_length_m : chopper-detector distance L (m), to the ionizer centre.
    gate : the chopper gate, or None for an instantaneous opening.
    label : where the beam came from.
    ionizer_length_m : detector length along the beam (m); 0 for a point detector.
    mass_kg : molecular mass (kg), if known.
    temperature_k : source temperature (K), if known.
    sampling : ``"channel"`` or ``"point"``, see :func:`channel_widths`.
    """

    times_s: np.ndarray
    signal: np.ndarray
    detector: str
    flight_length_m: float
    gate: Gate | None
    label: str = ""
    ionizer_length_m: float = 0.0
    mass_kg: float | None = None
    temperature_k: float | None = None
    sampling: str = "channel"


def _check_geometry(flight_length_m, detector, ionizer_length_m):
    if detector not in DETECTORS:
        raise ValueError(f"detector must be one of {DETECTORS}, not {detector!r}")
    L, ell = float(flight_length_m), float(ionizer_length_m)
    if not L > 0 or not math.isfinite(L):
        raise ValueError("flight length must be > 0")
    if not 0 <= ell < 2 * L or not math.isfinite(ell):
        raise ValueError("ionizer length must be >= 0 and shorter than twice the flight "
                         "length")
    if ell > 0 and detector == "flux":
        raise ValueError("an ionizer length applies to the density detector only")
    return L, ell


def _check_times(times_s, min_size: int = 2) -> np.ndarray:
    t = np.asarray(times_s, dtype=float)
    if (t.ndim != 1 or t.size < min_size or not np.all(np.isfinite(t))
            or np.any(np.diff(t) <= 0)):
        raise ValueError(f"times must be a 1-D increasing array of at least {min_size} "
                         "value(s)")
    return t


def channel_widths(times_s) -> np.ndarray:
    """Width (s) of each sample's channel: from the midpoint to the previous sample to
    the midpoint to the next; the first and last channels are symmetric about their
    sample. For evenly spaced times every width is the spacing.

    A ``"channel"`` trace holds the mean signal over these channels (what a counter
    with consecutive time channels records); a ``"point"`` trace the signal at the
    sample times (a digitiser).
    """
    t = _check_times(times_s)
    mid = 0.5 * (t[1:] + t[:-1])
    lo = np.concatenate([[t[0] - (mid[0] - t[0])], mid])
    hi = np.concatenate([mid, [t[-1] + (t[-1] - mid[-1])]])
    return hi - lo


def _trapz(y, x):
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(x)))


def _area(signal, times, sampling) -> float:
    if sampling == "channel":
        return float(np.sum(np.asarray(signal) * channel_widths(times)))
    return _trapz(np.asarray(signal), np.asarray(times))


def default_times(dist: SpeedDistribution, flight_length_m: float, gate: Gate | None,
                  ionizer_length_m: float = 0.0, n_times: int = 400,
                  fraction: float = 0.999) -> np.ndarray:
    """Evenly spaced sample times (s) covering the arrival of ``fraction`` of the flux.

    From (L - l/2)/v_high + gate start to (L + l/2)/v_low + gate end, with v_low, v_high
    from :func:`flux_quantile_speeds`; never earlier than 0.
    """
    if int(n_times) < 3:
        raise ValueError("need at least 3 sample times")
    lo, hi = flux_quantile_speeds(dist, fraction)
    L, ell = float(flight_length_m), float(ionizer_length_m)
    g0 = gate.start_s if gate is not None else 0.0
    g1 = gate.end_s if gate is not None else 0.0
    t0 = (L - 0.5 * ell) / hi + g0
    t1 = (L + 0.5 * ell) / lo + g1
    t0 = max(t0, 1e-3 * t1)
    return np.linspace(t0, t1, int(n_times))


def _kernel_terms(edges, L, detector, ell):
    """Delta-gate response of each speed bin to a unit pdf, as terms coef * u**-n on
    [lo, hi] in flight time u (arrays over bins). See :func:`response_matrix`."""
    v0, v1 = edges[:-1], edges[1:]
    with np.errstate(divide="ignore"):
        inv_v0 = np.where(v0 > 0, 1.0 / np.where(v0 > 0, v0, 1.0), np.inf)
    inv_v1 = 1.0 / v1
    if ell == 0.0:
        lo, hi = L * inv_v1, L * inv_v0
        if detector == "flux":   # S_F = Phi(L/t) L / t**2
            return [(np.full(v0.shape, L), 2, lo, hi)]
        return [(np.ones(v0.shape), 1, lo, hi)]   # S_D = Phi(L/t) / t
    # Density detector averaged over L' in [L1, L2]: (1/l) int Phi(L'/t)/t dL'. With
    # Phi = 1 on [v0, v1] this is overlap([t v0, t v1], [L1, L2]) / (l t), and
    # overlap = min(t v1, L2) - max(t v0, L1) on (L1/v1, L2/v0).
    L1, L2 = L - 0.5 * ell, L + 0.5 * ell
    ta, tb = L1 * inv_v1, L2 * inv_v1
    tc, td = L1 * inv_v0, L2 * inv_v0
    return [
        (v1 / ell, 0, ta, tb),                      # t v1 / (l t)   on [ta, tb]
        (np.full(v0.shape, L2 / ell), 1, tb, td),   # L2 / (l t)     on [tb, td]
        (np.full(v0.shape, -L1 / ell), 1, ta, tc),  # -L1 / (l t)    on [ta, tc]
        (-v0 / ell, 0, tc, td),                     # -t v0 / (l t)  on [tc, td]
    ]


def _gate_cumulative(gate: Gate, x):
    """int_{-inf}^{x} g(t') dt' (s), exact for the piecewise-linear gate."""
    x = np.asarray(x, dtype=float)
    out = np.zeros_like(x)
    for t0, t1, g0, g1 in gate.segments():
        s = np.clip(x, t0, t1) - t0
        out = out + g0 * s + (g1 - g0) * s * s / (2.0 * (t1 - t0))
    return out


def _effective_pieces(gate: Gate | None, width: float):
    """Gate as seen by one sample: polynomial pieces (t0, t1, m, c0, c1, c2), value
    c0 + c1 (t' - m) + c2 (t' - m)**2 on [t0, t1].

    For a channel of width w > 0 the gate is averaged over the channel, g * box_w / w
    (piecewise quadratic, breakpoints at the knots +- w/2; each piece is recovered
    exactly from three values of the exact running integral); for w = 0 the linear
    pieces of the gate itself. None is an instantaneous gate (a box of height 1/w)."""
    if gate is None:
        return [(-0.5 * width, 0.5 * width, 0.0, 1.0 / width, 0.0, 0.0)]
    if width == 0.0:
        return [(t0, t1, 0.5 * (t0 + t1), 0.5 * (g0 + g1), (g1 - g0) / (t1 - t0), 0.0)
                for t0, t1, g0, g1 in gate.segments()]
    k = gate.knots_s
    bp = np.unique(np.concatenate([k - 0.5 * width, k + 0.5 * width]))

    def g_eff(x):
        return (_gate_cumulative(gate, x + 0.5 * width)
                - _gate_cumulative(gate, x - 0.5 * width)) / width

    pieces = []
    for t0, t1 in zip(bp[:-1], bp[1:], strict=True):
        if not t1 > t0:
            continue
        m, h = 0.5 * (t0 + t1), 0.5 * (t1 - t0)
        ga, gm, gb = g_eff(np.array([t0, m, t1]))
        c1 = (gb - ga) / (2.0 * h)
        c2 = (gb + ga - 2.0 * gm) / (2.0 * h * h)
        if gm == 0.0 and ga == 0.0 and gb == 0.0:
            continue
        pieces.append((t0, t1, m, gm, c1, c2))
    return pieces


def _atanh_minus_x(h):
    """atanh(h) - h without cancellation (series h**3/3 + h**5/5 + ... below 0.05)."""
    h = np.asarray(h, dtype=float)
    small = np.abs(h) < 0.05
    hs = np.where(small, h, 0.0)
    h2 = hs * hs
    series = hs * h2 * (1 / 3 + h2 * (1 / 5 + h2 * (1 / 7 + h2 * (1 / 9 + h2 / 11))))
    hb = np.where(small, 0.0, h)
    return np.where(small, series, np.arctanh(hb) - hb)


def _piece_integral(t, coef, n, lo, hi, piece):
    """int over a gate piece of P(t') coef (t - t')**-n 1{lo <= t - t' <= hi} dt'.

    With u = t - t' = r (1 + x) about the midpoint r of the u-interval [r(1-h), r(1+h)],
    P becomes q0 + q1 x + q2 x**2 and the integral coef r**(1-n) sum_j q_j I_j with
    I_j = int_{-h}^{h} x**j (1 + x)**-n dx, all elementary (atanh for n = 1, 2) and
    written so that short intervals do not cancel digits.
    """
    t0, t1, m, c0, c1, c2 = piece
    u_lo = np.maximum(lo, t - t1)
    u_hi = np.minimum(hi, t - t0)
    ok = u_hi > u_lo
    u_lo = np.where(ok, u_lo, 1.0)
    u_hi = np.where(ok, u_hi, 1.0)
    r = 0.5 * (u_lo + u_hi)
    h = 0.5 * (u_hi - u_lo) / r
    tau = t - r - m                           # gate time at the interval midpoint
    q0 = c0 + tau * (c1 + c2 * tau)
    q1 = -r * (c1 + 2.0 * c2 * tau)
    q2 = c2 * r * r
    if n == 0:
        val = r * (q0 * 2.0 * h + q2 * 2.0 * h ** 3 / 3.0)
    else:
        a = _atanh_minus_x(h)                 # atanh(h) - h
        if n == 1:
            val = q0 * 2.0 * (h + a) - q1 * 2.0 * a + q2 * 2.0 * a
        else:
            b = h ** 3 / (1.0 - h * h)        # h/(1 - h^2) - h
            val = (q0 * 2.0 * (h + b) + q1 * 2.0 * (a - b) + q2 * (2.0 * b - 4.0 * a)) / r
    return np.where(ok, coef * val, 0.0)


def response_matrix(speed_edges_m_s, times_s, flight_length_m: float, gate: Gate | None,
                    detector: str = "density", ionizer_length_m: float = 0.0,
                    sampling: str = "channel") -> np.ndarray:
    """Forward matrix M (times x speed bins): signal at each time for a unit flux pdf.

    ``M[i, k]`` is the detector signal at sample i when the flux-weighted pdf is 1 (s/m)
    on speed bin k and 0 elsewhere, so a histogram with pdf p_k gives the trace
    ``M @ p`` (arbitrary scale: the detector efficiency is left out).

    Parameters
    ----------
    speed_edges_m_s : bin edges, m/s, >= 0, increasing.
    times_s : sample times after the gate centre, s, increasing.
    flight_length_m : L, m. gate : Gate, or None for an instantaneous opening.
    detector : ``"density"`` (S ~ Phi(L/t)/t) or ``"flux"`` (S ~ Phi(L/t) L/t**2).
    ionizer_length_m : density detector only: average over flight lengths L +- l/2, m.
    sampling : ``"channel"``: mean over each sample's channel (:func:`channel_widths`);
        ``"point"``: value at the sample time.

    Notes
    -----
    Closed-form integrals over each bin, each piece of the gate, the ionizer length and
    the channel (module docstring for the physics; the integrals are elementary: u**0,
    u**-1, u**-2 against a gate that is linear, or quadratic once averaged over a
    channel).
    """
    edges = _check_edges(speed_edges_m_s)
    L, ell = _check_geometry(flight_length_m, detector, ionizer_length_m)
    if sampling not in SAMPLINGS:
        raise ValueError(f"sampling must be one of {SAMPLINGS}, not {sampling!r}")
    t_all = _check_times(times_s, 1 if sampling == "point" else 2)
    terms = _kernel_terms(edges, L, detector, ell)
    out = np.zeros((t_all.size, edges.size - 1))
    if sampling == "point":
        groups = [(np.arange(t_all.size), 0.0)]
    else:  # samples that share a channel width share the averaged gate
        w = channel_widths(t_all)
        key = np.round(w / w.max(), 9)
        groups = [(np.nonzero(key == k)[0], float(np.mean(w[key == k])))
                  for k in np.unique(key)]
    rows = max(1, _BLOCK_ELEMENTS // (edges.size - 1))   # bounds the temporaries
    for idx_all, width in groups:
        pieces = None if gate is None and width == 0.0 else _effective_pieces(gate, width)
        for start in range(0, idx_all.size, rows):
            idx = idx_all[start:start + rows]
            t = t_all[idx][:, None]
            block = np.zeros((idx.size, edges.size - 1))
            for coef, n, lo, hi in terms:
                coef, lo, hi = coef[None, :], lo[None, :], hi[None, :]
                if pieces is None:
                    inside = (t >= lo) & (t < hi)
                    tt = np.where(inside, t, 1.0)
                    block += np.where(inside, coef * tt ** (-float(n)), 0.0)
                else:
                    for piece in pieces:
                        block += _piece_integral(t, coef, n, lo, hi, piece)
            out[idx] = block
    return out


def predict_trace(dist: SpeedDistribution, flight_length_m: float, gate: Gate | None,
                  detector: str = "density", ionizer_length_m: float = 0.0,
                  times_s=None, n_times: int = 400, sampling: str = "channel") -> Trace:
    """Predicted TOF trace of a beam with speed histogram ``dist``.

    Parameters
    ----------
    dist : speed histogram; ``"flux"`` weighting is Phi directly, ``"density"`` (a probe
        in the beam) is converted by Phi ~ v f (:func:`to_flux_weighting`).
    flight_length_m : chopper-detector distance L, m.
    gate : chopper gate (:func:`chopper_gate`, :func:`rectangular_gate`), or None for an
        instantaneous opening.
    detector : ``"density"`` or ``"flux"``.
    ionizer_length_m : ionizer length l, m (density detector; 0 = point detector).
    times_s : sample times after the gate centre, s; default :func:`default_times` with
        ``n_times`` samples (99.9 % of the flux plus the gate).
    sampling : ``"channel"`` (default; mean over each sample's time channel, exact
        however narrow the bins and the gate) or ``"point"`` (value at the sample).

    Returns
    -------
    Trace
        Signal normalised to unit area (1/s) over the samples.
    """
    edges, p = _flux_probabilities(dist)
    L, ell = _check_geometry(flight_length_m, detector, ionizer_length_m)
    if times_s is None:
        times = default_times(dist, L, gate, ell, n_times)
    else:
        times = _check_times(times_s)
    pdf = p / np.diff(edges)
    signal = response_matrix(edges, times, L, gate, detector, ell, sampling) @ pdf
    area = _area(signal, times, sampling)
    if not area > 0:
        raise ValueError("no signal in the sampled time window")
    return Trace(times, signal / area, detector, L, gate, dist.label, ell, dist.mass_kg,
                 dist.temperature_k, sampling)


def signal_mean_time(trace: Trace) -> float:
    """Signal-weighted mean arrival time int t S dt / int S dt over the samples, s
    (channel sums or trapezoidal rule, as the trace's sampling)."""
    t, s = trace.times_s, trace.signal
    return _area(t * s, t, trace.sampling) / _area(s, t, trace.sampling)


def peak_time(trace: Trace) -> float:
    """Time of the signal maximum, s (parabola through the highest sample and its
    neighbours; the sample itself at the ends)."""
    t, s = trace.times_s, trace.signal
    i = int(np.argmax(s))
    if i == 0 or i == t.size - 1:
        return float(t[i])
    x = t[i - 1:i + 2]
    c = np.polyfit(x - x[1], s[i - 1:i + 2], 2)
    if c[0] >= 0:
        return float(t[i])
    return float(x[1] - c[1] / (2.0 * c[0]))


# ---------------------------------------------------------------------------- recovery
def _mass(trace: Trace) -> float:
    return float("nan") if trace.mass_kg is None else float(trace.mass_kg)


def _second_difference(n: int) -> np.ndarray:
    d = np.zeros((max(n - 2, 0), n))
    for j in range(n - 2):
        d[j, j:j + 3] = (1.0, -2.0, 1.0)
    return d


def _bins_in_window(edges, t_first, t_last, L, gate, ell) -> np.ndarray:
    """True for speed bins whose arrival times (gate and ionizer included) overlap
    [t_first, t_last]."""
    g0 = gate.start_s if gate is not None else 0.0
    g1 = gate.end_s if gate is not None else 0.0
    v0, v1 = edges[:-1], edges[1:]
    earliest = (L - 0.5 * ell) / v1 + g0
    with np.errstate(divide="ignore"):
        latest = np.where(v0 > 0, (L + 0.5 * ell) / np.where(v0 > 0, v0, 1.0), np.inf) + g1
    return (latest >= t_first) & (earliest <= t_last)


def recover_speed_distribution(trace: Trace, gate: Gate | None, speed_edges_m_s,
                               detector: str | None = None,
                               flight_length_m: float | None = None,
                               ionizer_length_m: float | None = None,
                               regularisation: float = DEFAULT_REGULARISATION,
                               mass_kg: float | None = None) -> SpeedDistribution:
    """Flux-weighted speed histogram recovered from a TOF trace by deconvolution.

    Parameters
    ----------
    trace : measured or predicted trace (any scale); its ``sampling`` says whether the
        samples are channel means or point values.
    gate : the chopper gate of the measurement (None: instantaneous).
    speed_edges_m_s : bin edges of the result, m/s (>= 0, increasing; evenly spaced bins
        suit the smoothing penalty best).
    detector, flight_length_m, ionizer_length_m : default those of ``trace``.
    regularisation : weight of the smoothing penalty (dimensionless, >= 0; default
        :data:`DEFAULT_REGULARISATION`), relative to the rms column norm of the forward
        matrix.
    mass_kg : molecular mass for the result; default ``trace.mass_kg``.

    Returns
    -------
    SpeedDistribution
        ``"flux"`` weighting, counts summing to 1, and ``counts_stderr`` from the
        residual scatter. Bins whose molecules would arrive wholly outside the sampled
        times are set to 0 with a NaN standard error: the trace says nothing about them.

    Notes
    -----
    Non-negative regularised least squares (common practice for deconvolving TOF data;
    Tikhonov smoothing, e.g. Press et al., Numerical Recipes, 3rd ed. 2007, sec. 19.5):
    minimise |M p - s|**2 + lambda**2 |D p|**2 over p >= 0, with M from
    :func:`response_matrix` (the model of :func:`predict_trace`: gate, detector, ionizer
    and sampling), p the flux pdf per bin, D the second difference over bins and lambda
    = ``regularisation`` x the rms column norm of M (M and s each scaled to unit
    maximum), solved with :func:`scipy.optimize.nnls` on [M; lambda D] p = [s; 0]. The
    standard errors are the linear propagation of the residual rms through the normal
    equations on the bins that stay positive; they ignore the smoothing bias and the
    constraint.
    """
    detector = trace.detector if detector is None else detector
    L = trace.flight_length_m if flight_length_m is None else float(flight_length_m)
    ell = trace.ionizer_length_m if ionizer_length_m is None else float(ionizer_length_m)
    if not regularisation >= 0 or not math.isfinite(regularisation):
        raise ValueError("regularisation must be >= 0")
    edges = _check_edges(speed_edges_m_s)
    t = _check_times(trace.times_s)
    s = np.asarray(trace.signal, dtype=float)
    m = response_matrix(edges, t, L, gate, detector, ell, trace.sampling)
    m_scale, s_scale = float(np.max(np.abs(m))), float(np.max(np.abs(s)))
    if not m_scale > 0 or not s_scale > 0:
        raise ValueError("the trace and the speed bins do not overlap in time")
    # Bins whose molecules arrive wholly outside the sampled window are not seen by the
    # trace; they are left at zero instead of being extrapolated by the penalty.
    nb_all = edges.size - 1
    seen = _bins_in_window(edges, t[0], t[-1], L, gate, ell)
    mh, sh = m[:, seen] / m_scale, s / s_scale
    nb = int(np.count_nonzero(seen))
    lam = regularisation * math.sqrt(float(np.sum(mh * mh)) / nb)
    d = _second_difference(nb)
    a = np.vstack([mh, lam * d])
    b = np.concatenate([sh, np.zeros(d.shape[0])])
    p_seen, _ = nnls(a, b, maxiter=50 * nb)
    p = np.zeros(nb_all)
    p[seen] = p_seen
    widths = np.diff(edges)
    counts = p * widths
    total = float(np.sum(counts))
    if not total > 0:
        raise ValueError("recovery found no molecules in these speed bins")

    # linearised standard errors on the free (positive) bins; unseen bins: NaN
    err_seen = np.zeros(nb)
    free = p_seen > 0
    dof = t.size - int(np.count_nonzero(free))
    if dof > 0 and np.any(free):
        resid = mh @ p_seen - sh
        sigma2 = float(resid @ resid) / dof
        mf = mh[:, free]
        h = mf.T @ mf + lam * lam * (d.T @ d)[np.ix_(free, free)]
        try:
            hinv = np.linalg.inv(h)
            cov = sigma2 * hinv @ (mf.T @ mf) @ hinv
            err_seen[free] = np.sqrt(np.clip(np.diag(cov), 0.0, None))
        except np.linalg.LinAlgError:
            err_seen[:] = np.nan
    stderr = np.full(nb_all, np.nan)
    stderr[seen] = err_seen * widths[seen]
    label = f"{trace.label} (recovered from TOF)" if trace.label else "recovered from TOF"
    return SpeedDistribution(edges, counts / total, stderr / total, "flux", label,
                             _mass(trace) if mass_kg is None else float(mass_kg),
                             trace.temperature_k)


def naive_speed_distribution(trace: Trace, speed_edges_m_s=None,
                             n_bins: int = 100) -> SpeedDistribution:
    """Flux-weighted speed histogram by direct mapping t -> v = L/t, no deconvolution.

    Ignores the gate and the ionizer length (takes L at the ionizer centre). A bin
    [v0, v1] receives the signal arriving over [L/v1, L/v0]: int S dt for a flux
    detector (Phi(v) dv = S_F dt) and L int S/t dt for a density detector (Phi = S_D t,
    dv = L dt / t**2) (kinetic theory; the inverse of the delta-gate formulas in the
    module docstring). The signal is taken as constant over each channel (``"channel"``
    traces) or linear between samples (``"point"``), and the running integral is
    interpolated linearly at the bin edges.

    Parameters
    ----------
    trace : the trace. speed_edges_m_s : bin edges, m/s; default ``n_bins`` even bins
        from 0 to L / (earliest time with signal above 1e-3 of the peak).
    """
    t_all = _check_times(trace.times_s)
    s_all = np.asarray(trace.signal, dtype=float)
    L = float(trace.flight_length_m)
    if trace.sampling == "channel":
        w = channel_widths(t_all)
        lo, hi = t_all - 0.5 * w, t_all + 0.5 * w
        keep = lo > 0
        if not np.any(keep):
            raise ValueError("need sample times > 0")
        lo, hi, s = lo[keep], hi[keep], s_all[keep]
        per = s * (hi - lo) if trace.detector == "flux" else s * np.log(hi / lo)
        grid = np.concatenate([[lo[0]], hi])
        cum = np.concatenate([[0.0], np.cumsum(per)])
        t, s_pos = t_all[keep], s
    else:
        keep = t_all > 0
        t, s_pos = t_all[keep], s_all[keep]
        if t.size < 2:
            raise ValueError("need at least two sample times > 0")
        y = s_pos if trace.detector == "flux" else s_pos / t
        grid = t
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (y[1:] + y[:-1]) * np.diff(t))])
    if speed_edges_m_s is None:
        above = np.nonzero(s_pos > 1e-3 * np.max(s_pos))[0]
        t_first = t[above[0]] if above.size else t[0]
        edges = np.linspace(0.0, L / t_first, int(n_bins) + 1)
    else:
        edges = _check_edges(speed_edges_m_s)
    with np.errstate(divide="ignore"):
        t_edges = np.where(edges > 0, L / np.where(edges > 0, edges, 1.0), np.inf)
    c_at = np.interp(t_edges, grid, cum, left=0.0, right=cum[-1])
    counts = np.clip(c_at[:-1] - c_at[1:], 0.0, None)   # t decreases as v increases
    total = float(np.sum(counts))
    if not total > 0:
        raise ValueError("no signal maps into these speed bins")
    label = f"{trace.label} (naive t -> v)" if trace.label else "naive t -> v"
    return SpeedDistribution(edges, counts / total, None, "flux", label, _mass(trace),
                             trace.temperature_k)
