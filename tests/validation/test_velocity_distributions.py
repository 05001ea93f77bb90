"""Velocity distributions sampled by probes and flux planes, against kinetic theory.

Sources: the Maxwell-Boltzmann speed distribution as implemented by
``scipy.stats.maxwell`` (scale sqrt(kT/m)); the flux-weighted distribution of molecules
crossing a surface, F(v) = 1 - (1 + x^2) exp(-x^2), x = v/v_mp, with mean speed
sqrt(9 pi kT/(8m)) and mean energy 2kT (kinetic theory of effusion; e.g. Present 1958,
Kinetic Theory of Gases, ch. 2 -- from memory; physics.md); v_mp = sqrt(2kT/m), mean
sqrt(8kT/(pi m)), rms sqrt(3kT/m) (common practice).

Sampled histograms are correlated (a molecule is counted on many steps); the KS tests use
the effective number of samples N / r, with the dispersion factor r from the scatter of
the batch histograms (``rarefy.post.fit``), and binned CDFs compared at the bin edges.
"""

import math
import re

import numpy as np
import pytest
from scipy import stats

from rarefy.case import parse_case
from rarefy.cli import execute
from rarefy.constants import K_B
from rarefy.gas.species import get_species
from rarefy.io.result import read_result
from rarefy.kernels.config import F_HIST, H_SPEED
from rarefy.post.fit import dispersion_factor
from rarefy.report import load_report

pytestmark = pytest.mark.validation

BOX = """
title = "gas at rest in a closed box with diffuse walls (test scenario)"
[gas]
species = "{gas}"
[domain]
x = ["0 mm", "10 mm"]
y = ["0 mm", "10 mm"]
[boundaries]
xmin = {{ kind = "wall", temperature = "{t} K" }}
xmax = {{ kind = "wall", temperature = "{t} K" }}
ymin = {{ kind = "wall", temperature = "{t} K" }}
ymax = {{ kind = "wall", temperature = "{t} K" }}
[initial]
pressure = "1 Pa"
temperature = "{t} K"
[[probes]]
name = "middle"
x = ["1 mm", "9 mm"]
y = ["1 mm", "9 mm"]
[resolution]
cell_size = "0.5 mm"
particles_per_cell = 100
[run]
settle_steps = 50
sample_steps = 2000
batches = 20
"""
# The gas exchanges energy with the walls only: a closed box of N particles has a
# temperature that fluctuates by sqrt(2/(3N)) (canonical ensemble) and relaxes on the
# time molecules take to reach a wall. At 1 Pa (Kn ~ 0.5-2) that is a few tens of steps,
# so 20 batches of 100 steps are nearly independent; 40 000 particles keep the
# fluctuation at 0.4 %, averaged down to ~0.1 % over the run.


def _ks_against(edges, batch_hist, cdf):
    """KS distance between a binned sample (overflow bin last) and ``cdf`` at the bin
    edges, and its p-value for the effective number of samples."""
    counts = batch_hist.sum(axis=0)
    n = counts.sum()
    emp = np.cumsum(counts[:-1]) / n
    d = float(np.max(np.abs(emp - cdf(edges[1:]))))
    neff = n / dispersion_factor(batch_hist[:, :-1])
    return d, float(stats.kstwo.sf(d, int(neff))), neff


# One seed per case: the random streams are keyed by (seed, step, cell), so boxes of
# the same size run with one seed would draw the same numbers and their checks would
# not be independent.
@pytest.mark.parametrize("gas, t, seed", [("He", 300.0, 11), ("N2", 300.0, 12),
                                          ("CO2", 300.0, 13), ("CO2", 1000.0, 14)])
