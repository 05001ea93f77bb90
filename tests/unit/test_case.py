"""Tests of rarefy.case: reading and validating TOML case files."""

import dataclasses

import pytest

from rarefy.case import SIDES, Case, CaseError, load_case, parse_case

# An invented example exercising most of the format.
FULL = """
title = "Invented example: argon slit into vacuum"

[gas]
species = "ar"
model = "vss"

[domain]
x = ["-5 mm", "10 mm"]
y = ["0 mm", "6 mm"]
depth = "2 cm"
characteristic_length = "1 mm"

[boundaries.xmin]
kind = "reservoir"
pressure = "1 Pa"
temperature = "300 K"
velocity = ["10 m/s", "0 m/s", "0 m/s"]

[[boundaries.ymax]]
kind = "vacuum"
from = "0 mm"
to = "10 mm"

[[boundaries.ymax]]
kind = "reservoir"
from = "-5 mm"
to = "0 mm"
pressure = "7.5 mTorr"
temperature = "26.85 degC"

[boundaries.ymin]
kind = "symmetry"

[boundaries.xmax]
kind = "wall"
surface = "maxwell"
temperature = "350 K"
accommodation = 0.8
velocity = "5 m/s"

[[walls]]
name = "plate"
points = [["0 mm", "0.5 mm"], ["0 mm", "6 mm"]]
surface = "diffuse"
temperature = "300 K"

[[walls]]
name = "block"
solid = true
points = [[0.004, 0.001], [0.006, 0.001], [0.006, 0.002]]
surface = "specular"

[[flux_planes]]
name = "throat"
points = [["0 mm", "0 mm"], ["0 mm", "0.5 mm"]]
mirrored = true

[[flux_planes]]
name = "exit"
points = [["10 mm", "6 mm"], ["10 mm", "0 mm"]]

[initial]
pressure = "0.1 Pa"
temperature = "20 degC"
velocity = [0, 0, "1 m/s"]

[resolution]
cell_size = "0.1 mm"
time_step = "100 ns"
particles_per_cell = 20
particle_weight = 1e12
subcells = 2

[run]
settle_steps = 2000
sample_steps = 5000
batches = 20
seed = 12345
"""

# Smallest valid case, used as the base of the error tests.
MINIMAL = """
[gas]
species = "Ar"

[domain]
x = ["0 mm", "10 mm"]
y = ["0 mm", "5 mm"]

[boundaries.xmin]
kind = "reservoir"
pressure = "1 Pa"
temperature = "300 K"

[boundaries.xmax]
kind = "vacuum"

[boundaries.ymin]
kind = "symmetry"

[boundaries.ymax]
kind = "wall"
temperature = "300 K"
"""


def replace_section(text, header, body):
    """Replace the body of the section starting with ``header`` (up to the next blank line)."""
    start = text.index(header + "\n")
    end = text.find("\n\n", start)
    end = len(text) if end < 0 else end
    return text[:start] + header + "\n" + body.strip() + text[end:]


def expect_error(text, key, *fragments, tmp_path=None, overrides=None):
    """Parse ``text`` (from a file if ``tmp_path``), check the error and return it."""
    path = "case_under_test.toml"
    with pytest.raises(CaseError) as err:
        if tmp_path is not None:
            file = tmp_path / path
            file.write_text(text, encoding="utf-8")
            load_case(file, overrides=overrides)
        else:
            parse_case(text, path, overrides=overrides)
    exc = err.value
    msg = str(exc)
    assert "case_under_test.toml" in msg and exc.path.endswith(path)
    assert exc.key == key, msg
    assert msg == (f"{exc.path}: {key}: {exc.message}" if key else f"{exc.path}: {exc.message}")
    for fragment in fragments:
        assert fragment in msg, msg
    return exc


# --------------------------------------------------------------------------- valid cases

