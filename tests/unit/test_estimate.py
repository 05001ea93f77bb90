"""`rarefy estimate`: analytic limits for orifice, tube, slit and channel.

Reference values from shared/reference/published-values.md; each check names its
section and tag (P published, M from memory, S computed from a published equation,
T common vacuum practice).
"""

import json
import math

import click
import pytest
from click.testing import CliRunner

from rarefy.cli_estimate import estimate as estimate_command
from rarefy.constants import K_B
from rarefy.estimate import (critical_pressure_ratio, estimate, format_estimate,
                             subsonic_mass_flow, throughput_to_sccm)
from rarefy.gas.species import get_species
from rarefy.theory.effusion import free_molecular_mass_flow

T20 = 293.15  # 20 degC


# ------------------------------------------------------------------ free-molecular
def test_air_thin_aperture_11_6_l_per_s_per_cm2():
    # published-values sec. 7 (T): 11.6 L/s per cm^2 of hole, air at 20 degC.
    r = estimate("orifice", "air", T20, 1.0, radius_m=math.sqrt(1e-4 / math.pi))
    c_l_s = r["free_molecular"]["conductance_m3_s"] * 1e3
    assert r["geometry"]["area_m2"] == pytest.approx(1e-4)
    assert c_l_s == pytest.approx(11.6, rel=0.005)


def test_long_tube_12_1_d3_over_l():
    # published-values sec. 7 (T): C = 12.1 D^3/L L/s (D, L in cm), air at 20 degC.
    # That rule is Knudsen's long-tube limit W = 8R/(3L) (sec. 1). Our long-tube line
    # reproduces it to the rounding of "12.1" (12.12 for our air mass, 0.15 %).
    r = estimate("tube", "air", T20, 1.0, radius_m=0.01, length_m=1.0)  # D = 2 cm, L = 1 m
    rule = 12.1 * 2.0 ** 3 / 100.0
    fm = r["free_molecular"]
    assert fm["long_tube_conductance_m3_s"] * 1e3 == pytest.approx(rule, rel=0.005)
    # The Clausing solution (sec. 1, S) lies below the long-tube limit by an end
    # correction of order ln(L/R)/(L/R) = 0.046 at L/R = 100; computed here it is
    # 1 - 0.9479 = 5.2 % (W = 0.025276 vs 8/300), so the 3 % of the brief cannot hold
    # for the exact W at L/R = 100. Tolerance: 5.2 % + 0.15 % rounding -> 6 %, and the
    # sign is fixed (Clausing is always below the limit).
    ratio = fm["conductance_m3_s"] * 1e3 / rule
    assert 0.94 < ratio < 1.0
    assert fm["transmission_probability"] / fm["long_tube_transmission"] == pytest.approx(
        0.9479, abs=2e-4)


def test_very_long_tube_within_3_percent_of_rule():
    # sec. 7 (T) rule vs Clausing at L/R = 1000 (D = 2 mm, L = 1 m): the end correction
    # has shrunk to 0.7 %, so the 3 % tolerance applies here.
    r = estimate("tube", "air", T20, 1.0, radius_m=1e-3, length_m=1.0)
    rule = 12.1 * 0.2 ** 3 / 100.0
    assert r["free_molecular"]["conductance_m3_s"] * 1e3 == pytest.approx(rule, rel=0.03)


def test_tube_l_over_r_1_transmission():
    # published-values sec. 1 (S): W(L/R = 1) = 0.671984 (Clausing's equation, ~1e-6).
    r = estimate("tube", "Ar", 300.0, 1.0, radius_m=2e-3, length_m=2e-3)
    assert r["free_molecular"]["transmission_probability"] == pytest.approx(0.671984, abs=2e-6)
    assert r["free_molecular"]["long_tube_transmission"] is None  # only for L/R > 10


def test_channel_l_over_h_5_transmission():
    # published-values sec. 2 (S): W(L/H = 5) = 0.356409.
    r = estimate("channel", "N2", 300.0, 1.0, width_m=1e-3, length_m=5e-3, depth_m=0.02)
    fm = r["free_molecular"]
    assert fm["transmission_probability"] == pytest.approx(0.356409, abs=2e-6)
    assert r["geometry"]["area_m2"] == pytest.approx(2e-5)  # gap x depth


