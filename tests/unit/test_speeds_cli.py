"""`rarefy speeds` and the equilibrium speed plots.

Reference speeds are computed here, independently of rarefy, from the common
kinetic-theory formulas v_mp = sqrt(2kT/m), <v> = sqrt(8kT/(pi m)),
v_rms = sqrt(3kT/m), flux-weighted mean sqrt(9 pi kT/(8m)) (Bird 1994, ch. 4, from
memory) with k_B = 1.380649e-23 J/K (CODATA 2018, exact) and the argon mass 39.948 u
(IUPAC standard atomic weight; u = 1.66053906660e-27 kg, CODATA 2018). rarefy's gas
table carries Bird's rounded argon mass 66.3e-27 kg (0.05 % off, i.e. 0.025 % in
speed), so 0.1 % is the tolerance; the printed table rounds to 0.1 m/s.
"""

import json
import math

import click
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from click.testing import CliRunner  # noqa: E402
from scipy import stats  # noqa: E402

from rarefy.cli_speeds import speeds  # noqa: E402
from rarefy.plots.speeds import overlay_maxwell, plot_speed_curves, tail_speed  # noqa: E402

KB = 1.380649e-23  # J/K, CODATA 2018
U = 1.66053906660e-27  # kg, CODATA 2018
M_AR = 39.948 * U  # IUPAC
M_HE = 4.002602 * U  # IUPAC
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature


def _ref(m, t):
    return {
        "most_probable_m_s": math.sqrt(2.0 * KB * t / m),
        "mean_m_s": math.sqrt(8.0 * KB * t / (math.pi * m)),
        "rms_m_s": math.sqrt(3.0 * KB * t / m),
        "flux_mean_m_s": math.sqrt(9.0 * math.pi * KB * t / (8.0 * m)),
    }


@pytest.fixture
def group():
    """A throw-away group holding the command, as `rarefy` will register it."""
    g = click.Group("rarefy-test")
    g.add_command(speeds)
    return g


def invoke(*args):
    return CliRunner().invoke(speeds, list(args))


def test_argon_300k_table():
    """Ar, 300 K: v_mp, mean, rms, flux mean from the formulas above to 0.1 %."""
    r = invoke("Ar", "--temperature", "300 K")
    assert r.exit_code == 0, r.output
    lines = r.stdout.splitlines()
    row = next(line for line in lines if line.startswith("Ar"))
    cells = row.split()
    assert cells[:3] == ["Ar", "300", "K"]
    numbers = [float(x) for x in cells[3::2]]
    units = cells[4::2]
    assert units == ["m/s"] * 4  # every number carries its unit
    ref = _ref(M_AR, 300.0)
    expect = [ref[k] for k in ("most_probable_m_s", "mean_m_s", "rms_m_s", "flux_mean_m_s")]
    assert numbers == pytest.approx(expect, rel=1e-3, abs=0.0)
    # and they are not, e.g., a different temperature's: 1 K off moves them 0.17 %
    assert numbers[0] != pytest.approx(_ref(M_AR, 301.0)["most_probable_m_s"], rel=5e-4, abs=0.0)


def test_json_rows_for_each_gas_and_temperature(group):
    """JSON contract; values from the formulas above (He mass 4.002602 u, IUPAC)."""
    r = CliRunner().invoke(group, ["speeds", "ar", "He", "--temperature", "300 K",
                                   "--temperature", "-173.15 degC", "--json"])
    assert r.exit_code == 0, r.output
    rows = json.loads(r.stdout)
    assert [(x["gas"], x["temperature_k"]) for x in rows] == [
        ("Ar", 300.0), ("Ar", pytest.approx(100.0, abs=1e-9)),
        ("He", 300.0), ("He", pytest.approx(100.0, abs=1e-9))]
    for x in rows:
        assert set(x) == {"gas", "temperature_k", "most_probable_m_s", "mean_m_s",
                          "rms_m_s", "flux_mean_m_s"}
        m = M_AR if x["gas"] == "Ar" else M_HE
        ref = _ref(m, x["temperature_k"])
        for key, value in ref.items():
            assert x[key] == pytest.approx(value, rel=1e-3, abs=0.0), key


def test_default_temperature_is_300k():
    """The documented default, 300 K."""
    rows = json.loads(invoke("Ar", "--json").stdout)
    assert rows[0]["temperature_k"] == 300.0


@pytest.mark.parametrize("flux", [False, True])
def test_plot_writes_png(tmp_path, flux):
    """The file starts with the PNG signature (PNG specification)."""
    out = tmp_path / "speeds.png"
    args = ["Ar", "He", "--temperature", "300 K", "--temperature", "77 K", "--plot",
            str(out)] + (["--flux"] if flux else [])
    r = invoke(*args)
    assert r.exit_code == 0, r.output
    assert out.read_bytes()[:8] == PNG_SIGNATURE
    assert out.stat().st_size > 5000


