"""Tests of rarefy.guards: plans refused before a run for memory, grid, steps and time."""

from __future__ import annotations

import dataclasses
import math

import pytest

from rarefy import guards
from rarefy.case import CaseError, RunControl, parse_case
from rarefy.guards import (
    ASSUMED_PARTICLE_STEPS_PER_S,
    BYTES_PER_PARTICLE,
    bytes_per_particle,
    MAX_CELLS,
    MAX_STEPS,
    STORE_HEADROOM,
    GuardError,
    check_plan,
    default_memory_budget,
    estimate_memory_bytes,
    estimate_wall_time_s,
)
from rarefy.plan import make_plan
from rarefy.templates import box_case, channel_case, orifice_case, slit_case, tube_case
from rarefy.units import parse_quantity

PATH = "cases/guarded.toml"
GIB = 2 ** 30
TEMPLATES = {"slit": slit_case, "channel": channel_case, "orifice": orifice_case,
             "tube": tube_case, "box": box_case}


def planned(text: str):
    case = parse_case(text, PATH)
    return case, make_plan(case)


def refused(text: str, **budgets) -> GuardError:
    case, plan = planned(text)
    with pytest.raises(GuardError) as info:
        check_plan(case, plan, **budgets)
    exc = info.value
    msg = str(exc)
    assert "\n" not in msg and msg.startswith(f"{PATH}: {exc.key}: "), msg
    assert exc.path == PATH and msg == f"{PATH}: {exc.key}: {exc.message}"
    return exc


def with_section(text: str, section: str, body: str) -> str:
    return text + f"\n[{section}]\n{body}\n"


# ----------------------------------------------------------------------- typical cases pass

@pytest.mark.parametrize("kind", sorted(TEMPLATES))
@pytest.mark.parametrize("pressure", [0.1, 1.0, 16.0])
def test_templates_pass_without_warnings(kind, pressure):
    arg = "pressure_pa" if kind == "box" else "upstream_pressure_pa"
    case, plan = planned(TEMPLATES[kind](**{arg: pressure}))
    assert check_plan(case, plan, memory_budget_bytes=8 * GIB) == []
    assert check_plan(case, plan, memory_budget_bytes=8 * GIB, time_budget_s=3600.0) == []


def test_default_memory_budget_is_half_the_machine(monkeypatch):
    import os
    total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    assert default_memory_budget() == total // 2

    def broken(name):
        raise ValueError(name)
    monkeypatch.setattr(guards.os, "sysconf", broken)
    assert default_memory_budget() == 8 * GIB


def test_guard_error_is_a_value_error():
    exc = GuardError("a.toml", "run.time_budget", "too long")
    assert isinstance(exc, ValueError)
    assert str(exc) == "a.toml: run.time_budget: too long"
    assert str(GuardError("a.toml", "k\ney", "x\ny")) == "a.toml: k\\ney: x\\ny"


# ----------------------------------------------------------------------------------- memory

def test_particle_state_is_84_bytes():
    assert BYTES_PER_PARTICLE == 5 * 8 * 2 + 4 == 84
    case, plan = planned(slit_case())
    parts = estimate_memory_bytes(case, plan)
    assert parts["particles"] == pytest.approx(plan.expected_particles
                                               * (STORE_HEADROOM * 84 + 16))
    assert parts["grid"] > 0 and parts["batches"] > 0


def test_molecules_pay_for_their_internal_energy_rows():
    # the guard's bytes per particle equal what the store allocates (two float64 buffers
    # of 5 + internal rows, and an int32 key): 84 Ar, 100 N2, 116 N2 with vibration
    from rarefy.engine.internal_params import internal_rows
    from rarefy.engine.particles import NVAR, ParticleStore
    for gas, extra, expected in (("Ar", {}, 84), ("N2", {}, 100),
                                 ("N2", {"gas.vibration": True}, 116),
                                 ("Ar", {"gas.species": ["He", "Ar"],
                                         "gas.mole_fractions": [0.5, 0.5]}, 100)):
        case = parse_case(slit_case(gas=gas), "slit.toml", overrides=extra or None)
        plan = make_plan(case)
        store = ParticleStore(1000, NVAR + internal_rows(plan) + (len(plan.species) > 1))
        slot = (store.state.nbytes + store.spare.nbytes + store.key.nbytes) / 1000
        assert bytes_per_particle(plan) == slot == expected, gas


