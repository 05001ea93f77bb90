"""Property-based fuzzing of the case loader, the planner and the guards.

Valid template cases are mutated (keys deleted or added, values replaced by wrong
types, extreme or non-finite quantities, wrong units, points outside the domain,
degenerate walls, unknown sections, broken TOML, extreme pressures, temperatures and
sizes) and thrown at :func:`rarefy.case.parse_case`, :func:`rarefy.plan.make_plan` and
:func:`rarefy.guards.check_plan`. Each must end in a valid plan or in a
:class:`~rarefy.case.CaseError` / :class:`~rarefy.guards.GuardError` whose message is
one line naming the file; any other exception fails the test. Runs are derandomized
so that CI sees the same cases every time.
"""

from __future__ import annotations

import copy
import dataclasses
import json
import math
import sys

import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rarefy.case import CaseError, parse_case
from rarefy.case_schema import ARRAY_KEYS, SECTION_KEYS
from rarefy.guards import GuardError, check_plan
from rarefy.plan import Plan, format_plan, make_plan
from rarefy.templates import box_case, channel_case, orifice_case, slit_case, tube_case
from rarefy.units import UNITS, parse_quantity

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

PATH = "fuzz/case-\u00e9.toml"
GIB = 2 ** 30

TEMPLATE_TEXTS = (
    slit_case(),
    slit_case(gas="He", thickness_m=0.5e-3, downstream_pressure_pa=0.1),
    channel_case(gas="N2"),
    orifice_case(),
    orifice_case(gas="Xe", thickness_m=0.2e-3),
    tube_case(),
    box_case(),
)
BASES = tuple(tomllib.loads(t) for t in TEMPLATE_TEXTS)

FUZZ = {"deadline": None, "derandomize": True, "database": None,
        "suppress_health_check": [HealthCheck.too_slow, HealthCheck.data_too_large,
                                  HealthCheck.filter_too_much]}

# ---------------------------------------------------------------------------- TOML writer


def _key(k: str) -> str:
    return json.dumps(k, ensure_ascii=False)


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))  # pragma: no cover


def dumps(doc: dict) -> str:
    """TOML text of ``doc``: every top-level key as ``key = inline value``."""
    return "\n".join(f"{_key(k)} = {_value(v)}" for k, v in doc.items()) + "\n"


def test_writer_round_trips_the_templates():
    for doc in BASES:
        assert tomllib.loads(dumps(doc)) == doc


# ------------------------------------------------------------------------------ strategies

# printable characters only (as str.isprintable), so that messages stay readable
PRINTABLE = st.characters(blacklist_categories=("Cc", "Cs", "Cn", "Co", "Cf", "Zs", "Zl", "Zp"),
                          whitelist_characters=" ")
ALL_UNITS = sorted({u for units in UNITS.values() for u in units})
ODD_UNITS = ["", "psi", "degF", "deg C", "K K", "m/s/s", "\u00b5s", "\u03bcm", "PA", "mm mm",
             "Pa)", "1", "e", "%", "\u00c5", "\U0001F600"]
NUMBER_TEXTS = ["nan", "NaN", "inf", "-inf", "+inf", "1e300", "1e-300", "1e400", "1e-400",
                "0", "-0", "-1", "1e12", "1e-30", "1e-9", "1e6", "+.5", "1.", "1e", "0x10",
                "1_000", "", " ", "--1", "1e+308", "9" * 400, "\u0661", "\uff11"]
INJECTIONS = ["__import__('os').system('echo x')", "$(echo x)", "`echo x`", "${HOME}",
              "1 Pa; rm -rf /", "{{7*7}}", "%s%s%n", "eval('1')", "1 Pa\\n2 Pa",
              "lambda: 0", "1+1", "2**10 Pa"]
EXTREMES = [0.0, -0.0, -1.0, 1e-300, 5e-324, 1e300, 1.7e308, 1e-30, 1e12, 1e-12, 1e6, 1e-9,
            2.0 ** 63, 1e15, -1e300]
