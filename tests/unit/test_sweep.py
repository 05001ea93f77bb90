"""Parameter sweeps: --set parsing, the upstream_pressure key, a tiny real sweep, errors."""

import csv
import json
import math
import multiprocessing

import click
import pytest
from click.testing import CliRunner

from rarefy.case import CaseError, load_case
from rarefy.cli_sweep import sweep
from rarefy.sweep import COLUMNS, parse_sweep, plot_sweep, run_sweep, sweep_keys
from rarefy.templates import slit_case

TINY = ["--set", "resolution.cell_size=0.25 mm", "--set", "run.settle_steps=50",
        "--set", "run.sample_steps=60", "--set", "run.batches=3"]
TINY_FIXED = {"resolution.cell_size": "0.25 mm", "run.settle_steps": "50",
              "run.sample_steps": "60", "run.batches": "3"}


def invoke(*args):
    group = click.Group("rarefy")
    group.add_command(sweep)
    return CliRunner().invoke(group, ["sweep", *args], catch_exceptions=False)


@pytest.fixture(scope="module")
def slit(tmp_path_factory):
    path = tmp_path_factory.mktemp("case") / "slit.toml"
    path.write_text(slit_case(upstream_pressure_pa=0.5))
    return path


# ------------------------------------------------------------------------------ parsing
def test_parse_sweep_splits_swept_and_fixed():
    key, values, fixed = parse_sweep(("boundaries.xmin.pressure=1 Pa, 10 Pa,100 Pa",
                                      "run.seed=3", "gas.species=Ar"))
    assert key == "boundaries.xmin.pressure"
    assert values == ["1 Pa", "10 Pa", "100 Pa"]
    assert fixed == {"run.seed": "3", "gas.species": "Ar"}


def test_parse_sweep_keeps_commas_inside_arrays_and_quotes():
    key, values, fixed = parse_sweep(('domain.x=["-5 mm", "8 mm"]', 'title="a, b"',
                                      "run.batches=2,4"))
    assert (key, values) == ("run.batches", ["2", "4"])
    assert fixed == {"domain.x": '["-5 mm", "8 mm"]', "title": '"a, b"'}
    key, values, _ = parse_sweep(('domain.x=["-5 mm", "8 mm"],["-6 mm", "8 mm"]',))
    assert values == ['["-5 mm", "8 mm"]', '["-6 mm", "8 mm"]']


@pytest.mark.parametrize("sets, words", [
    ((), "found: none"),
    (("run.seed=3",), "found: none"),
    (("a.b=1,2", "c.d=3,4"), "found: a.b, c.d"),
    (("run.seed",), "expected KEY=VALUE"),
    (("a.b=1,,2",), "empty value"),
    (("a.b=1,2", "a.b=3"), "more than once"),
])
def test_parse_sweep_errors(sets, words):
    with pytest.raises(ValueError, match=words):
        parse_sweep(sets)


# ---------------------------------------------------------------------- upstream_pressure
def test_upstream_pressure_sets_every_upstream_reservoir_piece(slit, tmp_path):
    assert sweep_keys(slit, "boundaries.xmin.pressure") == ["boundaries.xmin.pressure"]
    keys = sweep_keys(slit, "upstream_pressure")
    assert keys == ["boundaries.xmin.pressure", "boundaries.ymax[0].pressure"]
    case = load_case(slit, {k: "7 Pa" for k in keys})
    assert sorted(b.pressure_pa for b in case.boundaries if b.kind == "reservoir") == [7.0, 7.0]
    # a downstream reservoir at a lower pressure is left alone
    both = tmp_path / "both.toml"
    both.write_text(slit_case(upstream_pressure_pa=2.0, downstream_pressure_pa=0.5))
    keys = sweep_keys(both, "upstream_pressure")
    assert keys == ["boundaries.xmin.pressure", "boundaries.ymax[0].pressure"]
    # fixed overrides are applied before the highest pressure is found
    keys = sweep_keys(both, "upstream_pressure", {"boundaries.xmax.pressure": "300 Pa"})
    assert keys == ["boundaries.xmax.pressure"]


def test_upstream_pressure_without_reservoir(tmp_path):
    from rarefy.templates import box_case
    box = tmp_path / "box.toml"
    box.write_text(box_case())
    with pytest.raises(CaseError, match="needs a reservoir"):
        sweep_keys(box, "upstream_pressure")


# ---------------------------------------------------------------------------- real sweep
@pytest.fixture(scope="module")
def swept(slit, tmp_path_factory):
    out = tmp_path_factory.mktemp("sweep") / "out"
    r = invoke(str(slit), "--set", "boundaries.xmin.pressure=0.5 Pa,1 Pa", "-o", str(out),
               "--jobs", "2", "--seed", "11", "-q", *TINY)
    return out, r