def test_free_molecular_flow_matches_effusion_and_throughput():
    # Sharipov 2004 / published-values sec. 3 (S, exact): free-molecular W = 1 - p1/p0;
    # Q = C (p0 - p1) equals mdot k T / m (ideal gas).
    sp = get_species("Ar")
    r = estimate("orifice", "Ar", 300.0, 2.0, 0.5, radius_m=1e-3)
    fm = r["free_molecular"]
    ref = free_molecular_mass_flow(math.pi * 1e-6, 2.0, 300.0, sp.mass_kg, 0.5)
    assert fm["mass_flow_kg_s"] == pytest.approx(float(ref), rel=1e-12)
    assert fm["throughput_pa_m3_s"] == pytest.approx(
        fm["mass_flow_kg_s"] * K_B * 300.0 / sp.mass_kg, rel=1e-12)


# ------------------------------------------------------------------------ continuum
@pytest.mark.parametrize("gas, gamma, ratio", [("Ar", 5.0 / 3.0, 1.8203), ("N2", 1.4, 1.7164)])
def test_orifice_choked_over_free_molecular(gas, gamma, ratio):
    # published-values sec. 3 (S): ideal isentropic / free-molecular mass flow, p1 = 0.
    r = estimate("orifice", gas, 300.0, 100.0, 0.0, radius_m=1e-3)
    c = r["continuum"]
    assert c["gamma"] == pytest.approx(gamma)
    assert c["choked"] is True and c["upper_bound"] is True
    assert c["ratio_to_free_molecular"] == pytest.approx(ratio, abs=6e-5)


def _direct_isentropic(area, p0, p1, t0, m, g):
    """Mach number from p/p0, then rho u A (Anderson, Modern Compressible Flow, ch. 3)."""
    mach = math.sqrt(2.0 / (g - 1.0) * ((p0 / p1) ** ((g - 1.0) / g) - 1.0))
    t = t0 / (1.0 + 0.5 * (g - 1.0) * mach ** 2)
    r_s = K_B / m
    return p1 / (r_s * t) * mach * math.sqrt(g * r_s * t) * area


@pytest.mark.parametrize("gas", ["Ar", "N2"])
def test_subsonic_branch_vs_direct_isentropic(gas):
    # S: textbook isentropic relations (Anderson ch. 3, 5), computed a second way.
    sp = get_species(gas)
    r = estimate("orifice", gas, 300.0, 100.0, 90.0, radius_m=1e-3)
    c = r["continuum"]
    assert c["choked"] is False
    ref = _direct_isentropic(math.pi * 1e-6, 100.0, 90.0, 300.0, sp.mass_kg, c["gamma"])
    assert c["mass_flow_kg_s"] == pytest.approx(ref, rel=1e-10)


def test_subsonic_formula_meets_choked_at_critical_ratio():
    # S: at p1/p0 = (2/(g+1))^(g/(g-1)) (Anderson eq. 3.74) the two branches agree.
    sp = get_species("N2")
    crit = critical_pressure_ratio(1.4)
    assert crit == pytest.approx(0.528282, abs=1e-6)  # Anderson, table A.1 (M)
    choked = estimate("orifice", "N2", 300.0, 100.0, 0.0, radius_m=1e-3)
    sub = subsonic_mass_flow(math.pi * 1e-6, 100.0, 100.0 * crit, 300.0, sp.mass_kg, 1.4)
    assert sub == pytest.approx(choked["continuum"]["mass_flow_kg_s"], rel=1e-12)


# ------------------------------------------------------------------------- sccm, regime
def test_sccm_conversion():
    # T: 1 sccm = 101325 Pa x 1 cm^3 per minute at 273.15 K; 1 mbar L/s at 0 degC is
    # 59.2 sccm (common vacuum practice).
    assert throughput_to_sccm(101325.0e-6 / 60.0, 273.15) == pytest.approx(1.0, rel=1e-12)
    assert throughput_to_sccm(0.1, 273.15) == pytest.approx(59.2, rel=1e-3)
    # equal molecule flow: the same Q at 2 x 273.15 K carries half the molecules
    assert throughput_to_sccm(0.1, 546.3) == pytest.approx(59.215 / 2.0, rel=1e-4)


@pytest.mark.parametrize("p0, word", [(0.1, "free-molecular"), (100.0, "transitional"),
                                      (1e5, "continuum")])
def test_regime_words(p0, word):
    # delta thresholds 0.1 and 100 are rules of thumb (module doc); Kn = lambda/D.
    r = estimate("orifice", "Ar", 300.0, p0, radius_m=1e-3)
    rg = r["regime"]
    assert rg["regime"] == word
    assert rg["knudsen_number"] == pytest.approx(rg["mean_free_path_m"] / 2e-3)