HUGE_INTS = [0, -1, 1, 2 ** 31, 2 ** 32, 2 ** 63 - 1, 2 ** 64, 10 ** 30, 10 ** 400, -10 ** 30]

numbers = st.one_of(st.sampled_from(EXTREMES),
                    st.floats(allow_nan=False, allow_infinity=False, width=64))
quantity_texts = st.builds(
    lambda n, space, u: f"{n}{space}{u}",
    st.one_of(st.sampled_from(NUMBER_TEXTS), numbers.map(repr)),
    st.sampled_from(["", " ", "  "]),
    st.one_of(st.sampled_from(ALL_UNITS), st.sampled_from(ODD_UNITS)))
scalars = st.one_of(
    st.text(PRINTABLE, max_size=12),
    st.sampled_from(INJECTIONS),
    st.sampled_from(HUGE_INTS), st.integers(-10 ** 6, 10 ** 6),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from(EXTREMES),
    st.booleans(),
    quantity_texts,
)
values = st.recursive(
    scalars,
    lambda inner: st.one_of(st.lists(inner, max_size=4),
                            st.dictionaries(st.text(PRINTABLE, min_size=1, max_size=8), inner,
                                            max_size=3)),
    max_leaves=8)
KNOWN_KEYS = sorted({k for keys in SECTION_KEYS.values() for k in keys}
                    | {k for keys in ARRAY_KEYS.values() for k in keys}
                    | {"kind", "from", "to", "pressure", "temperature", "velocity", "surface",
                       "accommodation", "xmin", "xmax", "ymin", "ymax", "boundaries", "walls",
                       "flux_planes", "probes", "initial", "run", "resolution", "histograms",
                       "gas", "domain", "title", "nozzle"})
new_keys = st.one_of(st.sampled_from(KNOWN_KEYS), st.text(PRINTABLE, min_size=1, max_size=10))


def _slots(node, out):
    """Every (container, key or index) of a document tree."""
    if isinstance(node, dict):
        for k, v in node.items():
            out.append((node, k))
            _slots(v, out)
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out.append((node, i))
            _slots(v, out)
    return out


def _tables(node, out):
    if isinstance(node, dict):
        out.append(node)
        for v in node.values():
            _tables(v, out)
    elif isinstance(node, list):
        for v in node:
            _tables(v, out)
    return out


def _mutate(draw, doc: dict) -> None:
    op = draw(st.sampled_from(["delete", "replace", "replace", "add", "wrap", "copy",
                               "empty", "point", "degenerate"]))
    slots = _slots(doc, [])
    items = [item for name in ("walls", "flux_planes") if isinstance(doc.get(name), list)
             for item in doc[name] if isinstance(item, dict) and "points" in item]
    if op == "degenerate" and items:
        item = draw(st.sampled_from(items))
        p = draw(st.sampled_from(["0 mm", "0.5 mm", "1e-20 m", "-0 mm"]))
        item["points"] = draw(st.sampled_from([
            [[p, p], [p, p]],                                   # zero length
            [[p, "0 mm"], [p, "0.5 mm"], [p, "1 mm"]],          # collinear
            [[p, p]],                                           # one point
            [[p, "0 mm"], [p, "0.5 mm"], [p, "0 mm"]],          # back on itself
        ]))
        if "solid" in item or draw(st.booleans()):
            item["solid"] = draw(st.booleans())
        return
    if op == "add" or not slots:
        table = draw(st.sampled_from(_tables(doc, [])))
        table[draw(new_keys)] = draw(values)
        return
    container, k = draw(st.sampled_from(slots))
    if op == "delete":
        del container[k]
    elif op == "replace":
        container[k] = draw(values)
    elif op == "wrap":
        container[k] = [container[k]] if draw(st.booleans()) else {"value": container[k]}
    elif op == "copy":   # a value from elsewhere in the document, e.g. a table as a number
        other_c, other_k = draw(st.sampled_from(slots))
        container[k] = copy.deepcopy(other_c[other_k])
    elif op == "empty":
        container[k] = draw(st.sampled_from(["", " ", [], {}, [[]], [""], 0]))
    else:   # a point moved, possibly far outside the domain
        container[k] = [draw(quantity_texts), draw(quantity_texts)]


