"""Case files: TOML text describing one simulation, read into frozen dataclasses.

The format is documented in ``docs/case-files.md``.  :func:`load_case` reads a
file, :func:`parse_case` reads text; both validate everything and raise a
single :class:`CaseError` (the first problem found) naming the file, the
dotted key and what is allowed.  All quantities in the dataclasses are SI.
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass
from pathlib import Path

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = [
    "SIDES",
    "CaseError",
    "one_line",
    "GasSpec",
    "Domain",
    "Surface",
    "Boundary",
    "Wall",
    "FluxPlane",
    "Histograms",
    "Probe",
    "InitialState",
    "Resolution",
    "RunControl",
    "Case",
    "load_case",
    "parse_case",
]

SIDES: tuple[str, ...] = ("xmin", "xmax", "ymin", "ymax")


class CaseError(Exception):
    """A problem in a case file.

    Attributes
    ----------
    path : str
        The file (or ``"<string>"``) the case came from.
    key : str
        Dotted key of the offending entry, e.g. ``"boundaries.xmin.pressure"``
        or ``"walls[1].points"``; ``""`` for whole-file problems.
    message : str
        What is wrong and what is allowed.
    """

    def __init__(self, path: str, key: str, message: str) -> None:
        self.path = str(path)
        self.key = key
        self.message = message
        super().__init__(str(self))

    def __str__(self) -> str:
        if self.key:
            return one_line(f"{self.path}: {self.key}: {self.message}")
        return one_line(f"{self.path}: {self.message}")


def one_line(text: str) -> str:
    """``text`` with every unprintable character (line breaks, tabs, control and format
    characters) written as an escape such as ``\\n`` or ``\\u202e``, so that an error
    message stays one readable line whatever the case file's keys contain."""
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


@dataclass(frozen=True)
class GasSpec:
    """Gas and collision model: ``species`` is the canonical table key, ``model`` hs/vhs/vss.

    Internal energy (polyatomic species only): ``rotation`` is the rotational collision
    number Z_rot (a number >= 1) or ``"parker"`` (Parker's formula, N2 and O2);
    ``vibration`` switches the vibrational mode on, with collision number
    ``vibration_number`` (a number or ``"millikan-white"``). Monatomic gases have
    ``rotation`` None. In a mixture ``rotation`` holds one entry per species (None for
    the monatomic ones) and ``vibration`` applies to every molecule.
    """

    species: str
    model: str
    rotation: float | str | tuple | None = None
    vibration: bool = False
    vibration_number: float | str | None = None
    rotation_set: bool = False      # rotation given in the case (else the default)
    rotation_given: tuple[bool, ...] = ()   # mixtures: per species, its Z_rot from the case
    mixture: tuple[str, ...] = ()   # every species of a mixture (empty: one species)
    mole_fractions: tuple[float, ...] = ()   # default composition of a mixture

    @property
    def names(self) -> tuple[str, ...]:
        """The species simulated, in the order of their index (one for a pure gas)."""
        return self.mixture or (self.species,)

    def rotation_from_case(self, k: int) -> bool:
        """True when species k's Z_rot comes from the case, not the default."""
        return self.rotation_given[k] if self.rotation_given else self.rotation_set

    def rotation_of(self, k: int) -> float | str | None:
        """Z_rot setting of species k: a number, ``"parker"``, or None (monatomic)."""
        if self.mixture:
            return self.rotation[k] if self.rotation else None
        return self.rotation


@dataclass(frozen=True)
class Domain:
    """Rectangle ``[xmin, xmax] x [ymin, ymax]`` (m).

    Planar: extent ``depth_m`` in z. Axisymmetric: y is the radius r, the x axis is the
    axis of symmetry (ymin = 0) and ``depth_m`` is unused.
    """

    xmin: float
    xmax: float
    ymin: float
    ymax: float
    depth_m: float
    characteristic_length_m: float | None
    geometry: str = "planar"

    @property
    def axisymmetric(self) -> bool:
        return self.geometry == "axisymmetric"

    @property
    def width(self) -> float:
        """Extent in x (m)."""
        return self.xmax - self.xmin

    @property
    def height(self) -> float:
        """Extent in y (m)."""
        return self.ymax - self.ymin

    def side_range(self, side: str) -> tuple[float, float]:
        """Coordinate range along ``side`` (y for xmin/xmax, x for ymin/ymax)."""
        if side in ("xmin", "xmax"):
            return (self.ymin, self.ymax)
        return (self.xmin, self.xmax)


@dataclass(frozen=True)
class Surface:
    """Gas-surface interaction.

    ``kind`` is diffuse, specular or maxwell; ``accommodation`` is the fraction
    reflected diffusely (1 diffuse, 0 specular); ``velocity_m_s`` the
    tangential surface speed.
    """

    kind: str
    temperature_k: float | None
    accommodation: float
    velocity_m_s: float


@dataclass(frozen=True)
class Boundary:
    """One piece ``[start, end]`` (m, along the side) of a domain side."""

    side: str
    start: float
    end: float
    kind: str
    pressure_pa: float | None
    temperature_k: float | None
    velocity_m_s: tuple[float, float, float]
    surface: Surface | None
    mole_fractions: tuple[float, ...] | None = None   # reservoir of a mixture (None: the gas's)


@dataclass(frozen=True)
class Wall:
    """An interior polyline (or closed solid polygon if ``solid``)."""

    name: str
    points: tuple[tuple[float, float], ...]
    solid: bool
    surface: Surface