def test_full_example_si_values(tmp_path):
    file = tmp_path / "full.toml"
    file.write_text(FULL, encoding="utf-8")
    case = load_case(file)
    assert isinstance(case, Case)
    assert case.title == "Invented example: argon slit into vacuum"
    assert case.gas.species == "Ar" and case.gas.model == "vss"
    d = case.domain
    assert (d.xmin, d.xmax, d.ymin, d.ymax) == pytest.approx((-5e-3, 10e-3, 0.0, 6e-3))
    assert d.depth_m == pytest.approx(0.02)
    assert d.characteristic_length_m == pytest.approx(1e-3)
    assert d.width == pytest.approx(0.015) and d.height == pytest.approx(0.006)

    sides = [b.side for b in case.boundaries]
    assert sides == ["xmin", "xmax", "ymin", "ymax", "ymax"]
    xmin, xmax, ymin, up, down = case.boundaries
    assert xmin.kind == "reservoir" and xmin.pressure_pa == 1.0 and xmin.temperature_k == 300.0
    assert xmin.velocity_m_s == (10.0, 0.0, 0.0)
    assert (xmin.start, xmin.end) == pytest.approx((0.0, 6e-3))
    assert xmax.kind == "wall" and xmax.surface.kind == "maxwell"
    assert xmax.surface.accommodation == 0.8 and xmax.surface.temperature_k == 350.0
    assert xmax.surface.velocity_m_s == 5.0 and xmax.temperature_k == 350.0
    assert ymin.kind == "symmetry" and (ymin.start, ymin.end) == pytest.approx((-5e-3, 10e-3))
    assert up.kind == "reservoir" and (up.start, up.end) == pytest.approx((-5e-3, 0.0))
    assert up.pressure_pa == pytest.approx(7.5e-3 * 101325 / 760)
    assert up.temperature_k == pytest.approx(300.0)
    assert down.kind == "vacuum" and down.start == up.end and down.end == d.xmax
    assert case.side("ymax") == (up, down)

    plate, block = case.walls
    assert plate.name == "plate" and not plate.solid
    assert plate.points == ((0.0, 5e-4), (0.0, 6e-3))
    assert plate.surface.kind == "diffuse" and plate.surface.accommodation == 1.0
    assert block.solid and len(block.points) == 3
    assert block.surface.kind == "specular" and block.surface.accommodation == 0.0
    assert block.surface.temperature_k is None

    throat, exit_ = case.flux_planes
    assert throat.name == "throat" and throat.mirrored
    assert throat.start == (0.0, 0.0) and throat.end == pytest.approx((0.0, 5e-4))
    assert exit_.mirrored is False and exit_.start == pytest.approx((0.01, 0.006))

    assert case.initial.pressure_pa == 0.1
    assert case.initial.temperature_k == pytest.approx(293.15)
    assert case.initial.velocity_m_s == (0.0, 0.0, 1.0)
    r = case.resolution
    assert r.cell_size_m == pytest.approx(1e-4) and r.time_step_s == pytest.approx(1e-7)
    assert (r.particles_per_cell, r.particle_weight, r.subcells) == (20.0, 1e12, 2)
    assert case.run == dataclasses.replace(case.run, settle_steps=2000, sample_steps=5000,
                                           batches=20, seed=12345)
    assert case.source_path == str(file) and case.source_text == FULL
    assert isinstance(case.boundaries, tuple) and isinstance(plate.points, tuple)
    with pytest.raises(dataclasses.FrozenInstanceError):
        case.title = "x"


def test_minimal_defaults():
    case = parse_case(MINIMAL)
    assert case.source_path == "<string>" and case.title == ""
    assert case.gas.model == "vhs"
    assert case.domain.depth_m == 1.0 and case.domain.characteristic_length_m is None
    assert case.walls == () and case.flux_planes == ()
    assert case.initial.pressure_pa == 0.0 and case.initial.temperature_k == 300.0
    assert case.initial.velocity_m_s == (0.0, 0.0, 0.0)
    assert all(v is None for v in dataclasses.astuple(case.resolution))
    assert all(v is None for v in dataclasses.astuple(case.run))
    wall = case.side("ymax")[0]
    assert wall.surface.kind == "diffuse" and wall.surface.velocity_m_s == 0.0
    assert [b.side for b in case.boundaries] == list(SIDES)


def test_periodic_pair_and_initial_only_source():
    text = replace_section(MINIMAL, "[boundaries.xmin]", 'kind = "periodic"')
    text = replace_section(text, "[boundaries.xmax]", 'kind = "periodic"')
    text += '\n[initial]\npressure = "2 Pa"\ntemperature = "250 K"\n'
    case = parse_case(text)
    assert case.side("xmin")[0].kind == "periodic" and case.initial.pressure_pa == 2.0


def test_single_piece_array_and_boundary_points_allowed():
    text = MINIMAL.replace("[boundaries.xmax]", "[[boundaries.xmax]]")
    text += '\n[[walls]]\nname = "edge"\npoints = [["0 mm", "5 mm"], ["10 mm", "5 mm"]]\n' \
            'temperature = "300 K"\n'
    case = parse_case(text)
    assert case.side("xmax")[0].start == 0.0 and case.side("xmax")[0].end == 0.005


def test_specular_needs_no_temperature():
    text = replace_section(MINIMAL, "[boundaries.ymax]", 'kind = "wall"\nsurface = "specular"')
    assert parse_case(text).side("ymax")[0].surface.accommodation == 0.0


# --------------------------------------------------------------------------- whole-file errors

def test_file_not_found(tmp_path):
    with pytest.raises(CaseError) as err:
        load_case(tmp_path / "nope.toml")
    assert "nope.toml" in str(err.value) and "not found" in str(err.value)
    assert err.value.key == ""


def test_directory_is_not_a_case(tmp_path):
    with pytest.raises(CaseError) as err:
        load_case(tmp_path)
    assert str(tmp_path) in str(err.value)


def test_toml_syntax_error(tmp_path):
    expect_error(MINIMAL + "\nx = [1, 2\n", "", "TOML syntax error", tmp_path=tmp_path)


def test_side_given_twice(tmp_path):
    text = MINIMAL + '\n[boundaries.xmin]\nkind = "vacuum"\n'
    expect_error(text, "boundaries.xmin", "twice", "[[boundaries.xmin]]", tmp_path=tmp_path)


def test_not_utf8(tmp_path):
    file = tmp_path / "bad.toml"
    file.write_bytes(b"title = '\xff\xfe'\n")
    with pytest.raises(CaseError, match="UTF-8"):
        load_case(file)