@st.composite
def mutated_docs(draw):
    doc = copy.deepcopy(draw(st.sampled_from(BASES)))
    for _ in range(draw(st.integers(1, 3))):
        _mutate(draw, doc)
    return doc


# where the physics lives: (container, key or index, kind)
def _physics_slots(doc: dict, geometry: bool = True) -> list[tuple[object, object, str]]:
    """Quantities of ``doc``; with ``geometry`` also every coordinate."""
    out = []
    for i in range(2 if geometry else 0):
        out += [(doc["domain"]["x"], i, "length"), (doc["domain"]["y"], i, "length")]
    for raw in doc["boundaries"].values():
        for piece in (raw if isinstance(raw, list) else [raw]):
            for name, kind in (("pressure", "pressure"), ("temperature", "temperature"),
                               ("from", "length"), ("to", "length")):
                if name in piece and (geometry or kind != "length"):
                    out.append((piece, name, kind))
            if piece.get("kind") == "reservoir":
                vel = piece.setdefault("velocity", ["0 m/s", "0 m/s", "0 m/s"])
                out += [(vel, i, "velocity") for i in range(3)]
    for sect, name, kind in (("initial", "pressure", "pressure"),
                             ("initial", "temperature", "temperature"),
                             ("resolution", "cell_size", "length"),
                             ("resolution", "time_step", "time"),
                             ("resolution", "particles_per_cell", "dimensionless"),
                             ("resolution", "particle_weight", "dimensionless"),
                             ("histograms", "speed_max", "velocity"),
                             ("run", "time_budget", "time"),
                             ("domain", "depth", "length"),
                             ("domain", "characteristic_length", "length")):
        out.append((doc.setdefault(sect, {}), name, kind))
    for wall in doc.get("walls", []):
        out += [(wall, "temperature", "temperature"), (wall, "velocity", "velocity")]
    for plane in doc.get("flux_planes", []):
        out.append((plane, "opening_length", "length"))
    if geometry:
        for item in doc.get("walls", []) + doc.get("flux_planes", []):
            out += [(pt, i, "length") for pt in item["points"] for i in range(2)]
        for probe in doc.get("probes", []):
            out += [(probe[axis], i, "length") for axis in "xy" for i in range(2)]
    return out


LENGTH_KEYS = {"x", "y", "points", "from", "to", "characteristic_length", "opening_length",
               "depth"}


def _scale_lengths(node, factor: float, key: str | None = None):
    if isinstance(node, dict):
        return {k: _scale_lengths(v, factor, k) for k, v in node.items()}
    if isinstance(node, list):
        return [_scale_lengths(v, factor, key) for v in node]
    if key in LENGTH_KEYS and isinstance(node, (str, int, float)):
        return f"{parse_quantity(node, 'length') * factor!r} m"
    return node