def test_box_probe_is_maxwell_boltzmann(tmp_path, gas, t, seed):
    case = parse_case(BOX.format(gas=gas, t=t), "box.toml")
    execute(case, tmp_path, seed=seed, quiet=True)
    r = read_result(tmp_path)
    pr = load_report(tmp_path)["probes"]["middle"]
    m = get_species(gas).mass_kg
    scale = math.sqrt(K_B * t / m)
    hist = r.probe_hist[:, 0, H_SPEED, :]
    # shape: KS against the Maxwell-Boltzmann distribution at the gas's own mean
    # temperature; that temperature is checked against the walls' below. (Against 300 K
    # itself the KS distance would also see the box's temperature wander: 0.1 % of T
    # moves the CDF by 4.6e-4, as much as the KS noise of 3e6 effective samples, and
    # the runs differ from the wall temperature by 0.06-0.1 %.)
    t_gas = pr["temperature_k"]
    d, p, neff = _ks_against(r.speed_edges, hist,
                             stats.maxwell(scale=math.sqrt(K_B * t_gas / m)).cdf)
    theory = {"most_probable_speed": math.sqrt(2) * scale,
              "mean_speed": stats.maxwell(scale=scale).mean(),
              "rms_speed": math.sqrt(3) * scale}
    print(f"\n{gas} {t:g} K: gas at {t_gas:.2f} K, KS D = {d:.2e}, p = {p:.3f} "
          f"({neff:.3g} effective samples)")
    assert p > 0.01, (d, neff)
    # power: the same sample against the distribution 1 % hotter must fail
    _, p_wrong, _ = _ks_against(r.speed_edges, hist,
                                stats.maxwell(scale=math.sqrt(K_B * 1.01 * t_gas / m)).cdf)
    assert p_wrong < 1e-6
    for key, ref in theory.items():
        v, se = pr[f"{key}_m_s"], pr[f"{key}_stderr_m_s"]
        print(f"  {key}: {v:.2f} +- {se:.2f} m/s vs {ref:.2f} ({(v / ref - 1) * 100:+.3f} %)")
        assert se < 0.002 * ref, "run too short for a 0.5 % check to be able to fail"
        assert abs(v / ref - 1.0) < 0.005
    assert pr["temperature_k"] == pytest.approx(t, abs=4 * pr["temperature_stderr_k"])
    assert abs(pr["speed_ratio"]) < 4 * pr["speed_ratio_stderr"] + 1e-3
    # the fit's own goodness figure agrees
    assert pr["speed_fit"]["ks_p_value"] > 0.01
    assert 0.7 < pr["speed_fit"]["reduced_chi_square"] < 1.4


EFFUSION = """
title = "free-molecular effusion from a thin round orifice into vacuum (test scenario)"
[gas]
species = "Ar"
[domain]
geometry = "axisymmetric"
x = ["-0.5 mm", "2 mm"]
y = ["0 mm", "1 mm"]
characteristic_length = "1 mm"
[boundaries.xmin]
kind = "reservoir"
pressure = "0.01 Pa"
temperature = "300 K"
[boundaries.ymin]
kind = "axis"
[[boundaries.ymax]]
kind = "reservoir"
from = "-0.5 mm"
to = "0 mm"
pressure = "0.01 Pa"
temperature = "300 K"
[[boundaries.ymax]]
kind = "vacuum"
from = "0 mm"
to = "2 mm"
[boundaries.xmax]
kind = "vacuum"
[[walls]]
name = "plate"
points = [["0 mm", "0.5 mm"], ["0 mm", "1 mm"]]
surface = "diffuse"
temperature = "300 K"
[[flux_planes]]
name = "aperture"
points = [["0 mm", "0 mm"], ["0 mm", "0.5 mm"]]
opening = "orifice"
[[probes]]
name = "beam"
x = ["0.25 mm", "1.25 mm"]
y = ["0 mm", "0.5 mm"]
[resolution]
cell_size = "0.125 mm"
particles_per_cell = 10
time_step = "3e-7 s"
[run]
settle_steps = 200
sample_steps = 30000
batches = 30
"""


