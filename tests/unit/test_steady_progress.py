"""Steady-state detection and the progress display."""

import io

import numpy as np

from rarefy.engine.steady import SteadyDetector
from rarefy.progress import Progress, format_seconds


def _feed(det, counts, flows):
    for c, f in zip(counts, flows):
        det.add_window(c, np.atleast_1d(f))


def test_a_filling_flow_is_not_steady_and_a_settled_one_is():
    rng = np.random.default_rng(0)
    k = np.arange(12)
    # particle count still rising 2 % per window, flow settled
    rising = SteadyDetector()
    _feed(rising, 1e5 * (1 + 0.02 * k) + rng.normal(0, 100, 12), 50 + rng.normal(0, 1, 12))
    assert not rising.steady()
    # both settled, with noise
    flat = SteadyDetector()
    _feed(flat, 1e5 + rng.normal(0, 100, 12), 50 + rng.normal(0, 1, 12))
    assert flat.steady()
    # count settled but a flow still climbing well above its scatter
    climbing = SteadyDetector()
    _feed(climbing, 1e5 + rng.normal(0, 100, 12), 30 + 3 * k + rng.normal(0, 1, 12))
    assert not climbing.steady()
    # too few windows to judge
    few = SteadyDetector()
    _feed(few, [1e5] * 5, [50] * 5)
    assert not few.steady()


def test_a_noisy_steady_flow_is_accepted_most_of_the_time():
    # 2-sigma band plus tolerance: a truly steady but noisy series passes at least ~90 %
    # of the time (a false "not yet" only costs one more window)
    rng = np.random.default_rng(5)
    passed = 0
    for _ in range(200):
        det = SteadyDetector()
        _feed(det, 1e4 + rng.normal(0, 300, 6), rng.normal(20, 8, 6))
        passed += det.steady()
    assert passed >= 170


class _Sim:
    class clock:
        step = 10

    class store:
        n = 12345

    class acc:
        batch = 0
        batches = 20
        steps_per_batch = 50

    coll_stats = [321.0]


def test_progress_writes_plain_lines_when_not_a_terminal():
    out = io.StringIO()
    p = Progress(None, "", stream=out, tty=False)
    p("settling", 10, 100, _Sim)
    p("sampling", 50, 1000, _Sim)
    lines = out.getvalue().splitlines()
    assert len(lines) == 2
    assert "settling step 10/100" in lines[0] and "1.23e+04 particles" in lines[0]
    assert "321 collisions/step" in lines[0] and "ETA" in lines[1]


def test_progress_bar_redraws_one_line_on_a_terminal():
    out = io.StringIO()
    p = Progress(None, "", stream=out, tty=True)
    p("sampling", 1000, 1000, _Sim)
    p.close()
    text = out.getvalue()
    assert text.startswith("\r") and "100%" in text and text.endswith("\n")


def test_format_seconds():
    assert format_seconds(75) == "01:15" and format_seconds(3725) == "1:02:05"
    assert format_seconds(float("nan")) == "--:--"
