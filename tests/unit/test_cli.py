"""Command line: the tour from the README, the JSON contract, errors, reproducibility."""

import json

import h5py
import numpy as np
import pytest
from click.testing import CliRunner

from rarefy.cli import cli

SMALL = ["--set", "run.settle_steps=60", "--set", "run.sample_steps=80", "--set",
         "run.batches=4", "--set", "resolution.cell_size=0.25 mm"]


def invoke(*args):
    return CliRunner().invoke(cli, list(args), catch_exceptions=False)


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    d = tmp_path_factory.mktemp("cli")
    case = d / "slit.toml"
    r = invoke("new", "slit", "-o", str(case), "--upstream-pressure", "5Pa", "--width", "1 mm")
    assert r.exit_code == 0, r.output
    r = invoke("run", str(case), "-o", str(d / "run"), "--seed", "7", "-q", *SMALL)
    assert r.exit_code == 0, r.output
    return d


def test_check_prints_plan(run_dir):
    r = invoke("check", str(run_dir / "slit.toml"))
    assert r.exit_code == 0
    for word in ("mean free path", "Knudsen number", "rarefaction parameter", "time step",
                 "particles per cell"):
        assert word in r.output


def test_report_json_contract(run_dir):
    r = invoke("report", str(run_dir / "run"), "--json")
    assert r.exit_code == 0
    rep = json.loads(r.output)
    for key in ("gas", "knudsen_number", "rarefaction_parameter", "diagnostics", "flux_planes"):
        assert key in rep
    for key in ("collision_frequency_hz", "mean_collision_separation_over_mfp",
                "particles_per_cell"):
        assert key in rep["diagnostics"]
    fp = rep["flux_planes"]["throat"]
    for key in ("mass_flow_kg_s", "mass_flow_stderr_kg_s", "free_molecular_mass_flow_kg_s",
                "transmission_probability", "transmission_probability_stderr",
                "throughput_pa_m3_s", "conductance_m3_s", "analytic"):
        assert key in fp
    assert rep["seed"] == 7
    assert fp["mass_flow_kg_s"] > 0 and fp["mass_flow_stderr_kg_s"] > 0


def test_result_file_is_self_describing(run_dir):
    with h5py.File(run_dir / "run" / "result.h5") as f:
        assert f.attrs["seed"] == 7
        assert "rarefy_version" in f.attrs and "plan" in f.attrs
        assert "[gas]" in f["case/text"][()].decode()
        for name in f.attrs["cell_fields"].split():
            for ds in (f[name], f[name + "_stderr"]):
                assert "units" in ds.attrs, name
                assert ds.dims[1][0].name == "/x"
    assert not list((run_dir / "run").glob("*.tmp"))


def test_plot_writes_pngs(run_dir):
    r = invoke("plot", str(run_dir / "run"))
    assert r.exit_code == 0
    assert (run_dir / "run" / "plots" / "fields.png").stat().st_size > 10_000


def test_same_seed_same_result(run_dir, tmp_path):
    r = invoke("run", str(run_dir / "slit.toml"), "-o", str(tmp_path / "again"), "--seed", "7",
               "-q", *SMALL)
    assert r.exit_code == 0
    with h5py.File(run_dir / "run" / "result.h5") as a, \
            h5py.File(tmp_path / "again" / "result.h5") as b:
        assert np.array_equal(a["raw/flux_tally"][()], b["raw/flux_tally"][()])
        assert np.array_equal(a["raw/cell_total"][()], b["raw/cell_total"][()])


@pytest.mark.parametrize("args, words", [
    (["check", "missing.toml"], ["missing.toml"]),
    (["run", "missing.toml", "-o", "x"], ["missing.toml"]),
    (["new", "slit", "-o", "{d}/a.toml", "--upstream-pressure", "3 psi"],
     ["--upstream-pressure", "Pa"]),
    (["new", "slit", "-o", "{d}/a.toml", "--gas", "Unobtainium"], ["--gas", "Ar"]),
    (["report", "{d}"], ["no result.h5"]),
])
def test_bad_input_is_one_line_exit_2(tmp_path, args, words):
    args = [a.replace("{d}", str(tmp_path)) for a in args]
    r = CliRunner().invoke(cli, args)
    assert r.exit_code == 2, r.output
    assert "Traceback" not in r.output
    msg = r.output.strip().splitlines()
    assert len(msg) == 1 and msg[0].startswith("error:")
    for w in words:
        assert w in msg[0]


def test_bad_case_key_names_file_and_key(tmp_path):
    case = tmp_path / "bad.toml"
    invoke("new", "box", "-o", str(case))
    case.write_text(case.read_text().replace("[initial]", "[initial]\nbogus = 1"))
    r = CliRunner().invoke(cli, ["check", str(case)])
    assert r.exit_code == 2
    assert "bad.toml" in r.output and "initial" in r.output and "bogus" in r.output


def test_gases_lists_table():
    r = invoke("gases")
    assert r.exit_code == 0
    for gas in ("He", "Ne", "Ar", "Kr", "Xe", "H2", "N2", "O2", "CO2", "CH4", "air"):
        assert gas in r.output
    assert "Bird" in r.output


def test_overrides_reach_the_report(tmp_path):
    # the report must describe the run as it ran: an overridden upstream pressure sets the
    # free-molecular reference flow (A p0 sqrt(m / 2 pi k T), kinetic theory)
    case = tmp_path / "slit.toml"
    invoke("new", "slit", "-o", str(case), "--upstream-pressure", "0.5 Pa")
    r = invoke("run", str(case), "-o", str(tmp_path / "run"), "--seed", "3", "-q", *SMALL,
               "--set", "boundaries.xmin.pressure=2 Pa", "--set",
               "boundaries.ymax[0].pressure=2 Pa")
    assert r.exit_code == 0, r.output
    rep = json.loads(invoke("report", str(tmp_path / "run"), "--json").output)
    fp = rep["flux_planes"]["throat"]
    assert fp["upstream_pressure_pa"] == 2.0
    assert rep["case_overrides"]["boundaries.xmin.pressure"] == "2 Pa"
    assert json.loads((tmp_path / "run" / "case-overrides.json").read_text())


def test_target_error_keeps_sampling_until_reached(tmp_path):
    case = tmp_path / "slit.toml"
    invoke("new", "slit", "-o", str(case), "--upstream-pressure", "5 Pa")
    r = invoke("run", str(case), "-o", str(tmp_path / "run"), "--seed", "5", "-q", *SMALL,
               "--target-error", "0.01", "--max-steps", "5000")
    assert r.exit_code == 0, r.output
    rep = json.loads(invoke("report", str(tmp_path / "run"), "--json").output)
    fp = rep["flux_planes"]["throat"]
    assert fp["mass_flow_stderr_kg_s"] / fp["mass_flow_kg_s"] <= 0.01
    assert rep["batches"] > 4 and rep["stop_reason"].startswith("target error reached")


def test_target_error_step_cap(tmp_path):
    case = tmp_path / "slit.toml"
    invoke("new", "slit", "-o", str(case), "--upstream-pressure", "5 Pa")
    r = invoke("run", str(case), "-o", str(tmp_path / "run"), "--seed", "5", "-q", *SMALL,
               "--target-error", "0.0001", "--max-steps", "300")
    assert r.exit_code == 0, r.output
    rep = json.loads(invoke("report", str(tmp_path / "run"), "--json").output)
    assert rep["steps"] <= 300 and rep["stop_reason"].startswith("step cap")