@pytest.mark.parametrize("args, option", [
    (["Xenonium"], "GAS"),
    ([], "GAS"),
    (["Ar", "--temperature", "0 K"], "--temperature"),
    (["Ar", "--temperature", "-300 degC"], "--temperature"),
    (["Ar", "--temperature", "300 Pa"], "--temperature"),
    (["Ar", "--plot", "no-such-folder/x.png"], "--plot"),
    (["Ar", "--plot", "x.pdf"], "--plot"),
])
def test_bad_input_is_one_line_exit_2(tmp_path, monkeypatch, args, option):
    """Input errors: exit 2, one line naming the option, no traceback."""
    monkeypatch.chdir(tmp_path)
    r = invoke(*args)
    assert r.exit_code == 2
    text = r.output.strip()
    assert "\n" not in text and "Traceback" not in text
    assert text.startswith("error: ") and option in text
    assert r.stdout == ""


def test_unknown_gas_lists_allowed_names(group):
    """The message names the allowed gases (those of `rarefy gases`)."""
    r = CliRunner().invoke(group, ["speeds", "Xenonium"])
    assert r.exit_code == 2
    assert "allowed:" in r.output and "Ar" in r.output and "N2" in r.output
    assert isinstance(r.exception, SystemExit) and "Traceback" not in r.output


@pytest.mark.parametrize("weighting, n", [("density", 2), ("flux", 3)])
def test_tail_speed_is_where_pdf_falls_to_1e_3_of_peak(weighting, n):
    """The pdf x^n exp(-x^2) at tail_speed is 1e-3 of its peak (peak from scipy.stats
    maxwell's mode sqrt(2) sigma for density; sqrt(3) sigma for flux by calculus)."""
    t = 300.0
    sigma = math.sqrt(KB * t / M_AR)
    from rarefy.theory.maxwell import flux_speed_pdf, speed_pdf

    pdf = speed_pdf if weighting == "density" else flux_speed_pdf
    peak = float(pdf(math.sqrt(n) * sigma, M_AR, t))
    v = tail_speed(M_AR, t, weighting)
    assert v > math.sqrt(n) * sigma
    assert float(pdf(v, M_AR, t)) == pytest.approx(1e-3 * peak, rel=1e-9, abs=0.0)
    if weighting == "density":
        assert stats.maxwell(scale=sigma).pdf(v) == pytest.approx(1e-3 * peak, rel=1e-9, abs=0.0)


def test_plot_axis_reaches_tail_of_widest_curve(tmp_path, monkeypatch):
    """x axis ends where the widest curve (He, 300 K) is 1e-3 of its peak."""
    captured = {}
    real_savefig = plt.Figure.savefig

    def spy(fig, *a, **k):
        captured["xlim"] = fig.axes[0].get_xlim()
        return real_savefig(fig, *a, **k)

    monkeypatch.setattr(plt.Figure, "savefig", spy)
    plot_speed_curves([("Ar", M_AR, 300.0), ("He", M_HE, 300.0), ("Ar", M_AR, 77.0)],
                      tmp_path / "c.png")
    assert captured["xlim"][1] == pytest.approx(tail_speed(M_HE, 300.0), rel=1e-12, abs=0.0)
    assert captured["xlim"][1] > tail_speed(M_AR, 300.0)


def test_overlay_maxwell_draws_scaled_pdf():
    """overlay_maxwell plots scale x pdf; density pdf checked against scipy.stats.maxwell."""
    fig, ax = plt.subplots()
    v = np.linspace(0.0, 1500.0, 51)
    line = overlay_maxwell(ax, M_AR, 300.0, v, scale=250.0)
    x, y = line.get_data()
    np.testing.assert_allclose(x, v)
    ref = 250.0 * stats.maxwell(scale=math.sqrt(KB * 300.0 / M_AR)).pdf(v)
    np.testing.assert_allclose(y, ref, rtol=1e-12, atol=1e-15 * ref.max())
    assert line.get_label() == "Maxwell, 300 K"
    flux = overlay_maxwell(ax, M_AR, 300.0, v, weighting="flux", label="beam")
    sd = stats.maxwell(scale=math.sqrt(KB * 300.0 / M_AR))
    np.testing.assert_allclose(flux.get_data()[1], v * sd.pdf(v) / sd.mean(), rtol=1e-12,
                               atol=1e-18)
    with pytest.raises(ValueError):
        overlay_maxwell(ax, M_AR, 300.0, v, weighting="volume")
    plt.close(fig)