def test_memory_guard_names_the_particle_keys():
    text = slit_case(upstream_pressure_pa=1000.0)      # about 4.5e6 particles, ~0.5 GiB
    exc = refused(text, memory_budget_bytes=0.25 * GIB)
    assert exc.key == "resolution.particles_per_cell"
    for fragment in ("4.45e+06 particles", "MiB of memory", "84 bytes each",
                     "budget of 256 MiB", "resolution.particles_per_cell",
                     "resolution.cell_size", "resolution.particle_weight"):
        assert fragment in exc.message, exc.message
    case, plan = planned(text)
    assert check_plan(case, plan, memory_budget_bytes=8 * GIB, time_budget_s=1e6) == []
    # near the budget: a warning, not an error
    need = sum(estimate_memory_bytes(case, plan).values())
    warnings = check_plan(case, plan, memory_budget_bytes=1.5 * need, time_budget_s=1e6)
    assert len(warnings) == 1 and "memory" in warnings[0]


def test_memory_guard_names_the_weight_the_case_sets():
    text = with_section(slit_case(), "resolution", "particle_weight = 1e6")
    exc = refused(text, memory_budget_bytes=GIB)
    assert exc.key == "resolution.particle_weight"


def test_memory_guard_uses_the_machine_budget_by_default(monkeypatch):
    monkeypatch.setattr(guards, "default_memory_budget", lambda: 10 * 2 ** 20)
    exc = refused(slit_case(upstream_pressure_pa=16.0))
    assert "budget of 10 MiB" in exc.message


def test_batch_tallies_count_against_memory():
    text = with_section(slit_case(), "run", "sample_steps = 100000000\nbatches = 100000000")
    exc = refused(text, memory_budget_bytes=8 * GIB)
    assert exc.key == "run.batches" and "sampling batches" in exc.message


# ------------------------------------------------------------------------------------- grid

def test_grid_guard():
    exc = refused(with_section(slit_case(), "resolution", 'cell_size = "1 um"'))
    assert exc.key == "resolution.cell_size"
    assert "65,000,000 cells" in exc.message and f"{MAX_CELLS:,}" in exc.message


def test_subcell_guard():
    text = with_section(slit_case(), "resolution", 'cell_size = "5 um"\nsubcells = 10')
    exc = refused(text, memory_budget_bytes=64 * GIB)
    assert exc.key == "resolution.subcells" and "sub-cells" in exc.message


def test_step_guard():
    exc = refused(with_section(slit_case(), "run", f"sample_steps = {2 * MAX_STEPS}"))
    assert exc.key == "run.sample_steps" and "1,000,000,000 allowed" in exc.message


# -------------------------------------------------------------------------------- time step

def test_auto_time_step_never_crosses_a_cell():
    for make in TEMPLATES.values():
        _, plan = planned(make())
        assert plan.transit_fraction <= 0.5 + 1e-12


def test_time_step_crossing_several_cells_is_refused():
    _, plan = planned(slit_case())
    crossing = min(plan.cell_dx_m, plan.cell_dy_m) / plan.mean_speed_m_s   # 1 cell per step
    text = with_section(slit_case(), "resolution", f"time_step = {float(3.0 * crossing)!r}")
    exc = refused(text)
    assert exc.key == "resolution.time_step"
    assert "cross 3 cells per step" in exc.message and "at most 2" in exc.message
    assert f"<= {crossing:.3g} s" in exc.message


def test_long_flights_are_allowed_in_nearly_free_molecular_flow():
    # at 1e-3 Pa the mean free path is metres: a step of 16 cells is 1e-4 collision times
    text = slit_case(upstream_pressure_pa=1e-3)
    _, plan = planned(text)
    crossing = min(plan.cell_dx_m, plan.cell_dy_m) / plan.mean_speed_m_s
    case, plan = planned(with_section(text, "resolution",
                                      f"time_step = {float(16.0 * crossing)!r}"))
    assert plan.transit_fraction > 2.0 and plan.dt_over_tau < 0.05
    check_plan(case, plan, memory_budget_bytes=8 * GIB)


def test_time_step_crossing_one_to_two_cells_warns():
    _, plan = planned(slit_case())
    crossing = min(plan.cell_dx_m, plan.cell_dy_m) / plan.mean_speed_m_s
    case, plan = planned(with_section(slit_case(), "resolution",
                                      f"time_step = {float(1.5 * crossing)!r}"))
    assert 1.0 < plan.transit_fraction < 2.0
    assert check_plan(case, plan, memory_budget_bytes=8 * GIB) == []
    assert any("cells per step" in w for w in plan.warnings())


# -------------------------------------------------------------------------------- wall time

