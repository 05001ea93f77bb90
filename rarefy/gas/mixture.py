"""Gas mixtures: pair collision parameters and mixture properties (SI units).

Pair parameters follow the usual VHS/VSS mixing rules (Bird 1994, sec. 4.3, from memory):
d_pq = (d_p + d_q)/2, omega_pq = (omega_p + omega_q)/2, alpha_pq = (alpha_p + alpha_q)/2,
with the reduced mass m_r = m_p m_q / (m_p + m_q) in sigma_T = pi d_pq^2
(2 k T_ref / (m_r c_r^2))^(omega_pq - 1/2) / Gamma(5/2 - omega_pq) (Bird 1994 eq. 4.63).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rarefy.constants import K_B
from rarefy.gas import kinetic
from rarefy.gas.species import MolecularModel, get_species

__all__ = ["Mixture", "mixture_of", "chapman_enskog_hs_viscosity"]


@dataclass(frozen=True)
class Mixture:
    """The species of a run with their collision models and default mole fractions."""

    models: tuple[MolecularModel, ...]
    fractions: tuple[float, ...]

    @property
    def nspecies(self) -> int:
        return len(self.models)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(m.species for m in self.models)

    @property
    def masses(self) -> np.ndarray:
        return np.array([m.mass_kg for m in self.models])

    def mean_mass(self, fractions=None) -> float:
        """Number-weighted mean molecular mass, kg."""
        x = np.asarray(self.fractions if fractions is None else fractions)
        return float(x @ self.masses)

    def pair(self, p: int, q: int) -> tuple[float, float, float, float]:
        """(d_pq m, omega_pq, alpha_pq, reduced mass kg) by the mixing rules."""
        a, b = self.models[p], self.models[q]
        return (0.5 * (a.d_ref_m + b.d_ref_m), 0.5 * (a.omega + b.omega),
                0.5 * (a.alpha + b.alpha), a.mass_kg * b.mass_kg / (a.mass_kg + b.mass_kg))

    def sigma_cr_coefficients(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Per pair (p, q): A_pq and the exponent 2 - 2 omega_pq of sigma_T c_r = A c_r^e,
        and alpha_pq."""
        n = self.nspecies
        a = np.empty((n, n))
        e = np.empty((n, n))
        al = np.empty((n, n))
        t_ref = self.models[0].t_ref_k
        for p in range(n):
            for q in range(n):
                d, w, alpha, m_r = self.pair(p, q)
                a[p, q] = (math.pi * d * d * (2.0 * K_B * t_ref / m_r) ** (w - 0.5)
                           / math.gamma(2.5 - w))
                e[p, q] = 2.0 - 2.0 * w
                al[p, q] = alpha
        return a, e, al

    def mean_sigma_cr(self, p: int, q: int, t_k: float) -> float:
        """Equilibrium <sigma_T c_r> of (p, q) pairs at ``t_k``, m^3/s: the VHS cross
        section averaged over the Maxwellian of relative speeds (reduced mass m_r),
        2 d^2 sqrt(2 pi k T_ref / m_r) (T / T_ref)^(1 - omega) (Bird 1994 eq. 4.77 form;
        equals kinetic.mean_sigma_cr for like molecules)."""
        d, w, _, m_r = self.pair(p, q)
        t_ref = self.models[0].t_ref_k
        return (2.0 * d * d * math.sqrt(2.0 * math.pi * K_B * t_ref / m_r)
                * (t_k / t_ref) ** (1.0 - w))

    def collision_time(self, n_m3: float, t_k: float, fractions=None) -> float:
        """Mean time between collisions of a molecule, s: 1 / sum_p x_p sum_q n_q
        <sigma_pq c_r> (equilibrium collision rates per pair)."""
        x = np.asarray(self.fractions if fractions is None else fractions)
        nu = sum(x[p] * x[q] * n_m3 * self.mean_sigma_cr(p, q, t_k)
                 for p in range(self.nspecies) for q in range(self.nspecies))
        return 1.0 / nu if nu > 0 else math.inf

    def momentum_mean_free_paths(self, n_m3: float, t_k: float, fractions=None) -> np.ndarray:
        """Per species, the distance its mean speed covers while collisions take away its
        momentum, c_p / (2 sum_q n_q <sigma_pq c_r> m_q / (m_p + m_q)), m (each collision
        of isotropic scattering removes the fraction m_q / (m_p + m_q) of it on average;
        equals the mean free path c / (n <sigma c_r>) of a pure gas). A heavy species
        among light molecules needs many collisions to change course: the length its
        flow varies over."""
        x = np.asarray(self.fractions if fractions is None else fractions)
        out = np.empty(self.nspecies)
        for p in range(self.nspecies):
            mp = self.models[p].mass_kg
            rate = sum(2.0 * x[q] * n_m3 * self.mean_sigma_cr(p, q, t_k)
                       * self.models[q].mass_kg / (mp + self.models[q].mass_kg)
                       for q in range(self.nspecies))
            out[p] = float(kinetic.mean_speed(mp, t_k)) / rate if rate > 0 else math.inf
        return out

    def mean_free_path(self, n_m3: float, t_k: float, fractions=None) -> float:
        """Mean free path of the mixture, m: the fraction-weighted mean over species p of
        1 / sum_q n_q pi d_pq^2 (T_ref/T)^(omega_pq - 1/2) sqrt(1 + m_p/m_q) (Bird 1994
        eq. 4.76 form; :meth:`species_mean_free_paths`)."""
        x = np.asarray(self.fractions if fractions is None else fractions)
        lam = self.species_mean_free_paths(n_m3, t_k, x)
        return float(sum(xp * lp for xp, lp in zip(x, lam) if xp > 0.0))

    def species_mean_free_paths(self, n_m3: float, t_k: float, fractions=None) -> np.ndarray:
        """Mean free path of each species in the mixture, m (the terms of
        :meth:`mean_free_path`)."""
        x = np.asarray(self.fractions if fractions is None else fractions)
        t_ref = self.models[0].t_ref_k
        out = np.empty(self.nspecies)
        for p in range(self.nspecies):
            s = 0.0
            for q in range(self.nspecies):
                d, w, _, _ = self.pair(p, q)
                mp, mq = self.models[p].mass_kg, self.models[q].mass_kg
                s += (x[q] * n_m3 * math.pi * d * d * (t_ref / t_k) ** (w - 0.5)
                      * math.sqrt(1.0 + mp / mq))
            out[p] = 1.0 / s if s > 0 else math.inf
        return out

    def viscosity(self, t_k: float, fractions=None) -> float:
        """Viscosity of the mixture, Pa s: Wilke's (1950) rule over the species' VHS/VSS
        viscosities, mu = sum_i x_i mu_i / sum_j x_j phi_ij,
        phi_ij = (1 + (mu_i/mu_j)^(1/2) (m_j/m_i)^(1/4))^2 / sqrt(8 (1 + m_i/m_j))."""
        x = np.asarray(self.fractions if fractions is None else fractions)
        mu = np.array([float(kinetic.viscosity(m, t_k)) for m in self.models])
        m = self.masses
        total = 0.0
        for i in range(self.nspecies):
            den = sum(x[j] * (1.0 + math.sqrt(mu[i] / mu[j]) * (m[j] / m[i]) ** 0.25) ** 2
                      / math.sqrt(8.0 * (1.0 + m[i] / m[j])) for j in range(self.nspecies))
            total += x[i] * mu[i] / den
        return total