# domain scale factors: within the allowed sizes (the templates are about 13 mm wide and
# 1 mm across the opening), and beyond them
SCALES_IN = [1e-6 / 1.3, 1e-5, 1e-3, 1e2, 1e4 / 13]
SCALES_OUT = [1e-300, 1e-30, 1e-12, 1e-9, 1e6, 1e9, 1e30, 1e300]
# extremes inside the allowed ranges (the planner must cope) and beyond them (the loader
# must refuse them)
EDGES_BY_KIND = {
    "pressure": ["1e-20 Pa", "1e9 Pa", "1e-12 Pa", "1e5 Pa", "7.5e-23 bar", "1e4 bar"],
    "temperature": ["1e-3 K", "1e6 K", "1 K", "-273.149 degC", "3e5 K"],
    "length": ["1e-12 m", "1e4 m", "1e-9 m", "1 nm", "10000 m"],
    "time": ["1e-18 s", "1e9 s", "1 s", "1e-9 ns", "1e3 h", "1 min"],
    "velocity": ["1e6 m/s", "-1e6 m/s", "1e3 km/s", "1e-300 m/s"],
    "dimensionless": [1e-6, 1e9, 1e-20, 1e40, 1, 0.5],
}
OUT_BY_KIND = {
    "pressure": ["1e-30 Pa", "1e-300 Pa", "1e12 Pa", "1e300 Pa", "5e-324 Pa", "1e-9 mTorr",
                 "1e12 atm", "1e306 MPa", "0 Pa", "-1 Pa"],
    "temperature": ["1e-9 K", "1e-300 K", "1e12 K", "1e300 K", "-273.15 degC", "-273 degC",
                    "1e308 degC", "0 K"],
    "length": ["1e-13 m", "1e-300 m", "1e6 m", "1e300 m", "1e-9 nm", "0 m", "-1 m"],
    "time": ["1e-300 s", "1e-30 s", "1e6 h", "1e300 h", "0 s", "5e-324 s"],
    "velocity": ["1e300 m/s", "3e8 m/s", "-1e300 km/s"],
    "dimensionless": [1e-300, 1e-30, 1e300, 5e-324, 1e308, 0, -1],
}


@st.composite
def extreme_docs(draw):
    doc = copy.deepcopy(draw(st.sampled_from(BASES)))
    scale = draw(st.integers(0, 7))
    if scale >= 5:
        doc = _scale_lengths(doc, draw(st.sampled_from(SCALES_IN if scale < 7 else SCALES_OUT)))
    for _ in range(draw(st.integers(1, 4))):
        table, name, kind = draw(st.sampled_from(_physics_slots(doc, geometry=False)))
        pick = draw(st.integers(0, 9))
        table[name] = draw(st.sampled_from(EDGES_BY_KIND[kind]) if pick < 7 else
                           st.sampled_from(OUT_BY_KIND[kind]) if pick < 9 else quantity_texts)
    for name, top in (("subcells", 10 ** 4), ("settle_steps", 10 ** 19),
                      ("sample_steps", 10 ** 19), ("batches", 10 ** 19)):
        if draw(st.integers(0, 5)) == 0:
            sect = "resolution" if name == "subcells" else "run"
            doc.setdefault(sect, {})[name] = draw(st.sampled_from([1, 2, 3, 100, 10 ** 12, top,
                                                                   2 ** 63 - 1]))
    return doc


@st.composite
def wrong_type_docs(draw):
    """One quantity replaced by a value of any type (string, huge integer, NaN, table...)."""
    doc = copy.deepcopy(draw(st.sampled_from(BASES)))
    table, name, _ = draw(st.sampled_from(_physics_slots(doc)))
    table[name] = draw(st.one_of(scalars, values))
    return doc


@st.composite
def broken_texts(draw):
    text = draw(st.sampled_from(TEMPLATE_TEXTS))
    lines = text.splitlines()
    for _ in range(draw(st.integers(1, 3))):
        i = draw(st.integers(0, len(lines) - 1))
        op = draw(st.sampled_from(["delete", "duplicate", "insert", "cut", "swap"]))
        if op == "delete":
            del lines[i]
        elif op == "duplicate":
            lines.insert(i, lines[i])
        elif op == "insert":
            lines.insert(i, draw(st.one_of(
                st.sampled_from(["[gas]", "[[gas]]", "[boundaries.xmin]", "[[boundaries.xmin]]",
                                 "[nozzle]", "[[walls]]", "[walls]", "x = ", "= 1", "[", "]",
                                 'species = "Ar"', "a.b.c = 1", "[domain.x]", "'''",
                                 '"""', "title = 'a", "[run]\nseed = -1"]),
                st.text(PRINTABLE, max_size=30))))
        elif op == "cut":
            lines[i] = lines[i][: draw(st.integers(0, max(0, len(lines[i]) - 1)))]
        elif lines[i]:
            j = draw(st.integers(0, len(lines[i]) - 1))
            lines[i] = lines[i][:j] + draw(st.text(PRINTABLE, min_size=1, max_size=3)) \
                + lines[i][j + 1:]
        if not lines:
            lines = [""]
    return "\n".join(lines) + "\n"


