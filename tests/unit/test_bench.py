"""tools/bench.py runs at a tiny size and returns its documented keys (no timing checks)."""

import importlib.util
import json
import math
from pathlib import Path

import pytest

BENCH = Path(__file__).resolve().parents[2] / "tools" / "bench.py"
PHASES = ("inject", "move", "index", "collide", "sample")
CASES = ("collisional_box", "collisionless_slit", "collisionless_tube", "transitional_orifice")
POSITIVE = ("particle_steps_per_s", "ns_per_particle_step", "bytes_owned_per_particle",
            "roofline_particle_steps_per_s", "roofline_ratio", "cpu_over_wall")


def _load():
    spec = importlib.util.spec_from_file_location("rarefy_tools_bench", BENCH)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _finite_positive(x) -> bool:
    return isinstance(x, (int, float)) and math.isfinite(x) and x > 0


@pytest.fixture(scope="module")
def bench():
    return _load()


@pytest.fixture(scope="module")
def result(bench):
    return bench.run_bench(sizes=[2e4, 3e4], steps=3, repeats=1, with_startup=False,
                           bandwidth_mb=32, settle_steps=30)


def test_cases_have_documented_keys(result):
    for name in CASES:
        r = result[name]
        for key in POSITIVE:
            assert _finite_positive(r[key]), (name, key, r[key])
        assert set(r["phases"]) == set(PHASES)
        assert all(math.isfinite(v) and v >= 0 for v in r["phases"].values())
        assert r["phases"]["move"] > 0 and r["phases"]["index"] > 0
        assert r["particles"] > 0 and r["cells"] > 0
        assert r["traffic_bytes_per_particle_step"]["total"] == sum(
            r["traffic_bytes_per_particle_step"][k] for k in PHASES)
        assert [s["size"] for s in r["by_size"]] == [2e4, 3e4]
        assert _finite_positive(r["cost_ratio"]["ratio"])
        rss = r["rss_bytes_per_particle"]
        assert rss is None or math.isfinite(rss)


def test_open_cases_reach_the_size(result):
    for name in CASES:
        for r in result[name]["by_size"]:
            assert 0.5 * r["size"] < r["particles"] < 2.0 * r["size"], (name, r["particles"])
    assert result["collisionless_tube"]["plan"]["axisymmetric"]
    assert result["transitional_orifice"]["plan"]["axisymmetric"]
    assert abs(result["transitional_orifice"]["plan"]["delta"] - 1.0) < 0.02


def test_machine_and_threads(result):
    m = result["machine"]
    assert _finite_positive(m["copy_bandwidth_gb_s"]) and m["cores"] >= 1
    assert result["threads"] >= 1
    assert isinstance(result["parallel_kernels"], list) and result["threads_note"]
    assert result["startup"] is None and result["time_to_answer"] is None
    json.dumps(result)   # JSON-ready


def test_command_line_json(bench, capsys):
    bench.main(["--json", "--sizes", "2e4", "--steps", "2", "--repeats", "1", "--no-startup",
                "--min-particle-steps", "0",
                "--cases", "collisional_box", "--bandwidth-mb", "32"])
    out = json.loads(capsys.readouterr().out)
    r = out["collisional_box"]
    assert _finite_positive(r["particle_steps_per_s"])
    assert set(r["phases"]) == set(PHASES)
    assert r["cost_ratio"] is None