# --------------------------------------------------------------------------- key errors

@pytest.mark.parametrize(
    "extra, key, fragments",
    [
        ("[gas2]\nx = 1", "gas2", ("unknown key", "resolution")),
        ("[resolution]\ncells = 3", "resolution.cells", ("cell_size", "subcells")),
        ("[run]\nsteps = 3", "run.steps", ("settle_steps", "seed")),
        ("[initial]\npresure = 1", "initial.presure", ("pressure", "temperature")),
    ],
)
def test_unknown_keys(tmp_path, extra, key, fragments):
    expect_error(MINIMAL + "\n" + extra + "\n", key, *fragments, tmp_path=tmp_path)


def test_unknown_top_level_key():
    expect_error("colour = 1\n" + MINIMAL, "colour", "unknown key", "gas", "flux_planes")


def test_unknown_key_in_gas():
    text = MINIMAL.replace('species = "Ar"', 'species = "Ar"\nmodle = "vhs"')
    expect_error(text, "gas.modle", "unknown key", "species, model")


def test_title_must_be_string():
    expect_error("title = 3\n" + MINIMAL, "title", "string")


@pytest.mark.parametrize("section", ["[gas]", "[domain]"])
def test_missing_sections(section):
    start = MINIMAL.index(section)
    end = MINIMAL.index("\n\n", start)
    expect_error(MINIMAL[:start] + MINIMAL[end:], section.strip("[]"), "required", section)


def test_missing_boundaries():
    text = MINIMAL[:MINIMAL.index("[boundaries.xmin]")]
    expect_error(text, "boundaries", "required")


# --------------------------------------------------------------------------- gas

def test_gas_errors():
    expect_error(MINIMAL.replace('species = "Ar"', ""), "gas.species", "required", "He", "air")
    expect_error(MINIMAL.replace('"Ar"', '"Argon"'), "gas.species", "'Argon'", "Kr", "CO2")
    expect_error(MINIMAL.replace('"Ar"', "18"), "gas.species", "allowed", "Ar")
    text = MINIMAL.replace('species = "Ar"', 'species = "Ar"\nmodel = "vhx"')
    expect_error(text, "gas.model", "hs, vhs, vss", "'vhx'")
    text = MINIMAL.replace('species = "Ar"', 'species = "air"\nmodel = "vss"')
    expect_error(text, "gas.model", "VSS", "hs, vhs")
    text = MINIMAL.replace('species = "Ar"', 'species = "AIR"\nmodel = "HS"')
    case = parse_case(text)
    assert case.gas.species == "air" and case.gas.model == "hs"


def _gas(lines: str) -> str:
    return MINIMAL.replace('species = "Ar"', lines)


def test_internal_energy_keys():
    g = parse_case(_gas('species = "N2"')).gas
    assert (g.rotation, g.vibration, g.vibration_number, g.rotation_set) == \
        (5.0, False, None, False)
    g = parse_case(_gas('species = "n2"\nrotation = "Parker"\nvibration = true')).gas
    assert (g.rotation, g.vibration, g.vibration_number) == ("parker", True, "millikan-white")
    g = parse_case(_gas('species = "O2"\nrotation = 12\nvibration = true\n'
                        'vibration_number = 300.5')).gas
    assert (g.rotation, g.vibration_number, g.rotation_set) == (12.0, 300.5, True)
    assert parse_case(_gas('species = "Ar"')).gas.rotation is None


def test_internal_energy_errors():
    expect_error(_gas('species = "Ar"\nrotation = 5'), "gas.rotation", "monatomic")
    expect_error(_gas('species = "He"\nvibration = false'), "gas.vibration", "monatomic")
    expect_error(_gas('species = "CO2"\nrotation = "parker"'), "gas.rotation",
                 "published constants", "number >= 1")
    for bad in ("0.5", "true", '"fast"', "[5]", "1e13"):
        expect_error(_gas(f'species = "N2"\nrotation = {bad}'), "gas.rotation",
                     'number from 1 to 1e12 or "parker"')
    expect_error(_gas('species = "CO2"\nvibration = true'), "gas.vibration",
                 "H2, N2, O2", "allowed: false")
    expect_error(_gas('species = "N2"\nvibration = "yes"'), "gas.vibration", "true or false")
    expect_error(_gas('species = "N2"\nvibration_number = 20'), "gas.vibration_number",
                 "vibration = true")
    expect_error(_gas('species = "N2"\nvibration = true\nvibration_number = 0'),
                 "gas.vibration_number", '"millikan-white"')


# --------------------------------------------------------------------------- domain

