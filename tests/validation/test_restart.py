"""Interrupted runs: kill -9 at random moments, checkpoints, --resume, reproducibility.

No outside reference is needed here: the uninterrupted run of the same case and seed is
the reference. Checkpoints are taken where the kernels' random stream starts a new
segment (``rarefy.engine.simulation.RESEED_EVERY``), so a resumed run must repeat the
uninterrupted one bit for bit -- a stronger check than agreement within statistical
error, which is asserted as well.
"""

import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from rarefy.io.checkpoint import CHECKPOINT_NAME, read_checkpoint
from rarefy.io.result import RESULT_NAME, read_result
from rarefy.report import load_report
from rarefy.templates import slit_case

pytestmark = pytest.mark.validation

KILLS = 20


def _case(tmp_path: Path, sample_steps: int = 2400) -> Path:
    text = slit_case(gas="Ar", temperature_k=300.0, upstream_pressure_pa=8.0, width_m=1e-3)
    text += f"\n[run]\nsettle_steps = 300\nsample_steps = {sample_steps}\nbatches = 12\n"
    path = tmp_path / "slit.toml"
    path.write_text(text)
    return path


def _cmd(case: Path, out: Path, *extra: str) -> list[str]:
    return [sys.executable, "-m", "rarefy.cli", "run", str(case), "-o", str(out), "-q",
            "--seed", "7", "--checkpoint-every", "0", *extra]


def _check_files_open(out: Path) -> None:
    if (out / RESULT_NAME).exists():
        r = read_result(out)
        assert r.batches >= 2
    if (out / CHECKPOINT_NAME).exists():
        meta, snap = read_checkpoint(out / CHECKPOINT_NAME)
        assert meta["seed"] == 7 and snap["state"].shape[0] == 5


def test_kill_9_at_random_moments_then_resume_repeats_the_run(tmp_path):
    case = _case(tmp_path, sample_steps=7200)
    ref_dir = tmp_path / "reference"
    subprocess.run(_cmd(case, ref_dir), check=True, capture_output=True)
    ref = read_result(ref_dir)

    out = tmp_path / "killed"
    rng = np.random.default_rng(2026)
    kills = 0
    finished = False
    while not finished:
        resume = (out / CHECKPOINT_NAME).exists()
        proc = subprocess.Popen(_cmd(case, out, *(["--resume"] if resume else [])),
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        if kills < KILLS:
            try:
                # start-up (imports, cached kernels) takes about a second, so some kills
                # land before the first step, most during stepping or writing
                _, err = proc.communicate(timeout=rng.uniform(0.3, 2.5))
                finished = True       # it finished before the kill
            except subprocess.TimeoutExpired:
                os.kill(proc.pid, signal.SIGKILL)
                _, err = proc.communicate()
                kills += 1
        else:
            _, err = proc.communicate(timeout=600)
            finished = True
        if finished:
            assert proc.returncode == 0, err.decode()
        _check_files_open(out)        # whatever moment it died, the files open
    assert kills == KILLS
    got = read_result(out)
    assert not got.attrs["interrupted"]
    assert not (out / CHECKPOINT_NAME).exists()
    # bit for bit: every tally of the resumed run equals the uninterrupted one
    np.testing.assert_array_equal(got.flux, ref.flux)
    np.testing.assert_array_equal(got.surf, ref.surf)
    np.testing.assert_array_equal(got.cell_total, ref.cell_total)
    a = load_report(ref_dir)["flux_planes"]["throat"]
    b = load_report(out)["flux_planes"]["throat"]
    assert b["mass_flow_kg_s"] == a["mass_flow_kg_s"]
    assert abs(b["mass_flow_kg_s"] - a["mass_flow_kg_s"]) <= 3 * math.hypot(
        a["mass_flow_stderr_kg_s"], b["mass_flow_stderr_kg_s"])


def test_sigterm_writes_a_checkpoint_and_partial_result_then_resume_completes(tmp_path):
    case = _case(tmp_path)
    out = tmp_path / "run"
    proc = subprocess.Popen(_cmd(case, out), stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE)
    deadline = time.monotonic() + 120
    while not (out / RESULT_NAME).exists() and time.monotonic() < deadline:
        time.sleep(0.05)      # a partial result exists once two batches are done
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    err = err.decode()
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert "--resume" in err and "Traceback" not in err
    partial = read_result(out)
    assert partial.attrs["interrupted"]
    rep = subprocess.run(_cmd(case, out, "--resume"), capture_output=True, text=True)
    assert rep.returncode == 0, rep.stderr
    done = read_result(out)
    assert not done.attrs["interrupted"] and done.batches == 12


def test_same_seed_gives_identical_results(tmp_path):
    case = _case(tmp_path)
    for name in ("a", "b"):
        subprocess.run(_cmd(case, tmp_path / name), check=True, capture_output=True)
    a, b = read_result(tmp_path / "a"), read_result(tmp_path / "b")
    np.testing.assert_array_equal(a.flux, b.flux)
    np.testing.assert_array_equal(a.cell_total, b.cell_total)
    for k in a.fields:
        np.testing.assert_array_equal(a.fields[k], b.fields[k])


def test_resume_refuses_a_different_case(tmp_path):
    case = _case(tmp_path)
    out = tmp_path / "run"
    proc = subprocess.Popen(_cmd(case, out), stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 120
    while not (out / CHECKPOINT_NAME).exists() and time.monotonic() < deadline:
        time.sleep(0.05)
    os.kill(proc.pid, signal.SIGKILL)
    proc.communicate()
    res = subprocess.run(_cmd(case, out, "--resume", "--set", "run.batches=6"),
                         capture_output=True, text=True)
    assert res.returncode == 2 and "differ" in res.stderr and "Traceback" not in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1
    # a fresh run into the folder would overwrite the checkpoint: refused
    res = subprocess.run(_cmd(case, out), capture_output=True, text=True)
    assert res.returncode == 2 and "--resume" in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1


def test_ctrl_c_stops_a_sweep_and_keeps_the_finished_points(tmp_path):
    case = _case(tmp_path)
    out = tmp_path / "sweep"
    proc = subprocess.Popen(
        [sys.executable, "-m", "rarefy.cli", "sweep", str(case), "--set",
         "upstream_pressure=8Pa,9Pa,10Pa,11Pa", "-o", str(out), "--jobs", "1", "-q"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True)
    deadline = time.monotonic() + 300
    while not (out / "point-00" / RESULT_NAME).exists() and time.monotonic() < deadline:
        time.sleep(0.05)
    while not (out / "point-01" / "case.toml").exists() and time.monotonic() < deadline:
        time.sleep(0.05)
    time.sleep(1.0)                          # point-01 is stepping
    os.killpg(proc.pid, signal.SIGINT)       # Ctrl-C reaches the whole process group
    _, err = proc.communicate(timeout=120)
    err = err.decode()
    assert proc.returncode == 130, err
    assert "Traceback" not in err and "sweep.csv" in err
    rows = (out / "sweep.csv").read_text().splitlines()
    assert len(rows) == 5
    assert not (out / "point-03").exists()           # queued points never started
    assert (out / "point-01" / CHECKPOINT_NAME).exists()   # the running one can resume
