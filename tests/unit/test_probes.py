"""Probes: case keys, the sampling kernel, probe volumes and the binned fits."""

import math

import numpy as np
import pytest
from click.testing import CliRunner
from scipy import stats

from rarefy.case import CaseError, parse_case
from rarefy.cli import cli
from rarefy.kernels.config import H_SPEED, H_VX, H_VY, N_PROBE_MOMENTS, PM_C, PM_VX, PM_W
from rarefy.kernels.sample import sample_probes
from rarefy.post.fit import drifting_speed_cdf, fit_binned
from rarefy.post.probes import stderr_key
from rarefy.templates import box_case, orifice_case

BASE = box_case(gas="Ar", temperature_k=300.0, pressure_pa=1.0, size_m=10e-3)


def _case(extra: str, text: str = BASE):
    return parse_case(text + extra, "case.toml")


def test_probe_keys_are_read():
    case = _case('\n[[probes]]\nname = "p"\nx = ["1 mm", "2 mm"]\ny = ["3 mm", "5 mm"]\n'
                 'direction = "y"\n[histograms]\nspeed_max = "2 km/s"\nbins = 50\n')
    (p,) = case.probes
    assert (p.name, p.x, p.y, p.direction) == ("p", (1e-3, 2e-3), (3e-3, 5e-3), "y")
    assert case.histograms.speed_max_m_s == 2000.0 and case.histograms.bins == 50


@pytest.mark.parametrize("extra, key, words", [
    ('\n[[probes]]\nname = "p"\nx = ["1 mm", "2 mm"]\n', "probes[0].y", "required"),
    ('\n[[probes]]\nname = "p"\nx = ["2 mm", "1 mm"]\ny = ["0 mm", "1 mm"]\n', "probes[0].x",
     "greater"),
    ('\n[[probes]]\nname = "p"\nx = ["1 mm", "20 mm"]\ny = ["0 mm", "1 mm"]\n', "probes[0].x",
     "outside"),
    ('\n[[probes]]\nname = "p"\nx = ["1 mm", "2 mm"]\ny = ["0 mm", "1 mm"]\nsize = 1\n',
     "probes[0].size", "unknown key"),
    ('\n[[probes]]\nname = "p"\nx = ["1 mm", "2 mm"]\ny = ["0 mm", "1 mm"]\ndirection = "z"\n',
     "probes[0].direction", "one of"),
    ('\n[histograms]\nbins = 3\n', "histograms.bins", ">= 10"),
    ('\n[histograms]\nspeed_max = "-1 m/s"\n', "histograms.speed_max", "> 0"),
])
def test_bad_probe_keys_name_file_key_and_what_is_allowed(extra, key, words):
    with pytest.raises(CaseError) as err:
        _case(extra)
    msg = str(err.value)
    assert msg.startswith("case.toml: " + key) and words in msg, msg


def test_probe_and_flux_plane_names_share_one_namespace():
    text = orifice_case(gas="Ar", upstream_pressure_pa=1.0, radius_m=1e-3)
    with pytest.raises(CaseError, match="already used"):
        _case('\n[[probes]]\nname = "throat"\nx = ["1 mm", "2 mm"]\ny = ["0 mm", "1 mm"]\n',
              text)


def test_templates_put_probes_on_the_axis_beyond_the_exit():
    case = parse_case(orifice_case(gas="Ar", upstream_pressure_pa=1.0, radius_m=1e-3), "o")
    assert [p.name for p in case.probes] == ["axis_1a", "axis_2a", "axis_4a"]
    assert [0.5 * sum(p.x) for p in case.probes] == pytest.approx([1e-3, 2e-3, 4e-3])
    assert all(p.y[0] == 0.0 for p in case.probes)


def test_probe_volume_planar_and_ring():
    # planar: box area x depth; axisymmetric: pi (r1^2 - r0^2)(x1 - x0) -- geometry
    from rarefy.geometry.planar import build_geometry
    from rarefy.geometry.probes import build_probes
    from rarefy.plan import make_plan
    case = _case('\n[[probes]]\nname = "p"\nx = ["1.3 mm", "2.9 mm"]\ny = ["3.1 mm", "5 mm"]\n')
    plan = make_plan(case)
    pr = build_probes(case, build_geometry(case, plan))
    assert pr.volume[0] == pytest.approx(1.6e-3 * 1.9e-3 * case.domain.depth_m, rel=1e-12)
    text = orifice_case(gas="Ar", upstream_pressure_pa=1.0, radius_m=1e-3)
    case = _case('\n[[probes]]\nname = "ring"\nx = ["1.1 mm", "2.3 mm"]\n'
                 'y = ["0.3 mm", "1.7 mm"]\n', text)
    plan = make_plan(case)
    pr = build_probes(case, build_geometry(case, plan))
    q = pr.names.index("ring")
    assert pr.volume[q] == pytest.approx(math.pi * (1.7e-3 ** 2 - 0.3e-3 ** 2) * 1.2e-3,
                                         rel=1e-12)