def test_free_molecular_effusion_speed_distributions(tmp_path):
    case = parse_case(EFFUSION, "effusion.toml")
    execute(case, tmp_path, seed=5, quiet=True)
    r = read_result(tmp_path)
    rep = load_report(tmp_path)
    assert rep["knudsen_number"] > 100
    m = r.attrs["mass_kg"]
    t = 300.0
    vmp = math.sqrt(2 * K_B * t / m)
    # (1) density-weighted at a probe downstream: molecules come straight from the
    # reservoir through the opening, so their speeds are the reservoir Maxwellian
    hist = r.probe_hist[:, 0, H_SPEED, :]
    d, p, neff = _ks_against(r.speed_edges, hist,
                             stats.maxwell(scale=math.sqrt(K_B * t / m)).cdf)
    pr = rep["probes"]["beam"]
    mean, se = pr["mean_speed_m_s"], pr["mean_speed_stderr_m_s"]
    ref = math.sqrt(8 * K_B * t / (math.pi * m))
    print(f"\nprobe: KS D = {d:.2e}, p = {p:.3f} ({neff:.3g} effective samples); mean speed "
          f"{mean:.2f} +- {se:.2f} m/s vs {ref:.2f} ({(mean / ref - 1) * 100:+.3f} %)")
    assert p > 0.01
    assert se < 0.004 * ref, "run too short for a 1 % check to be able to fail"
    assert abs(mean / ref - 1) < 0.01 and abs(mean - ref) < 3 * se
    # (2) flux-weighted through the aperture: the histogram of crossing speeds
    nb = len(r.speed_edges) - 1
    cross = r.flux[:, 0, F_HIST:F_HIST + nb + 1]
    d, p, neff = _ks_against(r.speed_edges, cross,
                             lambda v: 1 - (1 + (v / vmp) ** 2) * np.exp(-(v / vmp) ** 2))
    c = 0.5 * (r.speed_edges[1:] + r.speed_edges[:-1])
    per_batch = cross[:, :-1]
    mean_b = (per_batch @ c) / per_batch.sum(axis=1)
    energy_b = (per_batch @ (0.5 * m * c * c)) / per_batch.sum(axis=1)
    for name, vals, ref in (("mean speed", mean_b, math.sqrt(9 * math.pi * K_B * t / (8 * m))),
                            ("mean energy", energy_b, 2 * K_B * t)):
        v, se = vals.mean(), vals.std(ddof=1) / math.sqrt(len(vals))
        print(f"aperture {name}: {v:.5g} +- {se:.2g} vs {ref:.5g} "
              f"({(v / ref - 1) * 100:+.3f} %); KS D = {d:.2e}, p = {p:.3f} ({neff:.3g})")
        assert se < 0.004 * ref
        assert abs(v / ref - 1) < 0.01 and abs(v - ref) < 3 * se
    assert p > 0.01


def test_example_beam_source_runs_end_to_end_to_a_tof_plot(tmp_path):
    # the documented example (examples/beam-source), shortened; then `rarefy tof` on its
    # on-axis probe. Recovery from the trace returns the probe's flux-weighted mean speed
    # (the deconvolution is validated on its own in test_tof_effusive.py).
    from pathlib import Path

    from click.testing import CliRunner

    from rarefy.cli import cli

    example = Path(__file__).resolve().parents[2] / "examples" / "beam-source" / "case.toml"
    run = tmp_path / "beam-run"
    res = CliRunner().invoke(cli, ["run", str(example), "-o", str(run), "-q", "--seed", "3",
                                   "--set", "run.sample_steps=3000",
                                   "--set", "run.batches=20"])
    assert res.exit_code == 0, res.output
    res = CliRunner().invoke(cli, ["tof", str(run), "--source", "axis_4a",
                                   "--flight-length", "0.45 m", "--slit-width", "1 mm",
                                   "--rim-speed", "150 m/s", "--ionizer-length", "5 mm"])
    assert res.exit_code == 0, res.output
    source = float(re.search(r"source\s+([\d.]+) m/s", res.output).group(1))
    recovered = float(re.search(r"recovered from TOF\s+([\d.]+) m/s", res.output).group(1))
    assert abs(recovered / source - 1) < 0.02, res.output
    for name in ("tof_axis_4a.csv", "tof_axis_4a.png", "speeds_from_tof_axis_4a.png"):
        assert (run / "tof" / name).stat().st_size > 0
    res = CliRunner().invoke(cli, ["plot", str(run), "--probe", "axis_4a"])
    assert res.exit_code == 0 and (run / "plots" / "probe_axis_4a.png").exists()
