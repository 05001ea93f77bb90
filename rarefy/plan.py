"""Planner: from a case to the numerical resolution of a run.

The reference state is the densest gas the case supplies (a reservoir boundary
or the initial fill). From it come the mean free path lambda, the mean
collision time tau = lambda / cbar, the Knudsen number Kn = lambda / L and the
rarefaction parameter delta = p a / (mu v0), v0 = sqrt(2kT/m), with a = L/2 the
half-width (slit, channel) or radius (Bird 1994 eqs. 4.62-4.65; the delta of the
published flow-rate tables). The usual
DSMC resolution rules (Bird 1994 ch. 11; common practice) then fix

* cell size about lambda/3, and at most L/6 so the geometry is resolved, chosen
  as (L/2)/k so that cells line up with the template geometries;
* time step min(0.2 tau, half the time a molecule at the mean speed needs to
  cross a cell);
* particle weight F_N = n_ref V_cell / N_target (N_target particles per cell);
* steps to a steady state from four wall-to-wall transits at the most probable
  speed plus ten collision times (at most as long as the transits: in free-molecular
  flow collisions do not set the pace), or, if longer, three Knudsen-diffusion times
  of the longest tube or channel, and twice that many sampling steps.

Every choice can be overridden in the case file ([resolution], [run]).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np

from rarefy.case import Case, CaseError
from rarefy.constants import K_B
from rarefy.gas import internal, kinetic
from rarefy.gas.mixture import mixture_of
from rarefy.gas.species import get_species

DEFAULT_PARTICLES_PER_CELL = 20.0
DEFAULT_SUBCELLS = 2
DEFAULT_BATCHES = 20
MAX_CELLS_AUTO = 250_000
DEFAULT_HISTOGRAM_BINS = 400
HISTOGRAM_SPEED_SPAN = 4.0   # v_mp of the hottest gas; beyond it lie ~2e-6 of the crossings

# limits of usual practice, used for warnings (Bird 1994 ch. 11; common practice)
LIMIT_CELL_OVER_MFP = 1.0 / 3.0
LIMIT_DT_OVER_TAU = 0.2
LIMIT_MIN_PARTICLES_PER_CELL = 10.0


@dataclass(frozen=True)
class Plan:
    """Resolved numerical plan of a run (SI units)."""

    gas: str
    model: str
    mass_kg: float                   # molecular mass; of a mixture, the mean at its fractions
    reference_pressure_pa: float
    reference_temperature_k: float
    reference_number_density_m3: float
    reference_source: str
    mean_free_path_m: float
    collision_time_s: float
    viscosity_pa_s: float
    mean_speed_m_s: float
    characteristic_length_m: float
    knudsen_number: float
    rarefaction_parameter: float
    nx: int
    ny: int
    cell_dx_m: float
    cell_dy_m: float
    subcells: int
    time_step_s: float
    particle_weight: float
    particles_per_cell: float
    settle_steps: int
    sample_steps: int
    batches: int
    expected_particles: float
    species: tuple = ()              # the species in index order
    mole_fractions: tuple = ()       # default composition (1.0 for a pure gas)
    species_mean_free_path_m: tuple = ()   # each species' momentum mean free path (m)
    rot_dof: int = 0
    rotation: str = ""               # "constant" or "parker" ("" for a monatomic gas)
    rot_collision_number: float = 0.0   # Z_rot (at the reference temperature for Parker)
    rot_selection_probability: float = 0.0  # Larsen-Borgnakke, per molecule and collision
    rot_floor_temperature_k: float = 0.0  # Parker's Z_rot reaches the exchange's floor here
    vibration: bool = False
    theta_vib_k: float = 0.0
    vib_collision_number: float = 0.0   # Z_vib at the reference temperature
    gamma: float = 5.0 / 3.0
    # per species, in index order (a pure gas: one entry, the same as the fields above;
    # a mixture's fields above hold only rot_dof = the largest, vibration and gamma)
    species_rot_dof: tuple = ()
    species_rotation: tuple = ()                   # "constant", "parker" or "" (monatomic)
    species_rotation_source: tuple = ()            # "case", "auto" or "" (monatomic)
    species_rot_collision_number: tuple = ()
    species_rot_selection_probability: tuple = ()  # against like molecules
    species_rot_floor_temperature_k: tuple = ()
    species_theta_vib_k: tuple = ()                # 0 where the species does not vibrate
    species_vib_collision_number: tuple = ()
    chosen: dict = field(default_factory=dict)  # key -> "case" or "auto"
    histogram_speed_max_m_s: float = 0.0
    histogram_bins: int = DEFAULT_HISTOGRAM_BINS

    @property
    def ncell(self) -> int:
        return self.nx * self.ny

    @property
    def cell_over_mfp(self) -> float:
        return max(self.cell_dx_m, self.cell_dy_m) / self.mean_free_path_m

    @property
    def dt_over_tau(self) -> float:
        return self.time_step_s / self.collision_time_s

    @property
    def transit_fraction(self) -> float:
        """Distance flown at the mean speed in one step, in cell sizes."""
        return self.time_step_s * self.mean_speed_m_s / min(self.cell_dx_m, self.cell_dy_m)

    def warnings(self) -> list[str]:
        """Resolution diagnostics that fail the usual limits."""
        out = []
        for k, name in enumerate(self.species):
            if not self.species_rot_dof or not self.species_rot_dof[k]:
                continue
            if self.species_rot_selection_probability[k] >= 0.5:
                out.append(f"Z_rot = {self.species_rot_collision_number[k]:.3g} is below what "
                           "Larsen-Borgnakke exchange can reach for "
                           f"{name}: one molecule of every pair relaxes in every collision, "
                           "so rotation relaxes more slowly than Z_rot says")
            floor = self.species_rot_floor_temperature_k[k]
            if self.species_rotation[k] == "parker" and \
                    floor > 0.5 * self.reference_temperature_k:
                out.append(f"below {floor:.3g} K Parker's Z_rot for {name} is smaller than "
                           "Larsen-Borgnakke exchange can reach (one molecule of a pair per "
                           "collision): colder gas relaxes its rotation more slowly than "
                           "Parker's formula says")
            source = (self.species_rotation_source[k] if self.species_rotation_source
                      else self.chosen.get("rotation"))
            if name == "H2" and source == "auto":
                out.append("H2 relaxes its rotation in hundreds of collisions near room "
                           "temperature, not the default Z_rot = "
                           f"{self.species_rot_collision_number[k]:g}; set gas.rotation")
        for name, lam in zip(self.species, self.species_mean_free_path_m):
            ratio = max(self.cell_dx_m, self.cell_dy_m) / lam
            if ratio > LIMIT_CELL_OVER_MFP * 1.05 and lam < 0.7 * self.mean_free_path_m:
                out.append(f"{name} loses its momentum within {lam * 1e3:.3g} mm, less than "
                           f"the mixture's mean free path: cells are {ratio:.2f} of it "
                           f"(usual limit {LIMIT_CELL_OVER_MFP:.2f}); refine "
                           f"resolution.cell_size if {name}'s transport matters")
        if self.cell_over_mfp > LIMIT_CELL_OVER_MFP * 1.05:
            out.append(f"cell size is {self.cell_over_mfp:.2f} mean free paths "
                       f"(usual limit {LIMIT_CELL_OVER_MFP:.2f}): collisions act over "
                       "too long a distance, transport is overestimated")
        if self.dt_over_tau > LIMIT_DT_OVER_TAU * 1.05:
            out.append(f"time step is {self.dt_over_tau:.2f} collision times "
                       f"(usual limit {LIMIT_DT_OVER_TAU:.2f})")
        if self.transit_fraction > 1.0:
            out.append(f"a molecule at the mean speed crosses {self.transit_fraction:.2f} "
                       "cells per step (keep below 1)")
        if self.particles_per_cell < LIMIT_MIN_PARTICLES_PER_CELL:
            out.append(f"{self.particles_per_cell:.1f} particles per cell in the reference "
                       f"state (usual minimum {LIMIT_MIN_PARTICLES_PER_CELL:.0f})")
        return out

    def to_dict(self) -> dict:
        d = asdict(self)
        d.update(cell_over_mfp=self.cell_over_mfp, dt_over_tau=self.dt_over_tau,
                 transit_fraction=self.transit_fraction, warnings=self.warnings())
        return d


def reference_state(case: Case) -> tuple[float, float, str]:
    """(pressure Pa, temperature K, description) of the densest gas the case supplies."""
    best = (0.0, 0.0, "")
    best_n = -1.0
    for b in case.boundaries:
        if b.kind == "reservoir":
            n = b.pressure_pa / b.temperature_k
            if n > best_n:
                best_n = n
                best = (b.pressure_pa, b.temperature_k, f"reservoir at {b.side}")
    init = case.initial
    if init.pressure_pa > 0 and init.pressure_pa / init.temperature_k > best_n:
        best = (init.pressure_pa, init.temperature_k, "initial fill")
    return best


def characteristic_length(case: Case) -> float:
    """The case's length for Kn and delta: given, or the shortest flux plane (doubled when
    it stands for its mirror image too, or spans a radius), or the smaller domain extent."""
    if case.domain.characteristic_length_m:
        return case.domain.characteristic_length_m
    axi = case.domain.axisymmetric
    lengths = [math.dist(fp.start, fp.end) * (2.0 if fp.mirrored or axi else 1.0)
               for fp in case.flux_planes]
    if lengths:
        return min(lengths)
    d = case.domain
    return min(d.xmax - d.xmin, d.ymax - d.ymin)


def _grid(extent: float, target: float) -> tuple[int, float]:
    n = max(1, math.ceil(extent / target - 1e-9))
    return n, extent / n


def _fill_time(case: Case, cbar: float) -> float:
    """Three Knudsen-diffusion times L^2 / D, D = (2/3) a cbar, of the longest tube or
    channel a flux plane names (a: radius or half-gap; Knudsen's diffusion coefficient
    of a tube, the slowest way a long duct fills): a duct must fill before sampling."""
    times = [0.0]
    for fp in case.flux_planes:
        if fp.opening in ("tube", "channel") and fp.opening_length_m > 0.0:
            a = math.dist(fp.start, fp.end)
            if fp.opening == "channel" and not fp.mirrored:
                a *= 0.5
            times.append(3.0 * fp.opening_length_m ** 2 / (2.0 / 3.0 * a * cbar))
    return max(times)


def histogram_speed_max(case: Case, mass_kg: float) -> float:
    """Upper end (m/s) of the speed histograms: 4 most probable speeds at the hottest
    temperature the case names plus the largest speed it gives a wall or reservoir.
    A Maxwellian puts (1 + 16) exp(-16) = 2e-6 of its flux beyond 4 v_mp; an expansion
    reaches at most sqrt(5kT0/m) = 1.6 v_mp (monatomic), so cold jets fit too."""
    if case.histograms.speed_max_m_s:
        return case.histograms.speed_max_m_s
    temps = [case.initial.temperature_k]
    speeds = [math.hypot(*case.initial.velocity_m_s)]
    for b in case.boundaries:
        if b.temperature_k:
            temps.append(b.temperature_k)
        speeds.append(math.hypot(*b.velocity_m_s) if b.velocity_m_s else 0.0)
        if b.surface is not None:
            temps.append(b.surface.temperature_k or 0.0)
            speeds.append(abs(b.surface.velocity_m_s))
    for w in case.walls:
        temps.append(w.surface.temperature_k or 0.0)
        speeds.append(abs(w.surface.velocity_m_s))
    vmp = kinetic.most_probable_speed(mass_kg, max(temps))
    return HISTOGRAM_SPEED_SPAN * vmp + max(speeds)


# plan fields that must come out finite and > 0, and the case key that drives each
_POSITIVE_FIELDS = {
    "reference_number_density_m3": "pressure", "mean_free_path_m": "pressure",
    "collision_time_s": "pressure", "viscosity_pa_s": "temperature",
    "mean_speed_m_s": "temperature", "characteristic_length_m": "domain.characteristic_length",
    "knudsen_number": "pressure", "rarefaction_parameter": "pressure",
    "cell_dx_m": "resolution.cell_size", "cell_dy_m": "resolution.cell_size",
    "time_step_s": "resolution.time_step", "particle_weight": "resolution.particle_weight",
    "particles_per_cell": "resolution.particles_per_cell",
    "expected_particles": "resolution.particles_per_cell",
    "histogram_speed_max_m_s": "histograms.speed_max",
}


def _source_key(case: Case, quantity: str) -> str:
    """Dotted key of the reference state's ``quantity`` ("pressure" or "temperature"); the
    side alone when it is split into pieces (the case keeps them by position, not by their
    order in the file)."""
    _, _, src = reference_state(case)
    if src == "initial fill":
        return f"initial.{quantity}"
    side = src.rsplit(" ", 1)[-1]
    if len(case.side(side)) > 1:
        return f"boundaries.{side}"
    return f"boundaries.{side}.{quantity}"


def make_plan(case: Case) -> Plan:
    """Resolve the plan of ``case`` (overrides in the case win over automatic choices).

    Raises
    ------
    CaseError
        If the plan cannot be represented (a number that overflows or vanishes), naming
        the key that drives it. The loader's ranges (``rarefy.case_schema.RANGES``) keep
        every case file inside what the planner can represent, so this is a last check
        for cases built in code.
    """
    try:
        with np.errstate(all="ignore"):
            plan = _resolve(case)
    except (ArithmeticError, ValueError) as exc:
        raise CaseError(case.source_path, _source_key(case, "pressure"),
                        f"the plan cannot be computed ({exc}); keep pressures, "
                        "temperatures and sizes within the ranges of docs/case-files.md") \
            from None
    for name, key in _POSITIVE_FIELDS.items():
        value = float(getattr(plan, name))
        if not (math.isfinite(value) and value > 0.0):
            if key in ("pressure", "temperature"):
                key = _source_key(case, key)
            raise CaseError(case.source_path, key,
                            f"gives a plan with {name} = {value:.3g}, which cannot be "
                            "simulated; keep pressures, temperatures and sizes within the "
                            "ranges of docs/case-files.md")
    return plan


def _resolve(case: Case) -> Plan:
    sp = get_species(case.gas.species)
    model = sp.model(case.gas.model)
    m = sp.mass_kg
    p_ref, t_ref, src = reference_state(case)
    n_ref = kinetic.number_density(p_ref, t_ref)
    mfp = kinetic.mean_free_path(model, n_ref, t_ref)
    mu = kinetic.viscosity(model, t_ref)
    mix = mixture_of(case.gas)
    species_mfp = ()
    cbar = kinetic.mean_speed(m, t_ref)
    vmp = kinetic.most_probable_speed(m, t_ref)
    tau = mfp / cbar
    if mix.nspecies > 1:
        # mean mass, mixture mean free path and Wilke viscosity for the similarity
        # numbers; the collision time from every pair's rate; the lightest species'
        # mean speed for the time step and the heaviest's for the settling transit
        m = mix.mean_mass()
        mfp = float(mix.mean_free_path(n_ref, t_ref))
        species_mfp = tuple(float(v) for v in mix.momentum_mean_free_paths(n_ref, t_ref))
        mu = mix.viscosity(t_ref)
        tau = mix.collision_time(n_ref, t_ref)
        cbar = kinetic.mean_speed(float(mix.masses.min()), t_ref)
        vmp = kinetic.most_probable_speed(float(mix.masses.max()), t_ref)
    length = characteristic_length(case)
    d = case.domain
    lx, ly = d.xmax - d.xmin, d.ymax - d.ymin
    chosen = {}
    res, run = case.resolution, case.run

    if res.cell_size_m:
        target = res.cell_size_m
        chosen["cell_size"] = "case"
    else:
        target = min(mfp / 3.0, length / 6.0)
        half = 0.5 * length
        target = half / math.ceil(half / target - 1e-9)
        # keep the grid within a laptop's reach; the warning says what it costs
        if not (math.isfinite(target) and target > 0.0):
            raise ArithmeticError(f"cell size {target!r} m")
        while (lx / target) * (ly / target) > MAX_CELLS_AUTO:
            target *= 1.25
        chosen["cell_size"] = "auto"
    nx, dx = _grid(lx, target)
    ny, dy = _grid(ly, target)

    if res.time_step_s:
        dt = res.time_step_s
        chosen["time_step"] = "case"
    else:
        dt = min(0.2 * tau, 0.5 * min(dx, dy) / cbar)
        chosen["time_step"] = "auto"

    # reference cell: planar, dx dy depth; axisymmetric, the ring on the axis (weight 1;
    # every radial row then holds about the same number of particles)
    vcell = math.pi * dy * dy * dx if d.axisymmetric else dx * dy * d.depth_m
    if res.particle_weight:
        fnum = res.particle_weight
        chosen["particle_weight"] = "case"
    else:
        ppc_target = res.particles_per_cell or DEFAULT_PARTICLES_PER_CELL
        fnum = n_ref * vcell / ppc_target
        chosen["particle_weight"] = "case" if res.particles_per_cell else "auto"
    ppc = n_ref * vcell / fnum

    if run.settle_steps is not None:
        settle = run.settle_steps
        chosen["settle_steps"] = "case"
    else:
        transit = 4.0 * (lx + ly) / vmp
        settle = math.ceil(max(transit + min(10.0 * tau, transit), _fill_time(case, cbar))
                           / dt)
        chosen["settle_steps"] = "auto"
    if run.sample_steps is not None:
        sample = run.sample_steps
        chosen["sample_steps"] = "case"
    else:
        sample = max(1000, 2 * settle)
        chosen["sample_steps"] = "auto"
    batches = run.batches or DEFAULT_BATCHES
    batches = min(batches, sample)
    subcells = res.subcells or DEFAULT_SUBCELLS

    light = float(mix.masses.min())
    return Plan(
        gas="+".join(mix.names), model=model.kind, mass_kg=m,
        species=mix.names, mole_fractions=mix.fractions, species_mean_free_path_m=species_mfp,
        reference_pressure_pa=p_ref, reference_temperature_k=t_ref,
        reference_number_density_m3=n_ref, reference_source=src,
        mean_free_path_m=mfp, collision_time_s=tau, viscosity_pa_s=mu, mean_speed_m_s=cbar,
        characteristic_length_m=length, knudsen_number=mfp / length,
        rarefaction_parameter=kinetic.rarefaction_parameter(p_ref, 0.5 * length, mu, m, t_ref),
        nx=nx, ny=ny, cell_dx_m=dx, cell_dy_m=dy, subcells=subcells, time_step_s=dt,
        particle_weight=fnum, particles_per_cell=ppc, settle_steps=settle,
        sample_steps=sample, batches=batches,
        expected_particles=ppc * nx * ny, **_internal(case, t_ref, chosen),
        chosen=chosen, histogram_speed_max_m_s=histogram_speed_max(case, light),
        histogram_bins=case.histograms.bins or DEFAULT_HISTOGRAM_BINS,
    )


def _internal(case: Case, t_ref: float, chosen: dict) -> dict:
    """Plan entries of the internal energy (``rarefy.gas.internal``), per species and,
    for a pure gas, also as single values."""
    g = case.gas
    mix = mixture_of(g)
    rows = [_species_internal(g, k, get_species(name), mix.models[k], t_ref)
            for k, name in enumerate(mix.names)]
    per = {key: tuple(r[key] for r in rows) for key in rows[0]}
    out = {f"species_{key}": v for key, v in per.items()}
    if not any(per["rot_dof"]):
        return out
    chosen["rotation"] = "case" if g.rotation_set else "auto"
    vibration = any(t > 0.0 for t in per["theta_vib_k"])
    out.update(rot_dof=max(per["rot_dof"]), vibration=vibration,
               gamma=internal.gamma_of_mixture(mix.fractions, per["rot_dof"], t_ref,
                                               per["theta_vib_k"] if vibration else None))
    if mix.nspecies == 1:
        out.update({key: v[0] for key, v in per.items()
                    if key not in ("rot_dof", "rotation_source")})
    return out


def _species_internal(g, k: int, sp, model, t_ref: float) -> dict:
    """Internal-energy entries of species k (zeros for a monatomic one)."""
    out = dict(rot_dof=sp.rot_dof, rotation="", rotation_source="", rot_collision_number=0.0,
               rot_selection_probability=0.0, rot_floor_temperature_k=0.0,
               theta_vib_k=0.0, vib_collision_number=0.0)
    if not sp.rot_dof:
        return out
    setting = g.rotation_of(k)
    if setting == "parker":
        z = float(internal.parker_zrot(t_ref, *sp.parker))
        out["rot_floor_temperature_k"] = internal.parker_floor_temperature(
            sp.parker, sp.rot_dof, model.omega)
    else:
        z = float(setting)
    out.update(rotation="parker" if setting == "parker" else "constant",
               rotation_source="case" if g.rotation_from_case(k) else "auto",
               rot_collision_number=z,
               rot_selection_probability=internal.selection_probability(z, sp.rot_dof,
                                                                         model.omega))
    if g.vibration:
        out.update(theta_vib_k=sp.theta_vib_k,
                   vib_collision_number=vib_collision_number(g, model, t_ref, sp.theta_vib_k))
    return out


def vib_collision_number(g, model, t_k: float, theta_k: float) -> float:
    """Z_vib: the case's number, or Millikan-White's p tau times nu / p at ``t_k``."""
    if g.vibration_number != "millikan-white":
        return float(g.vibration_number)
    p_tau = internal.millikan_white_p_tau(t_k, model.mass_kg, theta_k)
    nu_p = kinetic.collision_frequency(model, 1.0, t_k) / (K_B * t_k)
    return float(max(1.0, p_tau * nu_p))


def format_plan(plan: Plan) -> str:
    """The plan as text, with resolution diagnostics and warnings."""
    src = plan.chosen
    lines = [
        f"gas                    {plan.gas} ({plan.model.upper()})" + (
            "; mole fractions " + ", ".join(f"{n} {x:.4g}" for n, x in
                                            zip(plan.species, plan.mole_fractions))
            if len(plan.species) > 1 else ""),
        f"reference state        {plan.reference_pressure_pa:.4g} Pa, "
        f"{plan.reference_temperature_k:.4g} K ({plan.reference_source})",
        f"mean free path         {plan.mean_free_path_m * 1e3:.4g} mm",
        f"mean collision time    {plan.collision_time_s:.4g} s",
        f"characteristic length  {plan.characteristic_length_m * 1e3:.4g} mm",
        f"Knudsen number         {plan.knudsen_number:.4g}",
        f"rarefaction parameter  {plan.rarefaction_parameter:.4g} (delta = p a/(mu v0), "
        "a = L/2)",
        f"grid                   {plan.nx} x {plan.ny} cells of "
        f"{plan.cell_dx_m * 1e3:.4g} x {plan.cell_dy_m * 1e3:.4g} mm "
        f"({src.get('cell_size')}), {plan.subcells}x{plan.subcells} sub-cells",
        f"time step              {plan.time_step_s:.4g} s ({src.get('time_step')})",
        f"particle weight        {plan.particle_weight:.4g} molecules per particle "
        f"({src.get('particle_weight')})",
        f"steps                  {plan.settle_steps} to settle "
        f"({src.get('settle_steps')}), {plan.sample_steps} sampled "
        f"({src.get('sample_steps')}) in {plan.batches} batches",
        f"particles (estimate)   {plan.expected_particles:.3g} if the whole domain were at "
        "the reference state",
        f"internal energy        {internal_line(plan)}",
        "",
        "resolution diagnostics (usual limits in brackets)",
        f"  cell size / mean free path       {plan.cell_over_mfp:.3g}  "
        f"[<= {LIMIT_CELL_OVER_MFP:.2f}]",
        f"  time step / collision time       {plan.dt_over_tau:.3g}  "
        f"[<= {LIMIT_DT_OVER_TAU:.2f}]",
        f"  cells crossed per step           {plan.transit_fraction:.3g}  [< 1]",
        f"  particles per cell (reference)   {plan.particles_per_cell:.3g}  "
        f"[>= {LIMIT_MIN_PARTICLES_PER_CELL:.0f}]",
    ]
    warn = plan.warnings()
    lines += [""] + [f"warning: {w}" for w in warn] if warn else ["", "all within limits"]
    return "\n".join(lines)


_INTERNAL_KEYS = ("rot_dof", "rotation", "rot_collision_number", "theta_vib_k",
                  "vib_collision_number", "rotation_source")


def internal_line(plan: Plan) -> str:
    """One line on the internal energy the run exchanges (of a mixture, one part per
    molecular species)."""
    if not plan.rot_dof:
        return "none (monatomic), gamma 5/3"
    if plan.species_rot_dof:
        rows = [dict(zip(_INTERNAL_KEYS, v)) for v in zip(
            *(getattr(plan, f"species_{key}") for key in _INTERNAL_KEYS))]
    else:   # a plan stored by a version without per-species entries
        rows = [{key: getattr(plan, key) for key in _INTERNAL_KEYS[:-1]}]
        rows[0]["theta_vib_k"] *= plan.vibration
        rows[0]["rotation_source"] = plan.chosen.get("rotation", "case")
    parts = [(f"{plan.species[k]}: " if len(rows) > 1 else "")
             + _species_internal_text(plan, row)
             for k, row in enumerate(rows) if row["rot_dof"]]
    return "; ".join(parts) + f"; gamma {plan.gamma:.4g}"


def _species_internal_text(plan: Plan, row: dict) -> str:
    parker = row["rotation"] == "parker"
    how = "Parker's formula" if parker else row["rotation_source"]
    at = f" at {plan.reference_temperature_k:.4g} K" if parker else ""
    text = (f"rotation {row['rot_dof']} dof, Z_rot {row['rot_collision_number']:.3g}{at} "
            f"({how}); vibration ")
    if row["theta_vib_k"] > 0.0:
        return text + (f"on (theta {row['theta_vib_k']:g} K, Z_vib "
                       f"{row['vib_collision_number']:.3g} at "
                       f"{plan.reference_temperature_k:.4g} K)")
    return text + "frozen"
