"""Parsing and formatting of physical quantities written with units.

Case files let the user write quantities such as ``"1 Pa"``, ``"20 degC"``
or ``"2.5mm"``.  :func:`parse_quantity` turns them into plain SI floats;
:func:`format_quantity` does the reverse for printing.
"""

from __future__ import annotations

import math
import re

from rarefy.constants import ZERO_CELSIUS_K

__all__ = ["UnitError", "KINDS", "UNITS", "parse_quantity", "format_quantity", "show"]


class UnitError(ValueError):
    """A quantity could not be converted to SI (bad number, unit or kind)."""


# kind -> {unit symbol: factor to SI}; the first entry of each is the SI unit.
UNITS: dict[str, dict[str, float]] = {
    "pressure": {
        "Pa": 1.0,
        "kPa": 1e3,
        "MPa": 1e6,
        "hPa": 1e2,
        "mbar": 1e2,
        "bar": 1e5,
        "Torr": 101325.0 / 760.0,
        "mTorr": 101325.0 / 760.0e3,
        "atm": 101325.0,
    },
    "temperature": {"K": 1.0, "degC": 1.0},
    "length": {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "nm": 1e-9},
    "time": {"s": 1.0, "ms": 1e-3, "us": 1e-6, "ns": 1e-9, "min": 60.0, "h": 3600.0},
    "velocity": {"m/s": 1.0, "km/s": 1e3, "mm/s": 1e-3},
    "dimensionless": {},
}

# Accepted spellings that are not listed in the error messages.
_ALIASES: dict[str, dict[str, str]] = {
    "pressure": {"torr": "Torr", "mtorr": "mTorr"},
    "length": {"\u00b5m": "um", "\u03bcm": "um"},  # micro sign and Greek mu
    "time": {"\u00b5s": "us", "\u03bcs": "us"},
}

KINDS: tuple[str, ...] = tuple(UNITS)

# Sub-units applied by dividing by an exact power of ten, so that "15 um"
# gives the same float as 15e-6 (multiplying by 1e-6 would not).
_DIVISORS = {"cm": 1e2, "mm": 1e3, "um": 1e6, "nm": 1e9, "ms": 1e3, "us": 1e6, "ns": 1e9,
             "mm/s": 1e3}

_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_QUANTITY_RE = re.compile(rf"^\s*({_NUMBER})\s*(\S*?)\s*$")


def show(value: object, limit: int = 80) -> str:
    """``repr(value)`` for a message, kept short: integers too large for 64 bits are
    described by their length, long text is cut at ``limit`` characters."""
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 64:
        return f"an integer of {int(value.bit_length() * math.log10(2)) + 1} digits"
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _allowed(kind: str) -> str:
    units = UNITS[kind]
    if not units:
        return "a plain number (no unit)"
    return ", ".join(units) + f" (a bare number means {next(iter(units))})"


def _check_kind(kind: str) -> None:
    if kind not in UNITS:
        raise UnitError(f"unknown quantity kind {kind!r}; allowed: {', '.join(KINDS)}")


def parse_quantity(value: object, kind: str) -> float:
    """Convert a number or a ``"<number> <unit>"`` string to SI.

    Parameters
    ----------
    value : int, float or str
        A plain number (taken as SI) or a string such as ``"1e-3 mbar"``,
        ``"-5degC"`` or ``"2.5 mm"``.  A string without unit is SI too.
    kind : str
        One of :data:`KINDS`: ``"pressure"``, ``"temperature"``,
        ``"length"``, ``"time"``, ``"velocity"`` or ``"dimensionless"``.

    Returns
    -------
    float
        The value in SI units (Pa, K, m, s, m/s, or a pure number).

    Raises
    ------
    UnitError
        If the value is not a number or a recognised quantity string, the
        unit does not belong to ``kind``, or the value is not finite.
    """
    _check_kind(kind)
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(
            f"{show(value)} is not a {kind} value; expected a number or a string "
            f"with a unit; allowed: {_allowed(kind)}"
        )
    if isinstance(value, (int, float)):
        try:
            result = float(value)
        except OverflowError:   # an integer beyond the float range
            result = math.inf
        if not math.isfinite(result):
            raise UnitError(f"{show(value)} is not a finite {kind} value")
        return result

    match = _QUANTITY_RE.match(value)
    if match is None:
        low = value.strip().lower()
        if any(word in low for word in ("nan", "inf")):
            raise UnitError(f"{show(value)} is not a finite {kind} value; "
                            f"allowed: {_allowed(kind)}")
        raise UnitError(
            f"{show(value)} is not a valid {kind} value; write a number followed by "
            f"a unit; allowed: {_allowed(kind)}"
        )
    number, unit = float(match.group(1)), match.group(2)
    if not math.isfinite(number):
        raise UnitError(f"{show(value)} is not a finite {kind} value; allowed: {_allowed(kind)}")
    if unit == "":
        return number
    unit = _ALIASES.get(kind, {}).get(unit, unit)
    units = UNITS[kind]
    if unit not in units:
        if not units:
            raise UnitError(f"{show(value)} must be a plain number without a unit")
        raise UnitError(f"{show(value)} has an unknown {kind} unit; allowed: {_allowed(kind)}")
    if kind == "temperature" and unit == "degC":
        return number + ZERO_CELSIUS_K
    if unit in _DIVISORS:
        result = number / _DIVISORS[unit]
    else:
        result = number * units[unit]
    if not math.isfinite(result):
        raise UnitError(f"{show(value)} is not a finite {kind} value")
    return result


def format_quantity(value_si: float, kind: str, unit: str | None = None, digits: int = 6) -> str:
    """Format an SI value for printing, e.g. ``format_quantity(1e-3, "length", "mm")``.

    Parameters
    ----------
    value_si : float
        Value in SI units.
    kind : str
        Quantity kind, as for :func:`parse_quantity`.
    unit : str, optional
        Target unit; default the SI unit of ``kind``.
    digits : int, optional
        Significant digits (``%g`` style), default 6.

    Returns
    -------
    str
        ``"<number> <unit>"``, or just the number for ``"dimensionless"``.
    """
    _check_kind(kind)
    units = UNITS[kind]
    if not units:
        return f"{value_si:.{digits}g}"
    if unit is None:
        unit = next(iter(units))
    unit = _ALIASES.get(kind, {}).get(unit, unit)
    if unit not in units:
        raise UnitError(f"{unit!r} is not a {kind} unit; allowed: {_allowed(kind)}")
    if kind == "temperature" and unit == "degC":
        number = value_si - ZERO_CELSIUS_K
    else:
        number = value_si / units[unit]
    return f"{number:.{digits}g} {unit}"