def test_wall_time_estimate():
    _, plan = planned(slit_case())
    assert ASSUMED_PARTICLE_STEPS_PER_S == 5e6
    assert estimate_wall_time_s(plan) == pytest.approx(
        plan.expected_particles * (plan.settle_steps + plan.sample_steps) / 5e6)


def test_time_budget_from_the_case():
    case, plan = planned(slit_case())
    estimate = estimate_wall_time_s(plan)                       # about 46 s
    text = with_section(slit_case(), "run", f'time_budget = "{estimate / 2:.6g} s"')
    exc = refused(text, memory_budget_bytes=8 * GIB)
    assert exc.key == "resolution.particles_per_cell"
    for fragment in ("would take about 46 s", "particle-steps/s", "time budget of 23 s",
                     "run.settle_steps", "run.sample_steps", "raise run.time_budget"):
        assert fragment in exc.message, exc.message
    # the command-line budget wins over the case's
    case, plan = planned(text)
    assert check_plan(case, plan, memory_budget_bytes=8 * GIB, time_budget_s=1e4) == []
    exc = refused(slit_case(), memory_budget_bytes=8 * GIB, time_budget_s=estimate / 2)
    assert "raise --time-budget" in exc.message


def test_time_budget_names_the_steps_the_case_sets():
    text = with_section(slit_case(), "run", 'sample_steps = 100000\ntime_budget = "1 min"')
    assert refused(text, memory_budget_bytes=8 * GIB).key == "run.sample_steps"


def test_time_budget_warnings():
    case, plan = planned(slit_case())
    estimate = estimate_wall_time_s(plan)
    warnings = check_plan(case, plan, memory_budget_bytes=8 * GIB, time_budget_s=1.5 * estimate)
    assert len(warnings) == 1 and "half of the time budget" in warnings[0]
    # no budget: a run beyond a day is pointed out
    case, plan = planned(slit_case(upstream_pressure_pa=1000.0))
    assert estimate_wall_time_s(plan) > 86400.0
    warnings = check_plan(case, plan, memory_budget_bytes=8 * GIB)
    assert len(warnings) == 1 and "run.time_budget" in warnings[0]


# ----------------------------------------------------------------------- run.time_budget key

@pytest.mark.parametrize("text, seconds", [('"2 h"', 7200.0), ('"90 min"', 5400.0),
                                           ('"1.5h"', 5400.0), ("600", 600.0),
                                           ('"250 ms"', 0.25)])
def test_time_budget_key(text, seconds):
    case = parse_case(with_section(slit_case(), "run", f"time_budget = {text}"), PATH)
    assert case.run.time_budget_s == pytest.approx(seconds)


@pytest.mark.parametrize("text, fragment", [('"0 s"', "> 0 s"), ('"-1 h"', "> 0 s"),
                                            ('"2 hours"', "s, ms, us, ns, min, h"),
                                            ('"nan h"', "not a finite"), ("true", "time value"),
                                            ('"1e300 h"', "from 1e-18 to 1e+09 s")])
def test_bad_time_budget(text, fragment):
    with pytest.raises(CaseError) as info:
        parse_case(with_section(slit_case(), "run", f"time_budget = {text}"), PATH)
    assert info.value.key == "run.time_budget" and fragment in info.value.message


def test_time_budget_override_and_default():
    assert parse_case(slit_case(), PATH).run.time_budget_s is None
    assert RunControl(None, None, None, None).time_budget_s is None
    case = parse_case(slit_case(), PATH, overrides={"run.time_budget": "3 min"})
    assert case.run.time_budget_s == 180.0


def test_hour_and_minute_units():
    assert parse_quantity("2 h", "time") == 7200.0
    assert parse_quantity("1.5 min", "time") == 90.0
    with pytest.raises(ValueError):
        parse_quantity("2 min", "length")


def test_plan_is_unchanged_by_the_guards():
    case, plan = planned(slit_case())
    before = dataclasses.asdict(plan)
    check_plan(case, plan, memory_budget_bytes=8 * GIB, time_budget_s=1e6)
    assert dataclasses.asdict(plan) == before
    assert math.isfinite(estimate_wall_time_s(plan))


def test_step_guard_names_what_made_the_steps():
    exc = refused(with_section(slit_case(), "resolution", 'time_step = "1e-15 s"'))
    assert exc.key == "resolution.time_step"
    exc = refused(slit_case(upstream_pressure_pa=1e9), memory_budget_bytes=1e30)
    assert exc.key == "run.settle_steps" and "mean collision time" in exc.message