@pytest.mark.parametrize(
    "body, key, fragments",
    [
        ('y = ["0 mm", "5 mm"]', "domain.x", ("required", "[min, max]")),
        ('x = "10 mm"\ny = ["0 mm", "5 mm"]', "domain.x", ("[min, max]", "mm")),
        ('x = ["0 mm", "1 mm", "2 mm"]\ny = ["0 mm", "5 mm"]', "domain.x", ("[min, max]",)),
        ('x = ["0 mm", "0 mm"]\ny = ["0 mm", "5 mm"]', "domain.x", ("greater than min",)),
        ('x = ["0 mm", "10 mm"]\ny = ["5 mm", "1 mm"]', "domain.y", ("greater than min",)),
        ('x = ["0 mm", "10 psi"]\ny = ["0 mm", "5 mm"]', "domain.x",
         ("unknown length unit", "m, cm, mm, um, nm")),
        ('x = [0, nan]\ny = ["0 mm", "5 mm"]', "domain.x", ("finite",)),
        ('x = ["0 mm", "10 mm"]\ny = ["0 mm", "5 mm"]\ndepth = 0', "domain.depth", ("> 0",)),
        ('x = ["0 mm", "10 mm"]\ny = ["0 mm", "5 mm"]\ncharacteristic_length = "-1 mm"',
         "domain.characteristic_length", ("> 0",)),
        ('x = ["0 mm", "10 mm"]\ny = ["0 mm", "5 mm"]\nsize = 1', "domain.size",
         ("unknown key", "characteristic_length")),
    ],
)
def test_domain_errors(body, key, fragments):
    expect_error(replace_section(MINIMAL, "[domain]", body), key, *fragments)


# --------------------------------------------------------------------------- boundaries

def test_all_sides_required():
    start = MINIMAL.index("[boundaries.ymin]")
    end = MINIMAL.index("\n\n", start)
    expect_error(MINIMAL[:start] + MINIMAL[end:], "boundaries.ymin", "xmin, xmax, ymin, ymax")


def test_unknown_side():
    expect_error(MINIMAL + '\n[boundaries.zmin]\nkind = "vacuum"\n', "boundaries.zmin",
                 "unknown key", "xmin, xmax, ymin, ymax")


@pytest.mark.parametrize(
    "body, key, fragments",
    [
        ('pressure = "1 Pa"', "boundaries.xmin.kind",
         ("required", "reservoir, vacuum, periodic, symmetry, axis, wall")),
        ('kind = "inlet"', "boundaries.xmin.kind", ("'inlet'", "reservoir, vacuum")),
        ('kind = "reservoir"\ntemperature = "300 K"', "boundaries.xmin.pressure",
         ("required", "Pa, kPa")),
        ('kind = "reservoir"\npressure = "1 Pa"', "boundaries.xmin.temperature",
         ("required", "K, degC")),
        ('kind = "reservoir"\npressure = "0 Pa"\ntemperature = "300 K"',
         "boundaries.xmin.pressure", ("> 0 Pa",)),
        ('kind = "reservoir"\npressure = "-1 Pa"\ntemperature = "300 K"',
         "boundaries.xmin.pressure", ("> 0 Pa",)),
        ('kind = "reservoir"\npressure = "1 Pa"\ntemperature = "-300 degC"',
         "boundaries.xmin.temperature", ("> 0 K",)),
        ('kind = "reservoir"\npressure = "3 psi"\ntemperature = "300 K"',
         "boundaries.xmin.pressure", ("'3 psi' has an unknown pressure unit", "mbar, bar, Torr")),
        ('kind = "reservoir"\npressure = nan\ntemperature = "300 K"',
         "boundaries.xmin.pressure", ("finite",)),
        ('kind = "reservoir"\npressure = inf\ntemperature = "300 K"',
         "boundaries.xmin.pressure", ("finite",)),
        ('kind = "reservoir"\npressure = true\ntemperature = "300 K"',
         "boundaries.xmin.pressure", ("Pa",)),
        ('kind = "reservoir"\npressure = 1\ntemperature = 300\nvelocity = "1 m/s"',
         "boundaries.xmin.velocity", ("[vx, vy, vz]", "m/s, km/s")),
        ('kind = "reservoir"\npressure = 1\ntemperature = 300\nvelocity = [1, 2, "3 mm"]',
         "boundaries.xmin.velocity[2]", ("unknown velocity unit", "m/s")),
        ('kind = "vacuum"\npressure = "1 Pa"', "boundaries.xmin.pressure",
         ('kind = "vacuum"', "allowed keys", "kind, from, to")),
        ('kind = "reservoir"\npressure = 1\ntemperature = 300\ncolour = 1',
         "boundaries.xmin.colour", ("pressure, temperature, velocity",)),
        ('kind = "symmetry"\ntemperature = "300 K"', "boundaries.xmin.temperature",
         ("kind, from, to",)),
    ],
)
def test_boundary_piece_errors(body, key, fragments):
    expect_error(replace_section(MINIMAL, "[boundaries.xmin]", body), key, *fragments)


def test_side_wrong_type():
    text = MINIMAL.replace('[boundaries.ymin]\nkind = "symmetry"\n', "").replace(
        "[boundaries.xmin]", "[boundaries]\nymin = 5\n\n[boundaries.xmin]")
    expect_error(text, "boundaries.ymin", "[boundaries.ymin]", "[[boundaries.ymin]]")


