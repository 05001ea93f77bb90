"""Species database: VHS/VSS molecular-model parameters of common gases.

All quantities are SI. Reference data come from Bird (1994), *Molecular Gas Dynamics
and the Direct Simulation of Gas Flows*, Appendix A, Tables A1/A2, at T_ref = 273 K
(entered from memory; every row was checked against the VHS/VSS viscosity relations,
see ``tests/unit/test_gas.py``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from rarefy.constants import K_B

__all__ = [
    "Species",
    "MolecularModel",
    "SPECIES",
    "MODEL_KINDS",
    "get_species",
    "molecular_model",
]

BIRD_1994_APP_A = (
    "Bird 1994, Molecular Gas Dynamics and the Direct Simulation of Gas Flows, "
    "Appendix A, Tables A1/A2 (values from memory, consistent with VHS/VSS "
    "viscosity relations)"
)

MODEL_KINDS = ("hs", "vhs", "vss")


@dataclass(frozen=True)
class MolecularModel:
    """Parameters of one collision model for a single species.

    Attributes
    ----------
    kind : str
        ``"hs"`` (hard sphere), ``"vhs"`` (variable hard sphere) or ``"vss"``
        (variable soft sphere).
    mass_kg : float
        Molecular mass, kg.
    d_ref_m : float
        Reference diameter at ``t_ref_k``, m.
    omega : float
        Viscosity-temperature exponent (mu ~ T**omega); 0.5 for HS.
    alpha : float
        VSS scattering exponent (cos chi = 2 R**(1/alpha) - 1); 1 for HS and VHS.
    t_ref_k : float
        Reference temperature, K.
    species : str
        Short name of the species the model belongs to.
    """

    kind: str
    mass_kg: float
    d_ref_m: float
    omega: float
    alpha: float
    t_ref_k: float
    species: str


@dataclass(frozen=True)
class Species:
    """One gas species with its VHS/VSS reference data.

    Attributes
    ----------
    name, long_name : str
        Short symbol (``"Ar"``) and name (``"argon"``).
    mass_kg : float
        Molecular mass, kg.
    mu_ref_pa_s : float
        Viscosity at ``t_ref_k``, Pa s.
    omega : float
        VHS viscosity-temperature exponent.
    d_vhs_m : float
        VHS reference diameter, m.
    alpha : float or None
        VSS scattering exponent; None where no checked value exists.
    d_vss_m : float or None
        VSS reference diameter, m; None where no checked value exists.
    t_ref_k : float
        Reference temperature, K (273 K in Bird's table).
    rot_dof : int
        Rotational degrees of freedom (0 monatomic, 2 linear, 3 non-linear).
    source : str
        Citation of the numbers.
    parker : tuple of float or None
        Parker's (1959) constants (Z_inf, T* in K) of the temperature-dependent
        rotational collision number, where published values exist (N2, O2).
    theta_vib_k : float or None
        Characteristic vibrational temperature of the one vibrational mode rarefy
        models (diatomic molecules), K; None where the molecule has several modes.
    internal_source : tuple of str
        Citations of ``parker`` and ``theta_vib_k``.
    """

    name: str
    long_name: str
    mass_kg: float
    mu_ref_pa_s: float
    omega: float
    d_vhs_m: float
    alpha: float | None
    d_vss_m: float | None
    t_ref_k: float
    rot_dof: int
    source: str
    parker: tuple[float, float] | None = None
    theta_vib_k: float | None = None
    internal_source: tuple[str, ...] = ()

    @property
    def has_vss(self) -> bool:
        """True when checked VSS data (alpha and d_VSS) exist."""
        return self.alpha is not None and self.d_vss_m is not None

    def model(self, kind: str = "vhs") -> MolecularModel:
        """Build the collision model of the given kind for this species.

        Parameters
        ----------
        kind : {"hs", "vhs", "vss"}
            Model kind (case-insensitive).

        Returns
        -------
        MolecularModel

        Raises
        ------
        ValueError
            Unknown kind, or ``"vss"`` for a species without VSS data.

        Notes
        -----
        The HS diameter reproduces ``mu_ref_pa_s`` at ``t_ref_k`` in the first
        Chapman-Enskog approximation, i.e. [B94] eq. 4.62 with omega = 1/2 inverted:
        d**2 = 15 sqrt(pi m k T_ref) / (2 pi mu_ref (5 - 2w)(7 - 2w)), w = 1/2.
        """
        k = str(kind).lower()
        if k == "vhs":
            return MolecularModel("vhs", self.mass_kg, self.d_vhs_m, self.omega,
                                  1.0, self.t_ref_k, self.name)
        if k == "vss":
            if not self.has_vss:
                raise ValueError(
                    f"no checked VSS data for {self.name} ({self.long_name}); "
                    "only the 'hs' and 'vhs' models are available for this gas")
            return MolecularModel("vss", self.mass_kg, self.d_vss_m, self.omega,
                                  self.alpha, self.t_ref_k, self.name)
        if k == "hs":
            w = 0.5
            d2 = (15.0 * math.sqrt(math.pi * self.mass_kg * K_B * self.t_ref_k)
                  / (2.0 * math.pi * self.mu_ref_pa_s * (5 - 2 * w) * (7 - 2 * w)))
            return MolecularModel("hs", self.mass_kg, math.sqrt(d2), w, 1.0,
                                  self.t_ref_k, self.name)
        raise ValueError(
            f"unknown molecular model {kind!r}; allowed: {', '.join(MODEL_KINDS)}")


def _sp(name, long_name, m27, mu5, omega, d10, alpha, dvss10, rot_dof, parker=None,
        theta_vib=None, source=BIRD_1994_APP_A):
    """Row of Bird's table in its units (1e-27 kg, 1e-5 Pa s, 1e-10 m) -> Species."""
    cited = [c for c, v in ((PARKER_CONSTANTS, parker), (THETA_VIB, theta_vib)) if v]
    return Species(
        name=name, long_name=long_name, mass_kg=m27 * 1e-27,
        mu_ref_pa_s=mu5 * 1e-5, omega=omega, d_vhs_m=d10 * 1e-10,
        alpha=alpha, d_vss_m=None if dvss10 is None else dvss10 * 1e-10,
        t_ref_k=273.0, rot_dof=rot_dof, source=source, parker=parker,
        theta_vib_k=theta_vib, internal_source=tuple(cited))


PARKER_CONSTANTS = (
    "Parker 1959, Phys. Fluids 2, 449, constants Z_inf and T* as used in DSMC by Boyd "
    "1990, Phys. Fluids A 2, 447 (values from memory)")
THETA_VIB = ("Bird 1994, Appendix A, Table A5, characteristic vibrational temperatures "
             "(from memory, as hc omega_e / k of Herzberg's spectroscopic constants)")
IAPWS_H2O = (
    "VHS fit (omega 1.0, 250-400 K, max. deviation 1.9 %) to the dilute-gas viscosity of "
    "the IAPWS 2008 formulation, Huber et al. 2009, J. Phys. Chem. Ref. Data 38, 101, "
    "eq. 11 (coefficients from memory; mu0(373.15 K) = 12.34 uPa s)")

# Bird 1994, Appendix A, Tables A1/A2, T_ref = 273 K (from memory; see module doc).
# Air: VHS only -- its VSS pair could not be checked. H2O: see IAPWS_H2O; no VSS data.
_ROWS = (
    _sp("He", "helium", 6.65, 1.865, 0.66, 2.33, 1.26, 2.30, 0),
    _sp("Ne", "neon", 33.5, 2.975, 0.66, 2.77, 1.31, 2.72, 0),
    _sp("Ar", "argon", 66.3, 2.117, 0.81, 4.17, 1.40, 4.11, 0),
    _sp("Kr", "krypton", 139.1, 2.328, 0.80, 4.76, 1.32, 4.70, 0),
    _sp("Xe", "xenon", 218.0, 2.107, 0.85, 5.74, 1.44, 5.65, 0),
    _sp("H2", "hydrogen", 3.34, 0.845, 0.67, 2.92, 1.35, 2.88, 2, theta_vib=6159.0),
    _sp("N2", "nitrogen", 46.5, 1.656, 0.74, 4.17, 1.36, 4.11, 2, parker=(23.0, 91.5),
        theta_vib=3371.0),
    _sp("O2", "oxygen", 53.12, 1.919, 0.77, 4.07, 1.40, 4.01, 2, parker=(16.5, 113.5),
        theta_vib=2256.0),
    _sp("CO2", "carbon dioxide", 73.1, 1.380, 0.93, 5.62, 1.61, 5.54, 2),
    _sp("CH4", "methane", 26.63, 1.024, 0.84, 4.83, 1.60, 4.78, 3),
    _sp("H2O", "water vapour", 29.915, 0.8943, 1.00, 5.79, None, None, 3,
        source=IAPWS_H2O),
    _sp("air", "air", 48.1, 1.719, 0.77, 4.19, None, None, 2),
)

SPECIES: dict[str, Species] = {s.name: s for s in _ROWS}
_BY_LOWER = {key.lower(): s for key, s in SPECIES.items()}


def get_species(name: str) -> Species:
    """Look up a species by its short name, case-insensitively.

    Parameters
    ----------
    name : str
        Short name such as ``"Ar"``, ``"ar"``, ``"N2"`` or ``"Air"``.

    Returns
    -------
    Species

    Raises
    ------
    KeyError
        Unknown name; the message lists the allowed names.
    """
    try:
        return _BY_LOWER[str(name).strip().lower()]
    except KeyError:
        raise KeyError(f"unknown species {name!r}; allowed: "
                       f"{', '.join(SPECIES)}") from None


def molecular_model(species: str | Species, kind: str = "vhs") -> MolecularModel:
    """Collision model of the given kind for a species (object or name).

    See :meth:`Species.model`.
    """
    sp = species if isinstance(species, Species) else get_species(species)
    return sp.model(kind)