def chapman_enskog_hs_viscosity(d1: float, d2: float, m1: float, m2: float, x1: float,
                                t_k: float) -> float:
    """Viscosity of a binary mixture of hard spheres (diameters d, masses m, mole fraction
    x1 of species 1), Pa s, in the first Chapman-Enskog approximation (Hirschfelder,
    Curtiss & Bird 1954, eq. 8.2-22; Chapman & Cowling 1970, sec. 12.5; from memory):
    1/mu = (X + Y) / (1 + Z) with
    X = x1^2/mu1 + 2 x1 x2/mu12 + x2^2/mu2,
    Y = (3/5) A* [x1^2 m1/(m2 mu1) + 2 x1 x2 (m1 + m2)^2 mu12/(4 m1 m2 mu1 mu2)
    + x2^2 m2/(m1 mu2)],
    Z = (3/5) A* [x1^2 m1/m2 + 2 x1 x2 ((m1 + m2)^2/(4 m1 m2) (mu12/mu1 + mu12/mu2) - 1)
    + x2^2 m2/m1],
    mu_ij = (5/16) sqrt(2 pi m_i m_j k T / (m_i + m_j)) / (pi d_ij^2), d_12 = (d1 + d2)/2,
    and A* = 1 for hard spheres. Reduces to the pure gas's 5 sqrt(pi m k T)/(16 pi d^2)
    for one species."""
    x2 = 1.0 - x1

    def mu(di, dj, mi, mj):
        d = 0.5 * (di + dj)
        return 5.0 / 16.0 * math.sqrt(2.0 * math.pi * mi * mj * K_B * t_k / (mi + mj)) \
            / (math.pi * d * d)

    mu1, mu2, mu12 = mu(d1, d1, m1, m1), mu(d2, d2, m2, m2), mu(d1, d2, m1, m2)
    g = (m1 + m2) ** 2 / (4.0 * m1 * m2)
    x = x1 * x1 / mu1 + 2.0 * x1 * x2 / mu12 + x2 * x2 / mu2
    y = 0.6 * (x1 * x1 * m1 / (m2 * mu1) + 2.0 * x1 * x2 * g * mu12 / (mu1 * mu2)
               + x2 * x2 * m2 / (m1 * mu2))
    z = 0.6 * (x1 * x1 * m1 / m2 + 2.0 * x1 * x2 * (g * (mu12 / mu1 + mu12 / mu2) - 1.0)
               + x2 * x2 * m2 / m1)
    return (1.0 + z) / (x + y)


def mixture_of(gas) -> Mixture:
    """The :class:`Mixture` of a case's gas (one species: a mixture of one)."""
    models = tuple(get_species(n).model(gas.model) for n in gas.names)
    return Mixture(models, tuple(gas.mole_fractions) or (1.0,))