@pytest.mark.parametrize(
    "body, key, fragments",
    [
        ('kind = "wall"', "boundaries.ymax.temperature", ("required", '"diffuse"', "K, degC")),
        ('kind = "wall"\nsurface = "rough"\ntemperature = 300', "boundaries.ymax.surface",
         ("diffuse, specular, maxwell",)),
        ('kind = "wall"\nsurface = "maxwell"\ntemperature = 300', "boundaries.ymax.accommodation",
         ("required", "0 < a <= 1")),
        ('kind = "wall"\nsurface = "maxwell"\ntemperature = 300\naccommodation = 1.5',
         "boundaries.ymax.accommodation", ("0 < accommodation <= 1",)),
        ('kind = "wall"\nsurface = "maxwell"\ntemperature = 300\naccommodation = 0',
         "boundaries.ymax.accommodation", ("0 < accommodation <= 1",)),
        ('kind = "wall"\ntemperature = 300\naccommodation = 0.5', "boundaries.ymax.accommodation",
         ('surface = "maxwell"',)),
        ('kind = "wall"\ntemperature = 300\nvelocity = [1, 0, 0]', "boundaries.ymax.velocity",
         ("velocity value",)),
        ('kind = "wall"\ntemperature = 300\npressure = 1', "boundaries.ymax.pressure",
         ('kind = "wall"', "surface, temperature, accommodation, velocity")),
    ],
)
def test_wall_boundary_errors(body, key, fragments):
    expect_error(replace_section(MINIMAL, "[boundaries.ymax]", body), key, *fragments)


def test_periodic_must_pair():
    text = replace_section(MINIMAL, "[boundaries.ymax]", 'kind = "periodic"')
    expect_error(text, "boundaries.ymin", "boundaries.ymax is periodic", "ymin with ymax")
    text = replace_section(MINIMAL, "[boundaries.xmin]", 'kind = "periodic"')
    text = replace_section(text, "[boundaries.xmax]", 'kind = "symmetry"')
    expect_error(text, "boundaries.xmax", "periodic too", "xmin with xmax")


def test_periodic_must_be_whole_side():
    text = replace_section(MINIMAL, "[boundaries.xmax]", 'kind = "periodic"\nfrom = 0\nto = 1')
    expect_error(text, "boundaries.xmax.from", 'kind = "periodic"', "allowed keys", "kind")
    pieces = ('[[boundaries.xmax]]\nkind = "periodic"\n\n[[boundaries.xmax]]\nkind = "vacuum"'
              '\nfrom = "0 mm"\nto = "5 mm"')
    text = MINIMAL.replace('[boundaries.xmax]\nkind = "vacuum"', pieces)
    expect_error(text, "boundaries.xmax[0].kind", "whole side")


def pieces_text(*ranges, side="ymax"):
    """MINIMAL with ``side`` split into vacuum pieces over ``ranges`` (mm pairs)."""
    body = "".join(f'\n[[boundaries.{side}]]\nkind = "vacuum"\nfrom = "{a} mm"\nto = "{b} mm"\n'
                   for a, b in ranges)
    start = MINIMAL.index(f"[boundaries.{side}]")
    end = MINIMAL.find("\n\n", start)
    return MINIMAL[:start] + body.strip() + ("" if end < 0 else MINIMAL[end:]) + "\n"


def test_pieces_tile_in_any_order():
    case = parse_case(pieces_text((4, 10), (0, 1), (1, 4)))
    ends = [v for b in case.side("ymax") for v in (b.start, b.end)]
    assert ends == pytest.approx([0, 1e-3, 1e-3, 4e-3, 4e-3, 1e-2])


@pytest.mark.parametrize(
    "ranges, key, fragments",
    [
        (((0, 4), (5, 10)), "boundaries.ymax[1].from", ("gap", "without gaps or overlaps")),
        (((0, 6), (5, 10)), "boundaries.ymax[1].from", ("overlap",)),
        (((1, 4), (4, 10)), "boundaries.ymax[0].from", ("gap", "from 0 m to 0.01 m")),
        (((0, 4), (4, 9)), "boundaries.ymax[1].to", ("ends at 0.009 m",)),
        (((0, 4), (4, 11)), "boundaries.ymax[1].to", ("ends at 0.011 m",)),
        (((0, 4), (4, 4), (4, 10)), "boundaries.ymax[1].to", ("greater than from",)),
        (((0, 10), (10, 0)), "boundaries.ymax[1].to", ("greater than from",)),
    ],
)
def test_pieces_must_tile(ranges, key, fragments):
    expect_error(pieces_text(*ranges), key, *fragments)


def test_pieces_need_from_and_to():
    text = pieces_text((0, 4), (4, 10)).replace('from = "4 mm"\n', "")
    expect_error(text, "boundaries.ymax[1].from", "required", "every piece")


def test_whole_side_with_wrong_range():
    text = replace_section(MINIMAL, "[boundaries.xmax]", 'kind = "vacuum"\nfrom = 0\nto = "4 mm"')
    expect_error(text, "boundaries.xmax.to", "ends at 0.004 m", "from 0 m to 0.005 m")


def test_tiling_tolerance():
    case = parse_case(pieces_text((0, 4), (4.0000000000001, 10)))
    a, b = case.side("ymax")
    assert a.end == b.start


def test_empty_piece_array():
    text = MINIMAL.replace('[boundaries.ymax]\nkind = "wall"\ntemperature = "300 K"\n',
                           "").replace("[boundaries.xmin]", "[boundaries]\nymax = []\n\n"
                                                             "[boundaries.xmin]")
    expect_error(text, "boundaries.ymax", "array of tables")