OVERRIDE_KEYS = (["title", "upstream_pressure", "boundaries.xmin.pressure",
                  "boundaries.ymax[0].pressure", "boundaries.ymax[7].pressure",
                  "boundaries.ymax.kind", "walls[0].temperature", "walls[9].name",
                  "flux_planes[0].points", "probes[0].x", "run.seed", "a..b", ".", "",
                  "run.seed.x", "boundaries.zmin.kind", "walls.name", "walls[-1].name"]
                 + [f"{s}.{k}" for s, keys in SECTION_KEYS.items() for k in keys])


# -------------------------------------------------------------------------------- oracle

def _one_line(exc: Exception) -> None:
    text = str(exc)
    assert "\n" not in text and "\r" not in text, text
    assert text.startswith(PATH + ":"), text
    assert text.isprintable(), text


def _check_plan_valid(plan: Plan) -> None:
    for name in ("mass_kg", "reference_pressure_pa", "reference_temperature_k",
                 "reference_number_density_m3", "mean_free_path_m", "collision_time_s",
                 "viscosity_pa_s", "mean_speed_m_s", "characteristic_length_m",
                 "knudsen_number", "rarefaction_parameter", "cell_dx_m", "cell_dy_m",
                 "time_step_s", "particle_weight", "particles_per_cell",
                 "expected_particles", "histogram_speed_max_m_s"):
        value = float(getattr(plan, name))
        assert math.isfinite(value) and value > 0.0, (name, value)
    for name, least in (("nx", 1), ("ny", 1), ("subcells", 1), ("settle_steps", 0),
                        ("sample_steps", 1), ("batches", 1), ("histogram_bins", 10)):
        value = getattr(plan, name)
        assert isinstance(value, int) and value >= least, (name, value)
    assert plan.batches <= plan.sample_steps
    for name in ("cell_over_mfp", "dt_over_tau", "transit_fraction"):
        assert math.isfinite(getattr(plan, name)), name
    assert isinstance(plan.warnings(), list)
    assert "nan" not in format_plan(plan).lower()
    json.dumps(plan.to_dict(), allow_nan=False)


def exercise(text: str, overrides: dict | None = None, time_budget_s: float | None = None,
             memory_budget_bytes: float = 8 * GIB) -> str:
    """Loader, planner and guards on ``text``; returns how it ended."""
    try:
        case = parse_case(text, PATH, overrides)
    except CaseError as exc:
        _one_line(exc)
        return "case error"
    try:
        plan = make_plan(case)
    except CaseError as exc:
        _one_line(exc)
        return "plan error"
    _check_plan_valid(plan)
    try:
        warnings = check_plan(case, plan, memory_budget_bytes=memory_budget_bytes,
                              time_budget_s=time_budget_s)
    except GuardError as exc:
        _one_line(exc)
        return "guard error"
    assert all(isinstance(w, str) and "\n" not in w for w in warnings)
    return "ok"


# --------------------------------------------------------------------------------- fuzzing

def test_templates_pass():
    for text in TEMPLATE_TEXTS:
        assert exercise(text) == "ok"


@settings(max_examples=500, **FUZZ)
@given(mutated_docs())
def test_mutated_documents(doc):
    exercise(dumps(doc))


@settings(max_examples=400, **FUZZ)
@given(extreme_docs(), st.one_of(st.none(), st.sampled_from([1e-300, 1.0, 3600.0, 1e300])))
def test_extreme_physics(doc, budget):
    exercise(dumps(doc), time_budget_s=budget)


