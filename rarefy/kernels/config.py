"""Numba settings for every kernel, in one place.

``JIT`` is the keyword set for ``numba.njit``: compiled code is cached on disk
(``cache=True``) so a second start pays no compile time; ``fastmath`` stays off
because the collision kernel must conserve momentum and energy to round-off.
``PAR`` adds ``parallel=True``; :func:`serial_and_parallel` compiles a kernel both ways.
"""

import types

from numba import njit

JIT = dict(cache=True, nogil=True, fastmath=False, error_model="numpy")
PAR = dict(JIT, parallel=True)


def serial_and_parallel(py_func):
    """Compile ``py_func`` (a kernel written with ``prange``) twice: serial (``prange``
    runs as ``range``) and parallel. Returns (serial, parallel). Both compute the same
    thing in the same order per work unit; the engine takes the serial one on one thread
    or for small particle counts, where starting the thread pool costs more than it
    saves. The twin gets its own name so that the two land in separate cache files."""
    twin = types.FunctionType(py_func.__code__, py_func.__globals__,
                              py_func.__name__ + "_serial", py_func.__defaults__,
                              py_func.__closure__)
    twin.__qualname__ = py_func.__qualname__ + "_serial"
    twin.__doc__ = py_func.__doc__
    return njit(**JIT)(twin), njit(**PAR)(py_func)

# Integer codes shared by the engine and the kernels.
SIDE_XMIN, SIDE_XMAX, SIDE_YMIN, SIDE_YMAX = 0, 1, 2, 3
BND_ABSORB = 0     # vacuum or reservoir: particles leaving the domain are removed
BND_REFLECT = 1    # wall or symmetry plane (surface parameters in the piece row)
BND_PERIODIC = 2

# Columns of the wall-segment rows: end points, then the surface parameters
# sqrt(k T_w / m) (m/s), accommodation (probability of diffuse re-emission) and
# tangential wall speed (m/s).
W_X0, W_Y0, W_X1, W_Y1, W_SIGMA, W_ACC, W_VEL = range(7)
# Columns of the domain-side piece rows: range along the side, then the same
# surface parameters.
P_START, P_END, P_SIGMA, P_ACC, P_VEL = range(5)

# Columns of the surface tallies (per facet); T_EI_*: internal energy per unit mass
# (rotational + vibrational, m^2/s^2) of the incident and re-emitted molecules.
T_HITS, T_VN_IN, T_VN_OUT, T_VT_IN, T_VT_OUT, T_C2_IN, T_C2_OUT, T_EI_IN, T_EI_OUT = range(9)
N_SURF_TALLY = 9

# Columns of the flux-plane tallies (per plane): positive / negative crossings, then
# the speed histograms of the crossings: F_HIST + b (positive, bins b = 0..nb-1, then an
# overflow column) and F_HIST + nb + 1 + b (negative, then overflow).
F_N_POS, F_N_NEG, F_C_POS, F_C_NEG, F_C2_POS, F_C2_NEG = range(6)
N_FLUX_TALLY = 6
F_HIST = 6
# Extra columns of the flux-plane rows handed to the move kernels (after x0, y0, x1, y1):
# histogram bins per (m/s) and number of bins.
PL_INV_DV, PL_NBINS = 4, 5

# Probe sums (per probe): weight, first and second velocity moments, speed, speed^2,
# rotational and vibrational energy per unit mass (m^2/s^2).
(PM_W, PM_VX, PM_VY, PM_VZ, PM_VXX, PM_VYY, PM_VZZ, PM_VXY, PM_VXZ, PM_VYZ, PM_C,
 PM_C2, PM_EROT, PM_EVIB) = range(14)
N_PROBE_MOMENTS = 14
# Probe histograms (per probe): speed, vx, vy, vz, each nb bins plus an overflow bin.
H_SPEED, H_VX, H_VY, H_VZ = range(4)

# Columns of the cell moment sums; M_EROT, M_EVIB: internal energies per unit mass
# (m^2/s^2); M_EVX, M_EVY: their total times vx, vy (m^3/s^3), for the heat flux.
(M_N, M_VX, M_VY, M_VZ, M_VXX, M_VYY, M_VZZ, M_VXY, M_VXZ, M_VYZ,
 M_C2VX, M_C2VY, M_C2, M_EROT, M_EVIB, M_EVX, M_EVY) = range(17)
N_MOMENTS = 17

# Internal-energy parameters handed to the kernels (one float64 array, ``internal``):
# rotational dof (0: none), Z_rot mode (0 constant, 1 Parker), selection probability
# (constant mode), Parker's Z_inf and T* (K), the factor (1 + zeta_r / (5 - 2 omega)) that
# turns 1/Z_rot into a selection probability; vibrational quantum k theta / m (m^2/s^2,
# 0: vibration off), theta (K), Z_vib mode (0 constant, 1 Millikan-White), selection
# probability (constant mode), Millikan-White A and B, nu / p = NU_P T^-omega (1/(Pa s)),
# m / k (K s^2/m^2), omega, and the factor (1 + 2 / (5 - 2 omega)) that turns 1/Z_vib
# into a selection probability; 1/Z_rot and 1/Z_vib at the plan's reference temperature
# (the constants of the constant modes; a mixture's pairs scale them by the pair's own
# factor). Stored internal energies are per unit mass
# (m^2/s^2), in the particle rows after vz: rotational, then vibrational. The kernels take
# one row per species (float64[nspecies, N_INTERNAL_PAR]).
(IP_ROT_DOF, IP_ROT_MODE, IP_ROT_P, IP_ZINF, IP_TSTAR, IP_ROT_FACTOR, IP_VIB_TH,
 IP_THETA, IP_VIB_MODE, IP_VIB_P, IP_MW_A, IP_MW_B, IP_NU_P, IP_M_OVER_K,
 IP_OMEGA, IP_VIB_FACTOR, IP_ROT_ZINV, IP_VIB_ZINV) = range(18)
N_INTERNAL_PAR = 18