def test_no_gas_source():
    text = replace_section(MINIMAL, "[boundaries.xmin]", 'kind = "vacuum"')
    expect_error(text, "boundaries", "no source of gas", "reservoir", "[initial] pressure > 0")
    expect_error(text + '\n[initial]\npressure = 0\n', "boundaries", "no source of gas")


# --------------------------------------------------------------------------- walls

def walls_text(*walls):
    return MINIMAL + "".join("\n[[walls]]\n" + w.strip() + "\n" for w in walls)


GOOD_WALL = 'name = "a"\npoints = [["1 mm", "1 mm"], ["2 mm", "1 mm"]]\ntemperature = 300'


@pytest.mark.parametrize(
    "wall, key, fragments",
    [
        ('points = [[0, 0], [0.001, 0]]\ntemperature = 300', "walls[1].name", ("required",)),
        ('name = "a"\npoints = [[0, 0], [0.001, 0]]\ntemperature = 300', "walls[1].name",
         ("already used by walls[0]", "unique")),
        ('name = ""\npoints = [[0, 0], [0.001, 0]]\ntemperature = 300', "walls[1].name",
         ("non-empty",)),
        ('name = "b"\ntemperature = 300', "walls[1].points", ("required", "at least 2")),
        ('name = "b"\npoints = [[0, 0]]\ntemperature = 300', "walls[1].points",
         ("at least 2 points [x, y]",)),
        ('name = "b"\npoints = [[0, 0], [0.011, 0]]\ntemperature = 300', "walls[1].points",
         ("point 1", "outside the domain", "x in [0, 0.01] m")),
        ('name = "b"\npoints = [[0, 0], [0.001, -0.001]]\ntemperature = 300', "walls[1].points",
         ("outside the domain",)),
        ('name = "b"\npoints = [[0, 0], ["1 mm", "1 psi"]]\ntemperature = 300',
         "walls[1].points", ("unknown length unit", "mm")),
        ('name = "b"\npoints = [[0, 0], [0, 0, 0]]\ntemperature = 300', "walls[1].points",
         ("[x, y]",)),
        ('name = "b"\npoints = [[0, 0], [0, 0], [0.001, 0]]\ntemperature = 300',
         "walls[1].points", ("points 0 and 1 coincide", "zero-length")),
        ('name = "b"\nsolid = true\npoints = [[0, 0], [0.001, 0]]\ntemperature = 300',
         "walls[1].points", ("at least 3",)),
        ('name = "b"\nsolid = true\npoints = [[0, 0], [0.001, 0], [0.002, 0]]\ntemperature = 300',
         "walls[1].points", ("zero area",)),
        ('name = "b"\nsolid = true\npoints = [[0, 0], [0.001, 0], [0.001, 0.001], [0, 0]]\n'
         'temperature = 300', "walls[1].points", ("points 3 and 0 coincide", "do not repeat")),
        ('name = "b"\nsolid = "yes"\npoints = [[0, 0], [0.001, 0]]\ntemperature = 300',
         "walls[1].solid", ("true or false",)),
        ('name = "b"\npoints = [[0, 0], [0.001, 0]]', "walls[1].temperature",
         ("required", '"diffuse"')),
        ('name = "b"\npoints = [[0, 0], [0.001, 0]]\nsurface = "specular"\naccommodation = 0.5',
         "walls[1].accommodation", ('only with surface = "maxwell"',)),
        ('name = "b"\npoints = [[0, 0], [0.001, 0]]\nsurface = "maxwell"\ntemperature = 300',
         "walls[1].accommodation", ("0 < a <= 1",)),
        ('name = "b"\npoints = [[0, 0], [0.001, 0]]\ntemperature = 300\nkind = "wall"',
         "walls[1].kind", ("unknown key", "name, points, solid, surface")),
    ],
)
def test_wall_errors(wall, key, fragments):
    expect_error(walls_text(GOOD_WALL, wall), key, *fragments)


def test_walls_must_be_array():
    text = MINIMAL + '\n[walls]\nname = "a"\n'
    expect_error(text, "walls", "[[walls]]")


def test_wall_points_on_edge_snap_and_maxwell():
    wall = ('name = "w"\npoints = [[-1e-13, 0], ["10 mm", "5 mm"]]\nsurface = "maxwell"\n'
            'temperature = "0 degC"\naccommodation = 0.25\nvelocity = "2 km/s"')
    (w,) = parse_case(walls_text(wall)).walls
    assert w.points == ((0.0, 0.0), (0.01, 0.005))
    assert w.surface == dataclasses.replace(w.surface, kind="maxwell", accommodation=0.25,
                                            temperature_k=273.15, velocity_m_s=2000.0)


# --------------------------------------------------------------------------- flux planes

def planes_text(*planes):
    return MINIMAL + "".join("\n[[flux_planes]]\n" + p.strip() + "\n" for p in planes)