@pytest.mark.parametrize("kwargs", [
    dict(kind="pipe", radius_m=1e-3), dict(kind="orifice"),
    dict(kind="orifice", radius_m=1e-3, width_m=1e-3), dict(kind="slit", radius_m=1e-3),
    dict(kind="orifice", radius_m=1e-3, length_m=1e-3), dict(kind="tube", radius_m=1e-3),
    dict(kind="channel", width_m=1e-3, length_m=1e-3, depth_m=0.0),
    dict(kind="orifice", radius_m=-1.0), dict(kind="orifice", radius_m=1e-3, gas="Xx"),
    dict(kind="orifice", radius_m=1e-3, downstream_pressure_pa=2.0),
])
def test_library_rejects_bad_arguments(kwargs):
    args = dict(gas="Ar", temperature_k=300.0, upstream_pressure_pa=1.0) | kwargs
    with pytest.raises(ValueError):
        estimate(**args)


def test_format_units():
    r = estimate("slit", "N2", 300.0, 10.0, width_m=1e-3)
    vac, si = format_estimate(r, "vacuum"), format_estimate(r, "si")
    for unit in ("kg/s", "mbar L/s", " L/s", "sccm", "273.15 K, 101325 Pa", "mbar"):
        assert unit in vac
    for unit in ("kg/s", "Pa m^3/s", "m^3/s", " Pa"):
        assert unit in si
    for text in (vac, si):
        assert "free-molecular" in text and "continuum" in text and "rarefy run" in text
        assert "upper bound" in text and "per 1 m of depth" in text
    with pytest.raises(ValueError):
        format_estimate(r, "cgs")


# ------------------------------------------------------------------------------- CLI
@pytest.fixture()
def invoke():
    group = click.Group()
    group.add_command(estimate_command)
    return lambda *a: CliRunner().invoke(group, ["estimate", *a])


def test_cli_vacuum_output_has_units(invoke):
    r = invoke("orifice", "--upstream-pressure", "0.01 mbar", "--diameter", "1 mm")
    assert r.exit_code == 0, r.output
    for unit in ("L/s", "mbar L/s", "sccm", "kg/s", "m^2", " m,"):
        assert unit in r.output
    r = invoke("tube", "--upstream-pressure", "1 Pa", "--radius", "1 cm", "--length", "1 m",
               "--units", "si", "--gas", "air")
    assert r.exit_code == 0, r.output
    assert "Pa m^3/s" in r.output and "8R/(3L)" in r.output


@pytest.mark.parametrize("args, words", [
    ((), "KIND"),
    (("pipe", "--upstream-pressure", "1 Pa"), "KIND"),
    (("orifice", "--radius", "1 mm"), "--upstream-pressure"),
    (("tube", "--upstream-pressure", "1 Pa", "--length", "1 cm"), "--radius"),
    (("tube", "--upstream-pressure", "1 Pa", "--radius", "1 mm"), "--length"),
    (("slit", "--upstream-pressure", "1 Pa"), "--width"),
    (("slit", "--upstream-pressure", "1 Pa", "--width", "1 mm", "--radius", "1 mm"),
     "--radius"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "1 mm", "--diameter", "2 mm"),
     "--diameter"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "1 mm", "--depth", "1 m"),
     "--depth"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "1 mm", "--length", "1 mm"),
     "--length"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "1 furlong"), "--radius"),
    (("orifice", "--upstream-pressure", "1 K", "--radius", "1 mm"), "--upstream-pressure"),
    (("orifice", "--upstream-pressure", "1 Pa", "--downstream-pressure", "2 Pa",
      "--radius", "1 mm"), "--downstream-pressure"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "1 mm", "--gas", "Xx"), "--gas"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "1 mm", "--units", "cgs"),
     "--units"),
    (("orifice", "--upstream-pressure", "1 Pa", "--radius", "0 mm"), "--radius"),
])
def test_cli_bad_input_one_line_exit_2(invoke, args, words):
    r = invoke(*args)
    assert r.exit_code == 2
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and words in lines[0]


def test_cli_json_keys(invoke):
    r = invoke("channel", "--upstream-pressure", "1 Pa", "--width", "1 mm", "--length",
               "5 mm", "--depth", "2 cm", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert set(data) == {"input", "geometry", "mean_speed_m_s", "free_molecular",
                         "continuum", "regime"}
    assert {"transmission_probability", "conductance_m3_s", "mass_flow_kg_s",
            "throughput_pa_m3_s"} <= set(data["free_molecular"])
    assert {"gamma", "critical_pressure_ratio", "choked", "mass_flow_kg_s",
            "upper_bound"} <= set(data["continuum"])
    assert {"mean_free_path_m", "knudsen_number", "rarefaction_parameter",
            "regime"} <= set(data["regime"])
    assert data["geometry"]["depth_m"] == pytest.approx(0.02)
    assert data["free_molecular"]["transmission_probability"] == pytest.approx(0.356409,
                                                                               abs=2e-6)