@settings(max_examples=250, **FUZZ)
@given(wrong_type_docs())
def test_wrong_types(doc):
    exercise(dumps(doc))


@settings(max_examples=250, **FUZZ)
@given(broken_texts())
def test_broken_text(text):
    exercise(text)


@settings(max_examples=150, **FUZZ)
@given(st.dictionaries(st.one_of(st.sampled_from(OVERRIDE_KEYS), st.text(PRINTABLE, max_size=12)),
                       st.one_of(quantity_texts, st.sampled_from(INJECTIONS),
                                 st.text(PRINTABLE, max_size=12), values),
                       min_size=1, max_size=3),
       st.integers(0, len(TEMPLATE_TEXTS) - 1))
def test_overrides(overrides, which):
    exercise(TEMPLATE_TEXTS[which], overrides)


# ------------------------------------------------------------- regressions found by fuzzing

@pytest.mark.parametrize("old, new, key, fragment", [
    ('pressure = "1 Pa"', 'pressure = "1e12 Pa"', "boundaries.xmin.pressure",
     "from 1e-20 to 1e+09 Pa"),
    ('pressure = "1 Pa"', 'pressure = "1e-30 Pa"', "boundaries.xmin.pressure",
     "from 1e-20 to 1e+09 Pa"),
    ('temperature = "300 K"', 'temperature = "1e-9 K"', "boundaries.xmin.temperature",
     "from 0.001 to 1e+06 K"),
    ('x = ["-5 mm", "8 mm"]', 'x = ["-1e6 m", "1e6 m"]', "domain.x", "from -10000 to 10000 m"),
    ('x = ["-5 mm", "8 mm"]', 'x = ["0 m", "1e-12 m"]', "domain.x", "at least 1e-09 m"),
    ('pressure = "1 Pa"', "pressure = 1" + "0" * 400, "boundaries.xmin.pressure",
     "an integer of 401 digits is not a finite"),
    ('name = "plate"', 'name = "plate"\nvelocity = "1e300 m/s"', "walls[0].velocity",
     "from -1e+06 to 1e+06 m/s"),
    ('opening_length = "0 mm"', 'opening_length = "1e300 m"', "flux_planes[0].opening_length",
     "from 0 to 10000 m"),
])
def test_extremes_are_refused_with_the_range(old, new, key, fragment):
    base = slit_case()
    text = base.replace(old, new, 1)
    assert text != base
    with pytest.raises(CaseError) as info:
        parse_case(text, PATH)
    _one_line(info.value)
    assert info.value.key == key and fragment in info.value.message, str(info.value)


@pytest.mark.parametrize("extra, key", [
    ("[resolution]\ncell_size = 1e-300", "resolution.cell_size"),
    ("[resolution]\ntime_step = 5e-324", "resolution.time_step"),
    ("[resolution]\nparticles_per_cell = 1e300", "resolution.particles_per_cell"),
    ("[resolution]\nparticle_weight = 1e-300", "resolution.particle_weight"),
    ("[resolution]\nsubcells = 1000000", "resolution.subcells"),
    ("[run]\nsettle_steps = 10000000000000000000000", "run.settle_steps"),
    ("[histograms]\nspeed_max = 1e300", "histograms.speed_max"),
])
def test_resolution_extremes_are_refused(extra, key):
    with pytest.raises(CaseError) as info:
        parse_case(slit_case() + "\n" + extra + "\n", PATH)
    _one_line(info.value)
    assert info.value.key == key


def test_integers_too_long_for_python():
    digits = "1" * 5000
    with pytest.raises(CaseError) as info:
        parse_case(slit_case() + f"\n[run]\nseed = {digits}\n", PATH)
    _one_line(info.value)
    assert "64-bit" in info.value.message
    with pytest.raises(CaseError) as info:
        parse_case(slit_case(), PATH, overrides={"run.seed": digits})
    _one_line(info.value)
    assert info.value.key == "run.seed" and len(str(info.value)) < 300