@dataclass(frozen=True)
class FluxPlane:
    """Counting segment; positive flow crosses to the right of start -> end."""

    name: str
    start: tuple[float, float]
    end: tuple[float, float]
    mirrored: bool
    opening: str | None = None          # orifice, tube, slit or channel: for the estimates
    opening_length_m: float = 0.0       # length of the tube or channel (0: thin opening)


@dataclass(frozen=True)
class Probe:
    """A sampling volume for velocity distributions: the rectangle ``x`` x ``y`` of the
    (x, y) plane (planar: times the depth; axisymmetric: y is the radius, so the probe
    is a ring, or a disk-shaped cylinder on the axis when ``y[0] = 0``). ``direction``
    (``"x"`` or ``"y"``) is the flow direction for parallel / perpendicular temperatures."""

    name: str
    x: tuple[float, float]
    y: tuple[float, float]
    direction: str = "x"


@dataclass(frozen=True)
class Histograms:
    """Speed histograms of probes and flux planes: ``bins`` bins on [0, ``speed_max_m_s``]
    (velocity components on [-speed_max, speed_max]); ``None``: chosen by the planner."""

    speed_max_m_s: float | None = None
    bins: int | None = None


@dataclass(frozen=True)
class InitialState:
    """Gas filling the domain at the start (``pressure_pa == 0``: empty)."""

    pressure_pa: float
    temperature_k: float
    velocity_m_s: tuple[float, float, float]
    mole_fractions: tuple[float, ...] | None = None   # of a mixture (None: the gas's)


@dataclass(frozen=True)
class Resolution:
    """User overrides of the automatic resolution plan (``None``: automatic)."""

    cell_size_m: float | None
    time_step_s: float | None
    particles_per_cell: float | None
    particle_weight: float | None
    subcells: int | None


@dataclass(frozen=True)
class RunControl:
    """Step counts and seed (``None``: chosen at run time); ``time_budget_s``: the
    wall time the run may take (``None``: no limit), checked by :mod:`rarefy.guards`."""

    settle_steps: int | None
    sample_steps: int | None
    batches: int | None
    seed: int | None
    time_budget_s: float | None = None


@dataclass(frozen=True)
class Case:
    """A complete, validated case.

    ``boundaries`` are sorted by side (``SIDES`` order) then start;
    ``overrides`` records the ``(key, value)`` pairs applied on top of
    ``source_text``.
    """

    title: str
    gas: GasSpec
    domain: Domain
    boundaries: tuple[Boundary, ...]
    walls: tuple[Wall, ...]
    flux_planes: tuple[FluxPlane, ...]
    initial: InitialState
    resolution: Resolution
    run: RunControl
    source_path: str
    source_text: str
    overrides: tuple[tuple[str, str], ...] = ()
    probes: tuple[Probe, ...] = ()
    histograms: Histograms = Histograms()

    def side(self, side: str) -> tuple[Boundary, ...]:
        """The boundary pieces of one side, ordered along it."""
        return tuple(b for b in self.boundaries if b.side == side)


_DECL_RE = re.compile(r"\(((?:'[^']*',?\s*)+)\)")


def _decode_error(path: str, exc: Exception) -> CaseError:
    message = str(exc)
    match = _DECL_RE.search(message)
    key = ""
    if match:
        key = ".".join(re.findall(r"'([^']*)'", match.group(1)))
        message += (
            "; a table may be given only once (to split a side into pieces, "
            f"write [[{key}]] before every piece)"
        )
    return CaseError(path, key, f"TOML syntax error: {message}")


def parse_case(
    text: str, path: str = "<string>", overrides: dict[str, object] | None = None
) -> Case:
    """Parse and validate case-file text.

    Parameters
    ----------
    text : str
        TOML text of the case.
    path : str, optional
        Name used in error messages and stored as ``Case.source_path``.
    overrides : dict, optional
        Dotted keys (``"run.seed"``, ``"boundaries.xmin.pressure"``,
        ``"walls[0].temperature"``) mapped to values.  String values are read
        as a TOML value if possible (``"5"`` -> 5, ``"true"`` -> True), else
        kept as strings (``"2 Pa"``).  Applied before validation.

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        For the first problem found.
    """
    from rarefy import case_schema

    path = str(path)
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _decode_error(path, exc) from None
    except ValueError:   # an integer of thousands of digits, beyond what Python reads
        raise CaseError(path, "", "TOML syntax error: an integer is too long; TOML integers "
                                  "are 64-bit, from -9223372036854775808 to "
                                  "9223372036854775807") from None
    applied = []
    for key, value in (overrides or {}).items():
        case_schema.apply_override(raw, key, value, path)
        applied.append((key, value if isinstance(value, str) else
                        ("true" if value else "false") if isinstance(value, bool)
                        else repr(value)))
    fields = case_schema.build_case(raw, path)
    return Case(**fields, source_path=path, source_text=text, overrides=tuple(applied))


def load_case(path: str | Path, overrides: dict[str, object] | None = None) -> Case:
    """Read and validate a case file.

    Parameters
    ----------
    path : str or Path
        The TOML case file.
    overrides : dict, optional
        As for :func:`parse_case`.

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        If the file is missing, unreadable, not UTF-8, or invalid.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")   # a byte-order mark is dropped
    except FileNotFoundError:
        raise CaseError(str(path), "", "case file not found") from None
    except IsADirectoryError:
        raise CaseError(str(path), "", "is a directory, not a case file") from None
    except UnicodeDecodeError as exc:
        raise CaseError(str(path), "", f"case file is not UTF-8 text ({exc.reason})") from None
    except OSError as exc:
        raise CaseError(str(path), "", f"cannot read case file: {exc.strerror or exc}") from None
    return parse_case(text, str(path), overrides)
