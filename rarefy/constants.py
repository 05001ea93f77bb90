"""Physical constants in SI units (CODATA 2018 exact values where defined)."""

K_B = 1.380649e-23  # Boltzmann constant, J/K (exact, SI 2019)
N_A = 6.02214076e23  # Avogadro constant, 1/mol (exact, SI 2019)
R_GAS = K_B * N_A  # molar gas constant, J/(mol K)
AMU = 1.66053906660e-27  # atomic mass constant, kg (CODATA 2018)
ZERO_CELSIUS_K = 273.15
ATM_PA = 101325.0          # standard atmosphere, Pa (definition)