@pytest.mark.parametrize(
    "plane, key, fragments",
    [
        ('points = [[0, 0], [0, 0.001]]', "flux_planes[1].name", ("required",)),
        ('name = "p"\npoints = [[0, 0], [0, 0.001]]', "flux_planes[1].name",
         ("already used by flux_planes[0]",)),
        ('name = "q"\npoints = [[0, 0], [0, 0.001], [0, 0.002]]', "flux_planes[1].points",
         ("exactly 2",)),
        ('name = "q"\npoints = [[0.001, 0.001], [0.001, 0.001]]', "flux_planes[1].points",
         ("coincide", "distinct")),
        ('name = "q"\npoints = [[0, 0], [0, 0.006]]', "flux_planes[1].points",
         ("outside the domain",)),
        ('name = "q"\npoints = [[0.001, 0.001], [0.001, 0.002]]\nmirrored = true',
         "flux_planes[1].mirrored", ('kind = "symmetry"', "allowed here: false")),
        ('name = "q"\npoints = [[0.001, 0.005], [0.001, 0.002]]\nmirrored = true',
         "flux_planes[1].mirrored", ("symmetry",)),
        ('name = "q"\npoints = [[0.001, 0], [0.001, 0.002]]\nmirrored = 1',
         "flux_planes[1].mirrored", ("true or false",)),
        ('name = "q"\npoints = [[0.001, 0], [0.001, 0.002]]\nsurface = "diffuse"',
         "flux_planes[1].surface", ("unknown key", "name, points, mirrored")),
    ],
)
def test_flux_plane_errors(plane, key, fragments):
    good = 'name = "p"\npoints = [["5 mm", "0 mm"], ["5 mm", "1 mm"]]\nmirrored = true'
    expect_error(planes_text(good, plane), key, *fragments)


def test_mirrored_needs_symmetry_piece():
    text = pieces_text((0, 5), (5, 10), side="ymin").replace(
        'kind = "vacuum"\nfrom = "0 mm"', 'kind = "symmetry"\nfrom = "0 mm"')
    ok = text + '\n[[flux_planes]]\nname = "a"\npoints = [["2 mm", "0 mm"], ["2 mm", "1 mm"]]\n' \
                'mirrored = true\n'
    assert parse_case(ok).flux_planes[0].mirrored
    bad = ok.replace('"2 mm"', '"7 mm"')
    expect_error(bad, "flux_planes[0].mirrored", "symmetry")
    # The upper end on the symmetry side counts too.
    flipped = ok.replace('[["2 mm", "0 mm"], ["2 mm", "1 mm"]]',
                         '[["2 mm", "1 mm"], [0.002, 0]]')
    assert parse_case(flipped).flux_planes[0].mirrored


# ----------------------------------------------------------- initial, resolution, run

@pytest.mark.parametrize(
    "section, key, fragments",
    [
        ('[initial]\npressure = "1 Pa"', "initial.temperature", ("required", "K, degC")),
        ('[initial]\npressure = "-1 Pa"', "initial.pressure", (">= 0 Pa",)),
        ('[initial]\npressure = "1 Pa"\ntemperature = 0', "initial.temperature", ("> 0 K",)),
        ('[initial]\nvelocity = [0, 0]', "initial.velocity", ("[vx, vy, vz]",)),
        ("[resolution]\ncell_size = 0", "resolution.cell_size", ("> 0 m",)),
        ('[resolution]\ntime_step = "1 mm"', "resolution.time_step",
         ("unknown time unit", "s, ms, us, ns")),
        ("[resolution]\nparticles_per_cell = -3", "resolution.particles_per_cell", ("> 0",)),
        ("[resolution]\nparticle_weight = 0", "resolution.particle_weight", ("> 0",)),
        ('[resolution]\nparticle_weight = "1e12 m"', "resolution.particle_weight",
         ("plain number",)),
        ("[resolution]\nsubcells = 2.0", "resolution.subcells", ("integer >= 1",)),
        ("[resolution]\nsubcells = true", "resolution.subcells", ("integer >= 1",)),
        ("[resolution]\nsubcells = 0", "resolution.subcells", ("integer >= 1",)),
        ("[run]\nsettle_steps = -1", "run.settle_steps", ("integer >= 0",)),
        ("[run]\nsettle_steps = false", "run.settle_steps", ("integer >= 0",)),
        ("[run]\nsample_steps = 0", "run.sample_steps", ("integer >= 1",)),
        ('[run]\nsample_steps = "100"', "run.sample_steps", ("integer >= 1",)),
        ("[run]\nbatches = 1", "run.batches", ("integer >= 2",)),
        ("[run]\nseed = -5", "run.seed", ("integer >= 0",)),
        ("[run]\nseed = 1.5", "run.seed", ("integer >= 0",)),
        ("[run]\nsample_steps = 10\nbatches = 20", "run.sample_steps",
         (">= run.batches (20)",)),
        ("run = 5", "run", ("must be a table", "settle_steps")),
    ],
)
def test_section_errors(section, key, fragments):
    text = section + "\n" + MINIMAL if section.startswith("run =") else MINIMAL + "\n" + section
    expect_error(text, key, *fragments)


def test_initial_temperature_default_follows_reservoir():
    text = MINIMAL.replace('temperature = "300 K"\n\n[boundaries.xmax]',
                           'temperature = "77 K"\n\n[boundaries.xmax]')
    assert parse_case(text).initial.temperature_k == 77.0