def test_sweep_writes_table_csv_json_png(swept):
    out, r = swept
    assert r.exit_code == 0, r.output
    assert "sweep.csv" in r.output and "sweep.png" in r.output
    with open(out / "sweep.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert len(rows) == 2
    assert tuple(rows[0]) == COLUMNS
    assert [r["value"] for r in rows] == ["0.5 Pa", "1 Pa"]
    assert [int(r["seed"]) for r in rows] == [11, 12]
    for i, row in enumerate(rows):
        assert row["error"] == ""
        assert row["run_dir"].endswith(f"point-{i:02d}")
        assert (out / f"point-{i:02d}" / "result.h5").is_file()
        assert float(row["transmission_probability"]) > 0
        assert float(row["transmission_probability_stderr"]) > 0
        assert float(row["free_molecular_transmission"]) == 1.0
        assert 1.5 < float(row["continuum_transmission"]) < 2.0
    d0, d1 = (float(r["rarefaction_parameter"]) for r in rows)
    assert math.isclose(d1 / d0, 2.0, rel_tol=1e-6)  # delta is proportional to pressure
    assert (out / "sweep.png").stat().st_size > 10_000
    data = json.loads((out / "sweep.json").read_text())
    assert data["key"] == "boundaries.xmin.pressure" and data["plane"] == "throat"
    assert len(data["rows"]) == 2 and data["fixed"]["run.batches"] == "3"
    assert not list(out.glob("*.tmp"))


def test_upstream_pressure_sweep_runs(slit, tmp_path):
    rows = run_sweep(slit, "upstream_pressure", ["2 Pa"], tmp_path / "up",
                     fixed=TINY_FIXED, jobs=1, seed=5)
    assert rows[0]["error"] == "" and rows[0]["seed"] == 5
    assert rows[0]["upstream_pressure_pa"] == 2.0  # both upstream pieces were set
    assert (tmp_path / "up" / "point-00" / "result.h5").is_file()


@pytest.mark.skipif("fork" not in multiprocessing.get_all_start_methods(),
                    reason="the patched function reaches the workers only by fork")
def test_failed_point_does_not_stop_the_others(slit, tmp_path, monkeypatch):
    import rarefy.cli
    import rarefy.sweep
    real = rarefy.cli.execute
    # fork (not the sweep's spawn) carries the patch into the workers; they run on one
    # thread each (two jobs on two cores), so their kernels stay serial and never start
    # a thread pool in the forked copy of this process
    monkeypatch.setattr(rarefy.sweep, "START_METHOD", "fork")
    monkeypatch.setattr(rarefy.sweep, "share_of_cores", lambda jobs: 1)

    def flaky(case, rundir, seed, quiet=False):
        if seed == 1:
            raise RuntimeError("simulated failure")
        return real(case, rundir, seed, quiet)

    monkeypatch.setattr(rarefy.cli, "execute", flaky)
    rows = run_sweep(slit, "boundaries.xmin.pressure", ["0.5 Pa", "1 Pa"], tmp_path / "f",
                     fixed=TINY_FIXED, jobs=2, seed=0)
    assert rows[0]["error"] == "" and rows[0]["transmission_probability"] > 0
    assert rows[1]["error"] == "simulated failure"
    assert math.isnan(rows[1]["transmission_probability"])
    assert len((tmp_path / "f" / "sweep.csv").read_text().splitlines()) == 3


def test_bad_value_fails_fast(slit, tmp_path):
    out = tmp_path / "bad"
    r = invoke(str(slit), "--set", "boundaries.xmin.pressure=1 Pa,3 psi", "-o", str(out), *TINY)
    assert r.exit_code == 2
    assert "boundaries.xmin.pressure" in r.output and "psi" in r.output
    assert not out.exists()


@pytest.mark.parametrize("args, words", [
    (["--set", "run.seed=1"], "exactly one"),
    (["--set", "boundaries.xmin.pressure=1 Pa,2 Pa", "--plane", "nope"], "no such flux plane"),
    (["--set", "upstream_pressure=1 Pa,2 Pa", "--set", "boundaries.xmin.pressure=3 Pa"],
     "both swept and fixed"),
    (["--set", "nosuch.key=1,2"], "unknown override key"),
])
def test_input_errors_exit_2(slit, tmp_path, args, words):
    out = tmp_path / "bad"
    r = invoke(str(slit), "-o", str(out), *args)
    assert r.exit_code == 2 and words in r.output
    assert not out.exists()


def test_plot_with_failed_points_only(tmp_path):
    row = {**dict.fromkeys(COLUMNS, math.nan), "value": "1 Pa", "error": "boom", "gas": ""}
    assert plot_sweep([row], tmp_path / "p.png").is_file()
