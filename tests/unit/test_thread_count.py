"""Which kernels a step uses, and how processes share the cores (rarefy.threads)."""

import numba
import pytest

from rarefy import threads


@pytest.fixture
def restore_threads():
    before = numba.get_num_threads()
    yield
    numba.set_num_threads(before)


def test_one_thread_never_runs_parallel(restore_threads):
    threads.use_threads(1)
    assert numba.get_num_threads() == 1
    assert not threads.run_parallel(10 ** 7)


@pytest.mark.skipif(numba.config.NUMBA_NUM_THREADS < 2, reason="needs two cores")
def test_threshold_follows_the_pool(restore_threads):
    threads.use_threads(2)
    layer = threads.threading_layer()          # starts the pool if needed
    assert layer in ("omp", "tbb", "workqueue")
    low = threads.parallel_min_particles()
    assert low == (threads.PARALLEL_MIN_FAST_POOL if layer in ("omp", "tbb")
                   else threads.PARALLEL_MIN_SLOW_POOL)
    assert not threads.run_parallel(low - 1) and threads.run_parallel(low)
    assert not threads.run_parallel(threads.PARALLEL_MIN_FAST_POOL - 1)


def test_use_threads_clips_and_share_of_cores_divides(restore_threads):
    assert threads.use_threads(10 ** 6) == numba.config.NUMBA_NUM_THREADS
    assert threads.use_threads(0) == 1
    assert threads.use_threads(None) == numba.config.NUMBA_NUM_THREADS
    cores = threads.share_of_cores(1)
    assert cores >= 1
    assert threads.share_of_cores(cores) == 1 and threads.share_of_cores(10 ** 6) == 1
    assert threads.share_of_cores(2) == max(1, cores // 2)


def test_run_takes_a_thread_count(tmp_path, restore_threads):
    from click.testing import CliRunner

    from rarefy.cli import cli
    from rarefy.templates import slit_case

    case = tmp_path / "slit.toml"
    case.write_text(slit_case(upstream_pressure_pa=5.0))
    small = ["--set", "run.settle_steps=20", "--set", "run.sample_steps=40",
             "--set", "run.batches=2"]
    r = CliRunner().invoke(cli, ["run", str(case), "-o", str(tmp_path / "a"), "-q",
                                 "--threads", "1", *small])
    assert r.exit_code == 0, r.output
    assert numba.get_num_threads() == 1
    r = CliRunner().invoke(cli, ["run", str(case), "-o", str(tmp_path / "b"), "-q",
                                 "--threads", "0", *small])
    assert r.exit_code == 2 and "--threads" in r.output