# --------------------------------------------------------------------------- overrides

def test_overrides_applied(tmp_path):
    file = tmp_path / "full.toml"
    file.write_text(FULL, encoding="utf-8")
    case = load_case(file, overrides={
        "run.seed": "7",
        "initial.pressure": "2 Pa",
        "gas.species": "Kr",
        "gas.model": "hs",
        "title": "changed",
        "boundaries.xmin.pressure": "3 mbar",
        "boundaries.ymax[1].temperature": "400 K",
        "walls[0].temperature": '"310 K"',
        "flux_planes[1].mirrored": "true",
        "domain.depth": 0.5,
        "resolution.cell_size": '"0.2 mm"',
        "boundaries.xmax.velocity": "-1 m/s",
    })
    assert case.run.seed == 7 and case.initial.pressure_pa == 2.0
    assert case.gas.species == "Kr" and case.gas.model == "hs" and case.title == "changed"
    assert case.side("xmin")[0].pressure_pa == 300.0
    assert case.side("ymax")[0].temperature_k == 400.0  # file piece 1 sorts first
    assert case.walls[0].surface.temperature_k == 310.0
    assert case.domain.depth_m == 0.5 and case.resolution.cell_size_m == pytest.approx(2e-4)
    assert case.side("xmax")[0].surface.velocity_m_s == -1.0
    assert case.source_text == FULL
    assert ("run.seed", "7") in case.overrides


def test_override_creates_missing_section():
    case = parse_case(MINIMAL, overrides={"run.seed": "3", "run.batches": 4,
                                          "resolution.subcells": "2"})
    assert case.run.seed == 3 and case.run.batches == 4 and case.resolution.subcells == 2


def test_override_values_are_validated():
    expect_error(MINIMAL, "run.seed", "integer >= 0", overrides={"run.seed": "abc"})
    expect_error(MINIMAL, "boundaries.xmin.pressure", "unknown pressure unit",
                 overrides={"boundaries.xmin.pressure": "3 psi"})
    expect_error(MINIMAL, "gas.model", "hs, vhs, vss", overrides={"gas.model": "x"})


@pytest.mark.parametrize(
    "key, fragments",
    [
        ("run.speed", ("unknown override key", "run.{settle_steps,sample_steps,batches,seed}")),
        ("seed", ("unknown override key",)),
        ("gas", ("unknown override key",)),
        ("run.seed.x", ("unknown override key",)),
        ("walls.name", ("unknown override key", "walls[i]")),
        ("walls[0].name", ("no such entry", "0 walls")),
        ("flux_planes[2].name", ("no such entry",)),
        ("walls[0].colour", ("unknown override key",)),
        ("boundaries.zmin.kind", ("unknown override key", "xmin,xmax,ymin,ymax")),
        ("boundaries.xmin.colour", ("unknown override key",)),
        ("boundaries.xmin[3].kind", ("no such piece",)),
        ("run..seed", ("malformed override key",)),
        ("", ("malformed override key",)),
    ],
)
def test_unknown_override_keys(key, fragments):
    expect_error(MINIMAL, key, *fragments, overrides={key: "1"})


def test_override_ambiguous_piece():
    text = pieces_text((0, 4), (4, 10))
    expect_error(text, "boundaries.ymax.kind", "2 pieces", "boundaries.ymax[0].kind",
                 overrides={"boundaries.ymax.kind": "wall"})
    case = parse_case(text, overrides={"boundaries.ymax[1].kind": '"symmetry"'})
    assert [b.kind for b in case.side("ymax")] == ["vacuum", "symmetry"]


def test_override_new_side_key_is_checked():
    expect_error(MINIMAL, "boundaries.xmax.pressure", 'kind = "vacuum"',
                 overrides={"boundaries.xmax.pressure": "1 Pa"})


def test_boolean_overrides_are_recorded_as_toml():
    # the report re-reads the case with the recorded overrides: they must parse again
    case = parse_case(_gas('species = "N2"'), overrides={"gas.vibration": True})
    assert ("gas.vibration", "true") in case.overrides
    again = parse_case(case.source_text, overrides=dict(case.overrides))
    assert again.gas.vibration is True


def test_plan_states_internal_energy_and_warns_below_parkers_floor():
    from rarefy.plan import format_plan, make_plan
    from rarefy.report import internal_line_of

    plan = make_plan(parse_case(_gas('species = "O2"\nrotation = "parker"')))
    assert plan.gamma == pytest.approx(1.4) and plan.rotation == "parker"
    assert plan.rot_floor_temperature_k == pytest.approx(265.0, abs=1.0)
    assert any("below 265 K Parker's Z_rot" in w for w in plan.warnings())
    assert "Z_rot 3.41 at 300 K (Parker's formula)" in format_plan(plan)
    mono = make_plan(parse_case(MINIMAL))
    assert "none (monatomic), gamma 5/3" in format_plan(mono)
    # a result written before internal energy was simulated says so
    old = {k: v for k, v in plan.to_dict().items() if k not in ("rotation",)}
    assert "older rarefy" in internal_line_of(old)
