"""MPI support is optional: without mpi4py everything else works and --replicas says how
to install it."""

import sys

import pytest
from click.testing import CliRunner

from rarefy import mpi
from rarefy.cli import cli
from rarefy.templates import slit_case


def test_without_mpi4py_the_error_says_how_to_install_it(monkeypatch):
    monkeypatch.setitem(sys.modules, "mpi4py", None)      # import fails
    with pytest.raises(mpi.MPIUnavailable, match=r"pip install 'rarefy\[mpi\]'"):
        mpi.world()


def test_run_replicas_without_mpi4py_is_one_line_exit_2(tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "mpi4py", None)
    case = tmp_path / "s.toml"
    case.write_text(slit_case())
    res = CliRunner().invoke(cli, ["run", str(case), "-o", str(tmp_path / "r"), "--replicas"])
    assert res.exit_code == 2 and "rarefy[mpi]" in res.output and "Traceback" not in res.output


def test_replicas_refuse_resume_and_target_error(tmp_path):
    case = tmp_path / "s.toml"
    case.write_text(slit_case())
    for extra in (["--resume"], ["--target-error", "0.01"]):
        res = CliRunner().invoke(cli, ["run", str(case), "-o", str(tmp_path / "r"),
                                       "--replicas", *extra])
        assert res.exit_code == 2 and "does not combine with --replicas" in res.output


def test_launch_size_from_the_launcher_environment(monkeypatch):
    for var in ("PMI_SIZE", "OMPI_COMM_WORLD_SIZE", "MPI_LOCALNRANKS"):
        monkeypatch.delenv(var, raising=False)
    assert mpi.launched_size() == 1
    monkeypatch.setenv("PMI_SIZE", "4")
    assert mpi.launched_size() == 4


def test_replica_seeds_differ_and_repeat():
    seeds = [mpi.replica_seed(7, r) for r in range(8)]
    assert len(set(seeds)) == 8 and seeds == [mpi.replica_seed(7, r) for r in range(8)]
