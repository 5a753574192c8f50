"""Fuzzing plan files referenced by a scenario (``[[room_file]]``): GeoJSON and DXF.

Plan files come from other programs, so anything may be in them. Through the whole
loader route (:func:`fringe.io.scenario.load_site` of a scenario naming the file) the only
outcomes allowed are a valid Site or one :class:`~fringe.model.errors.ScenarioError` naming a
file. Inputs: mutants of a valid GeoJSON FeatureCollection (random values, deletions,
extreme numbers), random JSON, mutated lines of a valid DXF drawing written by ezdxf,
and random bytes.
"""

from __future__ import annotations

import copy
import json
import math

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fringe.io.scenario import load_site
from tests.conftest import SMALL_SCENARIO_TOML
from tests.io.test_fuzz_scenario import EXTREME_NUMBERS, parse_or_clear_error

SCENARIO = SMALL_SCENARIO_TOML + """
[[floor]]
name = "ground"
elevation_m = 0.0

[[room_file]]
path = "{name}"
format = "{fmt}"
floor = "ground"
"""

GEOJSON = {"type": "FeatureCollection", "features": [
    {"type": "Feature", "properties": {"name": "store", "floor": "ground", "access": "open",
                                       "limit_mT": 1.0},
     "geometry": {"type": "Polygon", "coordinates": [
         [[5, 5], [8, 5], [8, 8], [5, 8], [5, 5]],
         [[6, 6], [7, 6], [7, 7], [6, 7], [6, 6]]]}},
    {"type": "Feature", "properties": {"name": "hall"},
     "geometry": {"type": "Polygon", "coordinates": [[[0, 0], [4, 0], [4, 4], [0, 0]]]}},
]}

json_scalars = st.one_of(st.none(), st.booleans(), st.integers(-(10**30), 10**30),
                         st.floats(allow_nan=True, allow_infinity=True),
                         st.sampled_from(EXTREME_NUMBERS), st.text(max_size=10),
                         st.sampled_from(["Feature", "FeatureCollection", "Polygon",
                                          "MultiPolygon", "ground", "controlled", "open"]))
json_values = st.recursive(json_scalars, lambda c: st.lists(c, max_size=5)
                           | st.dictionaries(st.text(max_size=8) | st.sampled_from(
                               ["type", "features", "geometry", "coordinates", "properties",
                                "name", "floor", "access", "limit_mT"]), c, max_size=4),
                           max_leaves=15)


def _nodes(obj, path=()):
    yield path
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _nodes(v, path + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _nodes(v, path + (i,))


@st.composite
def geojson_mutants(draw):
    data = copy.deepcopy(GEOJSON)
    for _ in range(draw(st.integers(1, 3))):
        paths = [p for p in _nodes(data) if p]
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = data
        for p in path[:-1]:
            parent = parent[p]
        op = draw(st.sampled_from(["replace", "delete", "extreme", "duplicate"]))
        if op == "replace":
            parent[path[-1]] = draw(json_values)
        elif op == "delete":
            del parent[path[-1]]
        elif op == "extreme":
            parent[path[-1]] = draw(st.sampled_from(EXTREME_NUMBERS))
        elif isinstance(parent, list):
            parent.append(copy.deepcopy(parent[path[-1]]))
    return data


def _dumps(data) -> str:
    # json.dumps writes NaN/Infinity (accepted by Python's json.loads); ints of any size
    return json.dumps(data, allow_nan=True)


FUZZ = settings(deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                      HealthCheck.function_scoped_fixture])


@pytest.fixture(scope="module")
def plan_dir(tmp_path_factory):
    d = tmp_path_factory.mktemp("planfuzz")
    (d / "geo.toml").write_text(SCENARIO.format(name="rooms.geojson", fmt="geojson"), "utf-8")
    (d / "dxf.toml").write_text(SCENARIO.format(name="rooms.dxf", fmt="dxf"), "utf-8")
    return d


def test_geojson_base_loads(plan_dir):
    (plan_dir / "rooms.geojson").write_text(_dumps(GEOJSON), "utf-8")
    rooms = load_site(plan_dir / "geo.toml").rooms
    assert [r.name for r in rooms] == ["store", "hall"]
    assert math.isclose(rooms[0].outline.area, 9.0 - 1.0)  # hole kept


@settings(FUZZ, max_examples=150)
@given(data=st.one_of(geojson_mutants(), json_values))
def test_geojson_files_load_or_fail_clearly(data, plan_dir):
    (plan_dir / "rooms.geojson").write_text(_dumps(data), "utf-8")
    parse_or_clear_error(load_site, plan_dir / "geo.toml", file=str(plan_dir / "geo.toml"))


def _dxf_text() -> list[str]:
    import io

    import ezdxf

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 6  # metres
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (4, 0), (4, 3), (0, 3)], close=True, dxfattribs={"layer": "A"})
    msp.add_lwpolyline([(5, 0), (7, 0), (7, 2)], close=True, dxfattribs={"layer": "B"})
    msp.add_text("store", dxfattribs={"insert": (1, 1), "layer": "A"})
    buf = io.StringIO()
    doc.write(buf)
    return buf.getvalue().splitlines()


DXF_LINES = _dxf_text()


def test_dxf_base_loads(plan_dir):
    (plan_dir / "rooms.dxf").write_text("\n".join(DXF_LINES) + "\n", "utf-8")
    rooms = load_site(plan_dir / "dxf.toml").rooms
    assert len(rooms) == 2 and all(r.outline.area > 0 for r in rooms)


@settings(FUZZ, max_examples=60)
@given(edits=st.lists(st.tuples(st.integers(0, len(DXF_LINES) - 1),
                                st.one_of(st.text(max_size=12), st.sampled_from(
                                    ["0", "10", "20", "70", "1e308", "nan", "-1", "",
                                     "LWPOLYLINE", "EOF", "SECTION", "ENDSEC", "999999999999"]))),
                      min_size=1, max_size=4))
def test_mutated_dxf_loads_or_fails_clearly(edits, plan_dir):
    lines = list(DXF_LINES)
    for i, text in edits:
        lines[i] = text.replace("\n", " ").replace("\r", " ")
    (plan_dir / "rooms.dxf").write_text("\n".join(lines) + "\n", "utf-8")
    parse_or_clear_error(load_site, plan_dir / "dxf.toml", file=str(plan_dir / "dxf.toml"))


@settings(FUZZ, max_examples=40)
@given(blob=st.binary(max_size=300), fmt=st.sampled_from(["geojson", "dxf"]))
def test_random_bytes_plan_files_fail_clearly(blob, fmt, plan_dir):
    (plan_dir / f"rooms.{fmt}").write_bytes(blob)
    name = "geo.toml" if fmt == "geojson" else "dxf.toml"
    parse_or_clear_error(load_site, plan_dir / name, file=str(plan_dir / name))