@pytest.mark.parametrize("gas", ["H2", "Xe"])
@pytest.mark.parametrize("pressure", [1e-20, 1e9])
@pytest.mark.parametrize("temperature", [1e-3, 1e6])
@pytest.mark.parametrize("size", [2.6e-9, 250.0])
def test_corners_of_the_allowed_ranges_plan(gas, pressure, temperature, size):
    """Inside the loader's ranges the planner's numbers stay finite (or a guard refuses)."""
    texts = [slit_case(gas=gas, temperature_k=temperature, upstream_pressure_pa=pressure,
                       width_m=size),
             tube_case(gas=gas, temperature_k=temperature, upstream_pressure_pa=pressure,
                       radius_m=size / 2, length_m=size)]
    for text in texts:
        for extra in ("", "cell_size = 1e-12\nparticle_weight = 1e40\ntime_step = 1e-18",
                      "cell_size = 1e4\ntime_step = 1e9\nparticles_per_cell = 1e-6",
                      "particles_per_cell = 1e9\nsubcells = 100"):
            assert exercise(text + "\n[resolution]\n" + extra + "\n") in ("ok", "guard error")


def test_planner_refuses_what_it_cannot_represent():
    """A case built in code, past the loader's ranges, stops with a CaseError and a key."""
    case = parse_case(slit_case(), PATH)
    xmin = case.boundaries[0]
    assert xmin.side == "xmin"
    hot = dataclasses.replace(xmin, pressure_pa=1e300, temperature_k=1e-300)
    bad = dataclasses.replace(case, boundaries=(hot,) + case.boundaries[1:])
    with pytest.raises(CaseError) as info:
        make_plan(bad)
    _one_line(info.value)
    assert info.value.key == "boundaries.xmin.pressure"
    tiny = dataclasses.replace(case, resolution=dataclasses.replace(case.resolution,
                                                                     time_step_s=5e-324))
    with pytest.raises(CaseError) as info:
        make_plan(tiny)
    _one_line(info.value)


def test_byte_order_mark_is_accepted(tmp_path):
    from rarefy.case import load_case

    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + slit_case().encode())
    assert load_case(path).gas.species == "Ar"


# ------------------------------------------------------------------------------- data only

@pytest.mark.parametrize("payload", INJECTIONS[:4])
def test_case_files_are_data_only(payload, capfd):
    text = slit_case().replace('pressure = "1 Pa"', f"pressure = {json.dumps(payload)}", 1)
    with pytest.raises(CaseError) as info:
        parse_case(text, PATH)
    assert info.value.key == "boundaries.xmin.pressure"
    assert "not a valid pressure value" in info.value.message
    out, err = capfd.readouterr()
    assert "x" not in out.split() and out == "" and err == ""


def test_odd_keys_stay_on_one_line():
    text = slit_case() + '\n[run]\n"seed\\nrm" = 1\n'
    with pytest.raises(CaseError) as info:
        parse_case(text, PATH)
    _one_line(info.value)
    assert "seed\\nrm" in str(info.value)


# ------------------------------------------------------------------------------------- CLI

@settings(max_examples=30, **FUZZ)
@given(st.one_of(mutated_docs().map(dumps), broken_texts(), extreme_docs().map(dumps)))
def test_cli_check(tmp_path_factory, text):
    from rarefy.cli import cli

    path = tmp_path_factory.mktemp("fuzz") / "case.toml"
    path.write_text(text, encoding="utf-8")
    result = CliRunner().invoke(cli, ["check", str(path)])
    assert result.exit_code in (0, 2), (result.exit_code, result.output, result.exception)
    assert "Traceback" not in result.output
    if result.exit_code == 2:
        lines = [ln for ln in result.output.splitlines() if ln.strip()]
        assert len(lines) == 1 and lines[0].startswith("error: ") and str(path) in lines[0], \
            result.output