def test_sample_probes_matches_numpy_histograms():
    rng = np.random.default_rng(4)
    n = 20000
    x, y = rng.random(n), rng.random(n)
    v = rng.normal(0.0, 300.0, (3, n))
    # one cell covering everything, no sub-cells
    key_start = np.array([0, n], dtype=np.int64)
    box = np.array([[0.2, 0.7, 0.1, 0.6]])
    nb, vmax = 50, 1500.0
    mom = np.zeros((1, N_PROBE_MOMENTS))
    hist = np.zeros((1, 4, nb + 1))
    sample_probes(box, np.array([0], dtype=np.int64), np.array([0, 1], dtype=np.int64), 1,
                  key_start, np.array([2.0]), x, y, v[0], v[1], v[2], np.zeros((0, n)),
                  np.zeros(1), 1, vmax,
                  mom, hist, 0.5)
    inside = (x >= 0.2) & (x < 0.7) & (y >= 0.1) & (y < 0.6)
    c = np.sqrt((v[:, inside] ** 2).sum(axis=0))
    assert mom[0, PM_W] == pytest.approx(inside.sum())        # weight 2 x 0.5
    assert mom[0, PM_VX] == pytest.approx(v[0, inside].sum(), rel=1e-12)
    assert mom[0, PM_C] == pytest.approx(c.sum(), rel=1e-12)
    ref, _ = np.histogram(c, bins=nb, range=(0.0, vmax))
    np.testing.assert_allclose(hist[0, H_SPEED, :nb], ref)
    assert hist[0, H_SPEED, nb] == np.sum(c >= vmax)
    ref, _ = np.histogram(v[0, inside], bins=nb, range=(-vmax, vmax))
    np.testing.assert_allclose(hist[0, H_VX, :nb], ref)
    assert hist[0, H_VY].sum() == inside.sum()


def _batches(sampler, edges, nbatch=10):
    return np.array([np.histogram(sampler(), bins=edges)[0] for _ in range(nbatch)], float)


def test_drifting_speed_cdf_against_monte_carlo_and_scipy():
    # u -> 0: the Maxwell cdf (scipy.stats.maxwell, scale a / sqrt 2)
    v = np.linspace(0.0, 3000.0, 50)
    np.testing.assert_allclose(drifting_speed_cdf(v, 0.0, 400.0),
                               stats.maxwell(scale=400.0 / math.sqrt(2)).cdf(v), atol=1e-9)
    # drifting: the speeds of Gaussian velocities around (u, 0, 0), 10^6 samples
    rng = np.random.default_rng(1)
    s = rng.normal(0.0, 400.0 / math.sqrt(2), (3, 10 ** 6))
    s[0] += 700.0
    c = np.sqrt((s ** 2).sum(axis=0))
    emp = np.searchsorted(np.sort(c), v) / c.size
    assert np.max(np.abs(emp - drifting_speed_cdf(v, 700.0, 400.0))) < 2e-3


def test_binned_fit_recovers_parameters_within_its_error():
    rng = np.random.default_rng(7)
    a_true, u_true = 350.0, 500.0
    edges = np.linspace(0.0, 2500.0, 201)

    def draw():
        s = rng.normal(0.0, a_true / math.sqrt(2), (3, 20000))
        s[0] += u_true
        return np.sqrt((s ** 2).sum(axis=0))
    h = _batches(draw, edges)
    fit = fit_binned(edges, h, lambda v, a: drifting_speed_cdf(v, u_true, a), [300.0])
    assert abs(fit.params[0] - a_true) < 4 * fit.stderr[0]
    assert fit.stderr[0] < 0.003 * a_true
    assert 0.6 < fit.reduced_chi_square < 1.5 and fit.ks_p_value > 0.01
    assert fit.dispersion == pytest.approx(1.0, abs=0.3)     # independent samples
    # a wrong model is rejected
    bad = fit_binned(edges, h, lambda v, a: drifting_speed_cdf(v, 0.0, a), [300.0])
    assert bad.reduced_chi_square > 5 and bad.ks_p_value < 1e-6


def test_stderr_keys_keep_the_unit_last():
    assert stderr_key("number_density_m3") == "number_density_stderr_m3"
    assert stderr_key("mean_speed_m_s") == "mean_speed_stderr_m_s"
    assert stderr_key("temperature_k") == "temperature_stderr_k"
    assert stderr_key("speed_ratio") == "speed_ratio_stderr"


def test_plot_rejects_an_unknown_probe(tmp_path):
    res = CliRunner().invoke(cli, ["plot", str(tmp_path), "--probe", "x"])
    assert res.exit_code == 2 and "Traceback" not in res.output


def test_orifice_axis_beam_against_a_monte_carlo_cone_average():
    # Molecules on the axis at z behind a thin orifice: reservoir Maxwellian restricted to
    # the cone through the hole (solid-angle argument, kinetic theory). Monte Carlo:
    # isotropic Maxwellian velocities, kept where they point into the cone.
    from rarefy.constants import K_B
    from rarefy.theory.effusion import orifice_axis_beam
    m, t, a, z = 6.63e-26, 300.0, 1e-3, 1.5e-3
    rng = np.random.default_rng(3)
    v = rng.normal(0.0, math.sqrt(K_B * t / m), (3, 4 * 10 ** 6))
    c = np.sqrt((v ** 2).sum(axis=0))
    keep = v[0] / c >= z / math.hypot(z, a)
    vx = v[0, keep]
    ref = orifice_axis_beam(z, a, t, m)
    assert vx.mean() == pytest.approx(ref["drift_m_s"], rel=3e-3)
    assert m * vx.var() / K_B == pytest.approx(ref["temperature_parallel_k"], rel=1e-2)
    assert m * v[1, keep].var() / K_B == pytest.approx(ref["temperature_perpendicular_k"],
                                                       rel=1e-2)
    # far away: the effusive beam's speed ratio sqrt(4/pi) / sqrt(3 - 8/pi)
    far = orifice_axis_beam(1e3, a, t, m)["speed_ratio"]
    assert far == pytest.approx(math.sqrt(4 / math.pi) / math.sqrt(3 - 8 / math.pi), rel=1e-6)
