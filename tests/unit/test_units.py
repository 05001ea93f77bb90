"""Tests of rarefy.units: parsing quantities with units into SI."""

import math

import pytest

from rarefy.units import KINDS, UNITS, UnitError, format_quantity, parse_quantity


@pytest.mark.parametrize(
    "text, kind, expected",
    [
        ("1 Pa", "pressure", 1.0),
        ("1Pa", "pressure", 1.0),
        ("2 kPa", "pressure", 2e3),
        ("0.5 MPa", "pressure", 5e5),
        ("3 hPa", "pressure", 300.0),
        ("1e-3 mbar", "pressure", 0.1),
        ("1 bar", "pressure", 1e5),
        ("1 Torr", "pressure", 101325.0 / 760.0),
        ("1 torr", "pressure", 101325.0 / 760.0),
        ("760 mTorr", "pressure", 101325.0 / 1000.0),
        ("1 atm", "pressure", 101325.0),
        ("250", "pressure", 250.0),
        ("300 K", "temperature", 300.0),
        (" 20 degC", "temperature", 293.15),
        ("-5degC", "temperature", 268.15),
        ("0 degC", "temperature", 273.15),
        ("2.5mm", "length", 2.5e-3),
        ("1 m", "length", 1.0),
        ("3 cm", "length", 0.03),
        ("15 um", "length", 15e-6),
        ("15 \u00b5m", "length", 15e-6),
        ("40 nm", "length", 40e-9),
        ("2 s", "time", 2.0),
        ("1e-7 s", "time", 1e-7),
        ("3 ms", "time", 3e-3),
        ("5us", "time", 5e-6),
        ("7 ns", "time", 7e-9),
        ("12 m/s", "velocity", 12.0),
        ("1.5 km/s", "velocity", 1500.0),
        ("-4 mm/s", "velocity", -4e-3),
        ("0.8", "dimensionless", 0.8),
        (".5 ms", "time", 5e-4),
        ("+1E2 Pa", "pressure", 100.0),
    ],
)
def test_parse_strings(text, kind, expected):
    assert parse_quantity(text, kind) == pytest.approx(expected, rel=1e-12)


def test_sub_units_are_exact():
    assert parse_quantity("15 um", "length") == 15e-6
    assert parse_quantity("0.5 mm", "length") == 0.0005


@pytest.mark.parametrize("kind", KINDS)
def test_numbers_are_si(kind):
    assert parse_quantity(3, kind) == 3.0
    assert isinstance(parse_quantity(3, kind), float)
    assert parse_quantity(2.5, kind) == 2.5


@pytest.mark.parametrize("kind", KINDS)
def test_bool_rejected(kind):
    with pytest.raises(UnitError):
        parse_quantity(True, kind)


@pytest.mark.parametrize("value", [float("nan"), float("inf"), "nan Pa", "inf", "-inf Pa",
                                   "1e999 Pa"])
def test_non_finite_rejected(value):
    with pytest.raises(UnitError, match="finite"):
        parse_quantity(value, "pressure")


def test_unknown_unit_message_lists_allowed():
    with pytest.raises(UnitError) as err:
        parse_quantity("3 psi", "pressure")
    msg = str(err.value)
    assert "'3 psi' has an unknown pressure unit" in msg
    for unit in UNITS["pressure"]:
        assert unit in msg


@pytest.mark.parametrize(
    "value, kind",
    [("1 pa", "pressure"), ("3 mm", "time"), ("300 C", "temperature"), ("1 M", "length"),
     ("abc", "length"), ("", "length"), ("1 2 m", "length"), ("3 m", "dimensionless"),
     (None, "length"), ([1, 2], "length"), ("5 m/s", "length")],
)
def test_bad_values(value, kind):
    with pytest.raises(UnitError) as err:
        parse_quantity(value, kind)
    assert isinstance(err.value, ValueError)
    if kind != "dimensionless" and value is not None and not isinstance(value, list):
        assert repr(value) in str(err.value)
        assert next(iter(UNITS[kind])) in str(err.value)


def test_unknown_kind():
    with pytest.raises(UnitError, match="pressure"):
        parse_quantity("1 Pa", "mass")


def test_format_quantity():
    assert format_quantity(0.0005, "length", "mm") == "0.5 mm"
    assert format_quantity(300.0, "temperature", "degC") == "26.85 degC"
    assert format_quantity(2.0, "pressure") == "2 Pa"
    assert format_quantity(0.25, "dimensionless") == "0.25"
    with pytest.raises(UnitError):
        format_quantity(1.0, "length", "psi")


@pytest.mark.parametrize("kind", [k for k in KINDS if UNITS[k]])
def test_round_trip(kind):
    for unit in UNITS[kind]:
        text = format_quantity(123.456, kind, unit, digits=17)
        assert math.isclose(parse_quantity(text, kind), 123.456, rel_tol=1e-12)
