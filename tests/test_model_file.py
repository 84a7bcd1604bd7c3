"""Model files: reader, writer and the rules of model format 1.

The rules come from the format contract, docs/model-format.md (a copy of the
shared spec). Physical reference values are cited beside each check.
Demo data here is fictional.
"""

from __future__ import annotations

import copy
import math
import re
from pathlib import Path

import pytest
import tomli_w

from bridgecalc import results
from bridgecalc.model import outline, rules
from bridgecalc.readers import modelfile
from bridgecalc.errors import ModelError
from bridgecalc.model import (AirLayer, air_layer_material, Environment, Flanking, Layer, Material, Model,
                              Probe, Region, Surface)

DOCS = Path(__file__).resolve().parent.parent / "docs" / "model-format.md"

BASE = {
    "format": 1,
    "name": "Test wall, fictional block",
    "length_unit": "mm",
    "materials": {
        "concrete": {"conductivity": 2.3},
        "insulation": {"conductivity": 0.035, "source": "fictional declared value"},
        "cavity": {"air_layer": {"thickness": 25, "direction": "horizontal"}},
    },
    "regions": [
        {"material": "concrete", "rectangle": [0, 0, 200, 1000]},
        {"material": "insulation", "polygon": [[200, 0], [360, 0], [360, 1000], [200, 1000]]},
    ],
    "environments": [
        {"name": "inside", "temperature": 20.0, "kind": "interior"},
        {"name": "outside", "temperature": 0.0, "kind": "exterior"},
    ],
    "surfaces": [
        {"environment": "inside", "resistance": 0.13, "path": [[0, 0], [0, 1000]]},
        {"environment": "outside", "resistance": 0.04, "path": [[360, 0], [360, 1000]]},
    ],
    "flanking": [
        {"name": "wall", "u_value": 0.21, "length": 1000},
        {"name": "wall built up", "layers": [{"material": "concrete", "thickness": 200}],
         "length": 1000},
    ],
    "probes": [{"name": "A", "at": [0, 500]}],
}


def base():
    return copy.deepcopy(BASE)


def text_of(data) -> str:
    return tomli_w.dumps(data)


def test_base_model_is_valid():
    m = modelfile.loads(text_of(base()), "detail.toml")
    assert m.origin == "detail.toml"
    assert [r.shape for r in m.regions] == ["rectangle", "polygon"]
    assert m.materials["insulation"].source == "fictional declared value"
    assert m.surfaces[0].resistance_for_surface_temperature == 0.13


# ---------------------------------------------------------------------------
# One case per rule: (id, change to the base data, texts the message must hold)
# ---------------------------------------------------------------------------

def setter(*path_and_value):
    """A change that sets data[path...] = value (value None deletes the key)."""
    *path, value = path_and_value

    def change(data):
        node = data
        for key in path[:-1]:
            node = node[key]
        if value is None:
            del node[path[-1]]
        else:
            node[path[-1]] = value
        return data
    return change


def appender(table, item):
    def change(data):
        data.setdefault(table, []).append(item)
        return data
    return change


NAN, INF = float("nan"), float("inf")

CASES = [
    # format and units
    ("format-unknown", setter("format", 2), ["format", "unknown format 2"]),
    ("format-missing", setter("format", None), ["format", "missing"]),
    ("format-string", setter("format", "1"), ["format", "string '1'"]),
    ("length-unit-missing", setter("length_unit", None), ["length_unit", "missing"]),
    ("length-unit-unknown", setter("length_unit", "cm"), ["length_unit", "'cm'"]),
    # unknown keys, at every level
    ("unknown-top-level", setter("materails", {"x": 1}), ["materails", "unknown key",
                                                        "did you mean 'materials'"]),
    ("unknown-material-key", setter("materials", "concrete", "lambda", 2.3),
     ["materials.concrete.lambda", "unknown key"]),
    ("unknown-air-layer-key", setter("materials", "cavity", "air_layer", "emissivity", 0.9),
     ["materials.cavity.air_layer.emissivity", "did you mean 'emissivities'"]),
    ("unknown-region-key", setter("regions", 1, "heatsource", 5.0),
     ["regions[1].heatsource", "did you mean 'heat_source'"]),
    ("unknown-environment-key", setter("environments", 0, "temp", 20),
     ["environments[0].temp", "unknown key"]),
    ("unknown-surface-key", setter("surfaces", 1, "resistence", 0.04),
     ["surfaces[1].resistence", "did you mean 'resistance'"]),
    ("unknown-flanking-key", setter("flanking", 0, "uvalue", 0.2),
     ["flanking[0].uvalue", "unknown key"]),
    ("unknown-layer-key", setter("flanking", 1, "layers", 0, "thick", 200),
     ["flanking[1].layers[0].thick", "unknown key"]),
    ("unknown-probe-key", setter("probes", 0, "position", [0, 0]),
     ["probes[0].position", "unknown key"]),
    # missing required keys
    ("region-material-missing", setter("regions", 0, "material", None),
     ["regions[0].material", "missing"]),
    ("material-conductivity-missing", setter("materials", "concrete", "conductivity", None),
     ["materials.concrete.conductivity", "missing"]),
    # wrong types
    ("conductivity-string", setter("materials", "concrete", "conductivity", "2.3"),
     ["materials.concrete.conductivity", "expected a number", "string '2.3'"]),
    ("temperature-boolean", setter("environments", 0, "temperature", True),
     ["environments[0].temperature", "boolean"]),
    ("rectangle-strings", setter("regions", 0, "rectangle", ["0", 0, 200, 1000]),
     ["regions[0].rectangle[0]", "expected a number", "string '0'"]),
    ("rectangle-three-numbers", setter("regions", 0, "rectangle", [0, 0, 200]),
     ["regions[0].rectangle", "four numbers"]),
    ("polygon-point-wrong", setter("regions", 1, "polygon", [[200, 0], [360], [360, 1000]]),
     ["regions[1].polygon[1]", "point"]),
    ("kind-not-string", setter("environments", 1, "kind", 3),
     ["environments[1].kind", "expected a string"]),
    ("probe-name-number", setter("probes", 0, "name", 7), ["probes[0].name", "string"]),
    ("name-not-string", setter("name", 12), ["name", "expected a string"]),
    # integers beyond the range of a float (TOML integers are unbounded in Python)
    ("conductivity-huge-integer", setter("materials", "concrete", "conductivity", 10 ** 400),
     ["materials.concrete.conductivity", "integer too large"]),
    ("rectangle-huge-integer", setter("regions", 0, "rectangle", [0, 0, 200, 10 ** 400]),
     ["regions[0].rectangle[3]", "integer too large"]),
    ("heat-source-huge-integer", setter("regions", 0, "heat_source", -10 ** 400),
     ["regions[0].heat_source", "integer too large"]),
    ("temperature-huge-integer", setter("environments", 1, "temperature", 10 ** 400),
     ["environments[1].temperature", "integer too large"]),
    ("resistance-huge-integer", setter("surfaces", 0, "resistance", 10 ** 400),
     ["surfaces[0].resistance", "integer too large"]),
    ("flanking-length-huge-integer", setter("flanking", 0, "length", 10 ** 400),
     ["flanking[0].length", "integer too large"]),
    ("surface-resistances-huge-integer",
     setter("flanking", 1, "surface_resistances", [0.13, 10 ** 400]),
     ["flanking[1].surface_resistances[1]", "integer too large"]),
    ("probe-huge-integer", setter("probes", 0, "at", [0, 10 ** 400]),
     ["probes[0].at[1]", "integer too large"]),
    # materials
    ("undefined-material", setter("regions", 1, "material", "insulaton"),
     ["regions[1].material", "material 'insulaton' is not defined",
      "(defined: concrete, insulation, cavity)"]),
    ("conductivity-nan", setter("materials", "concrete", "conductivity", NAN),
     ["materials.concrete.conductivity", "finite"]),
    ("conductivity-zero", setter("materials", "insulation", "conductivity", 0.0),
     ["materials.insulation.conductivity", "greater than 0"]),
    ("conductivity-negative", setter("materials", "insulation", "conductivity", -0.035),
     ["materials.insulation.conductivity", "greater than 0"]),
    ("air-layer-and-conductivity", setter("materials", "cavity", "conductivity", 0.1),
     ["materials.cavity", "conductivity or air_layer, not both"]),
    ("air-layer-direction", setter("materials", "cavity", "air_layer", "direction", "sideways"),
     ["materials.cavity.air_layer.direction", "'sideways'"]),
    ("air-layer-direction-missing", setter("materials", "cavity", "air_layer", "direction", None),
     ["materials.cavity.air_layer.direction", "missing"]),
    ("air-layer-thickness-zero", setter("materials", "cavity", "air_layer", "thickness", 0),
     ["materials.cavity.air_layer.thickness", "greater than 0"]),
    ("air-layer-emissivity", setter("materials", "cavity", "air_layer", "emissivities", [1.2, 0.9]),
     ["materials.cavity.air_layer.emissivities[0]", "(0, 1]"]),
    # regions
    ("rectangle-and-polygon", setter("regions", 0, "polygon", [[0, 0], [1, 0], [1, 1]]),
     ["regions[0]", "rectangle or polygon, not both"]),
    ("neither-rectangle-nor-polygon", setter("regions", 0, "rectangle", None),
     ["regions[0]", "rectangle", "polygon"]),
    ("rectangle-x1-not-greater", setter("regions", 0, "rectangle", [0, 0, 0, 1000]),
     ["regions[0].rectangle", "x1 (0) must be greater than x0 (0)"]),
    ("rectangle-y1-not-greater", setter("regions", 0, "rectangle", [0, 1000, 200, 0]),
     ["regions[0].rectangle", "y1 (0) must be greater than y0 (1000)"]),
    ("polygon-two-vertices", setter("regions", 1, "polygon", [[200, 0], [360, 0]]),
     ["regions[1].polygon", "at least 3 points"]),
    ("polygon-two-distinct", setter("regions", 1, "polygon", [[200, 0], [360, 0], [360, 0]]),
     ["regions[1].polygon", "same point"]),
    ("polygon-closed-explicitly",
     setter("regions", 1, "polygon", [[200, 0], [360, 0], [360, 1000], [200, 0]]),
     ["regions[1].polygon", "repeats the first"]),
    ("polygon-zero-area", setter("regions", 1, "polygon", [[200, 0], [300, 0], [360, 0]]),
     ["regions[1].polygon", "zero area"]),
    ("polygon-self-intersecting",
     setter("regions", 1, "polygon", [[200, 0], [360, 1000], [360, 0], [200, 1000]]),
     ["regions[1].polygon", "intersects itself"]),
    # within the tolerance of 1e-6 of the largest dimension (1000 mm): 0.001 mm,
    # where the mesher merges points (it crashed or never finished on these)
    ("polygon-vertices-almost-repeated",
     setter("regions", 1, "polygon", [[200, 0], [360, 0], [360, 1000], [200.00001, 1000],
                                      [200, 1000]]),
     ["regions[1].polygon", "within 1e-05 mm of itself", "tolerance of 0.001 mm"]),
    ("polygon-vertex-almost-on-an-edge",
     setter("regions", 1, "polygon", [[200, 0], [360, 0], [360, 1000], [280, 1000],
                                      [280, 500], [279.9999999, 1000], [200, 1000]]),
     ["regions[1].polygon", "of itself near (280, 1000)"]),
    ("polygon-sliver-thinner-than-tolerance",
     setter("regions", 1, "polygon", [[50, 400], [150, 400], [100, 400.0001]]),
     ["regions[1].polygon", "within 0.0001 mm of itself"]),
    ("rectangle-thinner-than-tolerance",
     setter("regions", 1, {"material": "insulation", "rectangle": [50, 0, 50.0000001, 1000]}),
     ["regions[1].rectangle", "x1 - x0 = 1e-07 mm", "tolerance of 0.001 mm"]),
    ("polygon-infinite", setter("regions", 1, "polygon", [[200, 0], [INF, 0], [360, 1000]]),
     ["regions[1].polygon[1][0]", "finite"]),
    # finite but absurd coordinates: squares overflow in the geometry checks
    ("polygon-coordinate-1e200",
     setter("regions", 1, "polygon", [[200, 0], [1e200, 0], [360, 1000]]),
     ["regions[1].polygon[1][0]", "coordinate 1e+200 lies beyond ±1e+09"]),
    ("rectangle-coordinate-beyond-limit",
     setter("regions", 1, {"material": "insulation", "rectangle": [50, 0, 2e9, 1000]}),
     ["regions[1].rectangle[2]", "beyond ±1e+09"]),
    ("surface-path-coordinate-beyond-limit",
     setter("surfaces", 1, "path", [[360, 0], [360, -1e300]]),
     ["surfaces[1].path[1][1]", "beyond ±1e+09"]),
    ("probe-beyond-limit", setter("probes", 0, "at", [0, 1e10]),
     ["probes[0].at[1]", "beyond ±1e+09"]),
    ("heat-source-string", setter("regions", 0, "heat_source", "5"),
     ["regions[0].heat_source", "expected a number"]),
    ("no-regions", setter("regions", []), ["regions", "no regions"]),
    # environments
    ("duplicate-environment", setter("environments", 1, "name", "inside"),
     ["environments[1].name", "'inside' is already used by environments[0]"]),
    ("environment-kind-unknown", setter("environments", 1, "kind", "outdoor"),
     ["environments[1].kind", "'outdoor'"]),
    ("temperature-infinite", setter("environments", 0, "temperature", INF),
     ["environments[0].temperature", "finite"]),
    # 0 K = −273.15 °C (definition of the Celsius scale, ISO 80000-5, from memory);
    # −300 °C ran and gave a report
    ("temperature-below-absolute-zero", setter("environments", 1, "temperature", -300),
     ["environments[1].temperature", "-300 °C is below absolute zero (-273.15 °C)"]),
    ("temperature-huge-negative", setter("environments", 1, "temperature", -1e308),
     ["environments[1].temperature", "below absolute zero"]),
    ("no-interior", setter("environments", 0, "kind", "exterior"),
     ["environments", "no interior environment"]),
    # addition A: no exterior environment is needed when two are at different
    # temperatures (a wall between two rooms); one temperature is never enough
    ("one-temperature", setter("environments", 1, "temperature", 20.0),
     ["environments[1].temperature", "every environment is at 20 °C"]),
    ("no-exterior-one-temperature",
     lambda d: setter("environments", 1, "kind", "unheated")(
         setter("environments", 1, "temperature", 20.0)(d)),
     ["environments", "no exterior environment, and no two environments at different"]),
    # surfaces
    ("no-surfaces", setter("surfaces", []), ["surfaces", "no surfaces"]),
    ("surface-undefined-environment", setter("surfaces", 1, "environment", "outdoors"),
     ["surfaces[1].environment", "'outdoors' is not defined"]),
    ("resistance-negative", setter("surfaces", 0, "resistance", -0.13),
     ["surfaces[0].resistance", "0 or more"]),
    ("resistance-surface-temperature-negative",
     setter("surfaces", 0, "resistance_surface_temperature", -0.25),
     ["surfaces[0].resistance_surface_temperature", "0 or more"]),
    ("resistance-nan", setter("surfaces", 1, "resistance", NAN),
     ["surfaces[1].resistance", "finite"]),
    ("path-one-point", setter("surfaces", 0, "path", [[0, 0]]),
     ["surfaces[0].path", "at least 2 points"]),
    ("path-on-no-outline-edge", setter("surfaces", 0, "path", [[100, -50], [100, 1050]]),
     ["surfaces[0].path", "lies on no outline edge"]),
    ("path-off-the-solid", setter("surfaces", 0, "path", [[-5, 0], [-5, 1000]]),
     ["surfaces[0].path", "lies on no outline edge"]),
    ("two-surfaces-one-edge",
     appender("surfaces", {"environment": "outside", "resistance": 0.04,
                           "path": [[0, 500], [0, 1000]]}),
     ["surfaces[2].path", "surfaces[0]", "'inside'"]),
    # solid in pieces
    ("piece-without-surface",
     appender("regions", {"material": "concrete", "rectangle": [1000, 0, 1200, 100]}),
     ["regions[2].rectangle", "falls apart", "touches no surface"]),
    # flanking
    ("flanking-both", setter("flanking", 0, "layers", [{"material": "concrete", "thickness": 1}]),
     ["flanking[0]", "u_value or layers, not both"]),
    ("flanking-neither", setter("flanking", 0, "u_value", None),
     ["flanking[0]", "u_value", "layers"]),
    ("flanking-u-negative", setter("flanking", 0, "u_value", -0.2),
     ["flanking[0].u_value", "0 or more"]),
    ("flanking-length-negative", setter("flanking", 0, "length", -1000),
     ["flanking[0].length", "0 or more"]),
    ("flanking-length-missing", setter("flanking", 0, "length", None),
     ["flanking[0].length", "missing"]),
    ("layer-thickness-zero", setter("flanking", 1, "layers", 0, "thickness", 0),
     ["flanking[1].layers[0].thickness", "greater than 0"]),
    ("layer-undefined-material", setter("flanking", 1, "layers", 0, "material", "steel"),
     ["flanking[1].layers[0].material", "'steel' is not defined"]),
    ("layers-empty", setter("flanking", 1, "layers", []),
     ["flanking[1].layers", "at least one layer"]),
    ("surface-resistances-one-number", setter("flanking", 1, "surface_resistances", [0.13]),
     ["flanking[1].surface_resistances", "two numbers"]),
    ("surface-resistances-negative", setter("flanking", 1, "surface_resistances", [0.13, -0.04]),
     ["flanking[1].surface_resistances[1]", "0 or more"]),
    ("surface-resistances-with-u-value", setter("flanking", 0, "surface_resistances", [0.13, 0.04]),
     ["flanking[0].surface_resistances", "only used with layers"]),
    # probes
    ("probe-outside", setter("probes", 0, "at", [-10, 500]),
     ["probes[0].at", "outside the solid", "10 mm"]),
    ("probe-duplicate-name", appender("probes", {"name": "A", "at": [100, 100]}),
     ["probes[1].name", "already used by probes[0]"]),
]


@pytest.mark.parametrize("change, expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_each_rule_has_a_message_naming_file_table_and_key(change, expected):
    text = text_of(change(base()))
    with pytest.raises(ModelError) as info:
        modelfile.loads(text, "detail.toml")
    message = str(info.value)
    assert message.startswith("detail.toml: "), message
    for part in expected:
        assert part in message, f"{part!r} not in {message!r}"
    assert "Traceback" not in message


@pytest.mark.parametrize("text, expected", [
    ("", "empty"),
    ("# nothing but a comment\n\n", "empty"),
    ("format = 1\nlength_unit = mm\n", "not a valid TOML file"),
    ("format = 1\n[[regions]\n", "not a valid TOML file"),
    # Python refuses to convert integers of more than 4300 digits from text
    ("format = 1" + "0" * 5000 + "\n", "too many digits"),
], ids=["empty", "comment-only", "bare-word", "broken-header", "integer-of-5001-digits"])
def test_text_that_is_not_a_model(text, expected):
    with pytest.raises(ModelError, match=re.escape("detail.toml: ") + ".*" + expected):
        modelfile.loads(text, "detail.toml")


def test_read_missing_file_names_it(tmp_path):
    path = tmp_path / "no-such.toml"
    with pytest.raises(ModelError, match=re.escape(str(path)) + ": no such model file"):
        modelfile.read(path)


def test_read_folder_and_binary_file(tmp_path):
    with pytest.raises(ModelError, match="is a folder"):
        modelfile.read(tmp_path)
    binary = tmp_path / "detail.toml"
    binary.write_bytes(b"format = 1\n\xff\xfe\x00")
    with pytest.raises(ModelError, match=re.escape(str(binary)) + ": not a text file"):
        modelfile.read(binary)


def test_read_a_file_starting_with_a_utf8_byte_order_mark(tmp_path):
    # some Windows editors write one; it was refused as "not a valid TOML file"
    path = tmp_path / "detail.toml"
    path.write_bytes(b"\xef\xbb\xbf" + text_of(base()).encode("utf-8"))
    assert modelfile.read(path) == modelfile.loads(text_of(base()))


def test_read_names_the_file_in_rule_messages(tmp_path):
    data = base()
    data["regions"][1]["material"] = "concrte"
    path = tmp_path / "detail.toml"
    path.write_text(text_of(data), encoding="utf-8")
    with pytest.raises(ModelError) as info:
        modelfile.read(path)
    assert str(info.value) == (
        f"{path}: regions[1].material: material 'concrte' is not defined "
        "(defined: concrete, insulation, cavity); did you mean 'concrete'?")


# ---------------------------------------------------------------------------
# In-memory models (geometry scripts) go through the same rules
# ---------------------------------------------------------------------------

def memory_model(**changes) -> Model:
    fields = dict(
        length_unit="mm",
        materials={"concrete": Material("concrete", 2.3),
                   "insulation": Material("insulation", 0.035)},
        regions=[Region.rectangle("concrete", 0, 0, 200, 1000),
                 Region.rectangle("insulation", 200, 0, 360, 1000)],
        environments=[Environment("inside", 20.0, "interior"),
                      Environment("outside", -5.0, "exterior")],
        surfaces=[Surface("inside", 0.13, ((0, 0), (0, 1000)), 0.25),
                  Surface("outside", 0.04, ((360, 0), (360, 1000)))],
        flanking=[Flanking("wall", 1000, u_value=0.2)],
        probes=[Probe("corner", (360, 1000))],
        name="Script wall",
        origin="demo_script.py")
    fields.update(changes)
    return Model(**fields)


def test_in_memory_model_is_valid_and_validate_is_repeatable():
    m = memory_model()
    before = copy.deepcopy(m)
    rules.validate(m)
    rules.validate(m)
    assert m == before


@pytest.mark.parametrize("changes, expected", [
    (dict(materials={"concrete": Material("concrete", "2.3"),
                     "insulation": Material("insulation", 0.035)}),
     "demo_script.py: materials.concrete.conductivity: expected a number"),
    (dict(materials={"concrete": Material("concrete", 2.3)}),
     "demo_script.py: regions[1].material: material 'insulation' is not defined"),
    (dict(regions=[Region.rectangle("concrete", 0, 0, 200, 1000),
                   Region.rectangle("insulation", 360, 0, 200, 1000)]),
     "demo_script.py: regions[1].rectangle: x1 (200) must be greater than x0 (360)"),
    (dict(regions=[Region("concrete", ((0, 0), (200, 0), (200, 1000), (0, 1000)),
                          shape="rectangle"),
                   Region("insulation", ((200, 0), (360, 0), (200, 1000), (360, 1000)),
                          shape="rectangle")]),
     "demo_script.py: regions[1].rectangle: corners are not those"),
    (dict(probes=[Probe("P", (400, 0))]), "demo_script.py: probes[0].at: point (400, 0)"),
    (dict(length_unit="inch"), "demo_script.py: length_unit: unknown unit 'inch'"),
    (dict(format=2), "demo_script.py: format: unknown format 2"),
    (dict(flanking=[Flanking("wall", 1000, u_value=True)]),
     "demo_script.py: flanking[0].u_value: expected a number, got the boolean true"),
    (dict(materials={"concrete": Material("concrete", 2.3),
                     "insulation": Material("insulation", 0.035,
                                            air_layer=AirLayer(25, "horizontal"))}),
     "demo_script.py: materials.insulation.conductivity: 0.035 does not match"),
    (dict(materials={"concrete": Material("concrete", 2.3),
                     "insulation": Material("mineral wool", 0.035)}),
     "demo_script.py: materials.insulation: is stored under the name"),
    # these crashed validate() with a TypeError
    (dict(environments=None), "demo_script.py: environments: expected a list of Environment, "
                              "got nothing"),
    (dict(flanking=None), "demo_script.py: flanking: expected a list of Flanking, got nothing"),
    (dict(probes=None), "demo_script.py: probes: expected a list of Probe, got nothing"),
    (dict(flanking=Flanking("wall", 1000, u_value=0.2)),
     "demo_script.py: flanking: expected a list of Flanking, got Flanking"),
    (dict(length_unit=["mm"]), "demo_script.py: length_unit: expected a string"),
], ids=["string-conductivity", "undefined-material", "flipped-rectangle",
        "rectangle-corners", "probe-outside", "unit", "format", "boolean-u",
        "air-layer-mismatch", "material-name-mismatch", "environments-none", "flanking-none",
        "probes-none", "flanking-not-a-list", "unit-a-list"])
def test_in_memory_rules(changes, expected):
    with pytest.raises(ModelError) as info:
        rules.validate(memory_model(**changes))
    assert str(info.value).startswith(expected), str(info.value)


def test_dumps_refuses_an_invalid_model_and_write_leaves_no_file(tmp_path):
    bad = memory_model(surfaces=[])
    target = tmp_path / "out.toml"
    with pytest.raises(ModelError, match="surfaces: the model has no surfaces"):
        modelfile.write(bad, target)
    assert not target.exists()


# ---------------------------------------------------------------------------
# Outline: which surface claims which edge
# ---------------------------------------------------------------------------

def test_a_path_over_part_of_a_side_claims_just_that_part():
    data = base()
    data["surfaces"][0]["path"] = [[0, 0], [0, 400]]
    data["surfaces"].append({"environment": "outside", "resistance": 0.04,
                             "path": [[0, 400], [0, 1000]]})
    m = modelfile.loads(text_of(data), "detail.toml")
    edges = outline.outline_edges(m)
    claimed = {i: sum(math.dist(e.start, e.end) for e in edges if e.surface == i)
               for i in range(3)}
    # lengths follow from the coordinates in the file: 400 mm, 1000 mm, 600 mm
    assert claimed == pytest.approx({0: 400.0, 1: 1000.0, 2: 600.0})
    # outline of a 360 mm x 1000 mm block: 2 (360 + 1000) = 2720 mm in all
    assert sum(math.dist(e.start, e.end) for e in edges) == pytest.approx(2720.0)


def test_path_crossing_the_solid_counts_only_outline_edges():
    data = base()
    # runs down the inside face, then straight through the block along y = 0 ... 1000
    data["surfaces"][0]["path"] = [[0, 1000], [0, 0], [200, 500], [360, 500]]
    m = modelfile.loads(text_of(data), "detail.toml")
    on_inside = [e for e in outline.outline_edges(m) if e.surface == 0]
    assert sum(math.dist(e.start, e.end) for e in on_inside) == pytest.approx(1000.0)


def test_hole_edges_are_outline_edges():
    # a square frame of four bars around a 200 mm x 200 mm hole (a fictional duct)
    data = base()
    data["regions"] = [
        {"material": "concrete", "rectangle": [0, 0, 400, 100]},
        {"material": "concrete", "rectangle": [0, 300, 400, 400]},
        {"material": "concrete", "rectangle": [0, 100, 100, 300]},
        {"material": "concrete", "rectangle": [300, 100, 400, 300]},
    ]
    data["surfaces"] = [
        {"environment": "inside", "resistance": 0.13,
         "path": [[100, 100], [300, 100], [300, 300], [100, 300], [100, 100]]},
        {"environment": "outside", "resistance": 0.04,
         "path": [[0, 0], [400, 0], [400, 400], [0, 400], [0, 0]]},
    ]
    data["probes"] = [{"name": "hole corner", "at": [100, 100]}]
    m = modelfile.loads(text_of(data), "detail.toml")
    edges = outline.outline_edges(m)
    assert all(e.surface is not None for e in edges)
    assert sum(math.dist(e.start, e.end) for e in edges if e.surface == 0) == pytest.approx(800)


def test_probe_on_the_outline_within_tolerance_is_inside():
    # tolerance is 1e-6 of the largest dimension (1000 mm): 0.001 mm
    data = base()
    data["probes"] = [{"name": "on edge", "at": [360, 1000]},
                      {"name": "a hair outside", "at": [360.0005, 500]}]
    modelfile.loads(text_of(data), "detail.toml")
    data["probes"] = [{"name": "just outside", "at": [360.01, 500]}]
    with pytest.raises(ModelError, match=r"probes\[0\]\.at"):
        modelfile.loads(text_of(data), "detail.toml")


def test_pieces_each_touched_by_a_surface_are_allowed():
    data = base()
    data["regions"].append({"material": "concrete", "rectangle": [1000, 0, 1200, 100]})
    data["surfaces"].append({"environment": "outside", "resistance": 0.04,
                             "path": [[1200, 0], [1200, 100]]})
    modelfile.loads(text_of(data), "detail.toml")


def test_no_interior_surface_reads_but_does_not_run():
    # format 1 does not forbid it, but there is no interior surface temperature
    import bridgecalc
    data = base()
    data["surfaces"][0]["environment"] = "outside"
    m = modelfile.loads(text_of(data), "detail.toml")
    expected = re.escape("detail.toml: surfaces: no surface faces an interior environment "
                         "('inside'), so there is no interior surface temperature")
    assert re.match(expected, rules.unfaced_sides(m)["interior"])
    with pytest.raises(ModelError, match=expected):
        bridgecalc.run(m)
    assert rules.unfaced_sides(modelfile.loads(text_of(base()), "detail.toml")) == {}


def test_no_exterior_surface_runs_with_a_warning_and_no_verdict():
    """The format's own example has no exterior surface: it runs, but no heat flows,
    so L2D = 0 and fRsi = 1 by construction (all the solid sits at θi); the run
    carries a warning and an fRsi criterion is not assessed, never passed."""
    import bridgecalc
    from bridgecalc.assessments import f_rsi_verdict
    data = base()
    data["surfaces"][1]["environment"] = "inside"
    result = bridgecalc.run(modelfile.loads(text_of(data), "detail.toml"), refinement=None)
    assert abs(result.coupling_coefficient) < 1e-9
    assert result.f_rsi == pytest.approx(1.0, abs=1e-9)
    assert len(result.warnings) == 1
    assert "no surface faces an exterior environment ('outside')" in result.warnings[0]
    assert result.to_dict()["warnings"] == result.warnings
    assert f_rsi_verdict(result.f_rsi, 0.75, result.warnings) == "not assessed"
    assert f_rsi_verdict(result.f_rsi, 0.75) == "passes"
    assert "warnings" not in bridgecalc.run(modelfile.loads(text_of(base()), "detail.toml"),
                                            refinement=None).to_dict()


@pytest.mark.parametrize("theta_i, theta_e, accepted", [
    (20.000000000001, 20.0, False),     # ran: L2D = −7.4 W/(m·K), fRsi = 1.97, exit 0
    (1e-300, 0.0, False),               # ran into a figure failing with a traceback
    (20.0, 19.9999, True),              # 1e-4 K: above the limit of 2e-5 K
    (-10.0, 20.0, True),                # interior colder: a difference all the same
])
def test_a_temperature_difference_lost_in_round_off_does_not_run(theta_i, theta_e, accepted):
    import bridgecalc
    from bridgecalc.results import design_temperatures
    data = base()
    data["environments"][0]["temperature"] = theta_i
    data["environments"][1]["temperature"] = theta_e
    m = modelfile.loads(text_of(data), "detail.toml")
    if accepted:
        rules.check_temperature_difference(m, *design_temperatures(m))
        return
    with pytest.raises(ModelError, match=r"detail\.toml: environments: interior .* too little"):
        rules.check_temperature_difference(m, *design_temperatures(m))
    with pytest.raises(ModelError, match="too little"):
        bridgecalc.run(m)


def test_regions_touching_at_a_single_point_are_separate_pieces():
    data = base()
    data["regions"].append({"material": "concrete", "rectangle": [360, 1000, 460, 1100]})
    with pytest.raises(ModelError, match=r"regions\[2\]\.rectangle: the solid falls apart "
                                         r"into 2 separate pieces"):
        modelfile.loads(text_of(data), "detail.toml")


def three_layers_with_gaps(gap):
    """Concrete | insulation | render, each layer `gap` mm from the one before;
    only the two outer faces carry surfaces."""
    data = base()
    data["regions"] = [
        {"material": "concrete", "rectangle": [0, 0, 200, 1000]},
        {"material": "insulation", "rectangle": [200 + gap, 0, 360, 1000]},
        {"material": "concrete", "rectangle": [360 + gap, 0, 380, 1000]},
    ]
    data["surfaces"][1]["path"] = [[380, 0], [380, 1000]]
    data["flanking"] = []
    data["probes"] = []
    return data


def test_regions_within_the_tolerance_of_each_other_are_one_piece():
    # tolerance 1e-6 x 1000 mm = 0.001 mm; the mesher's boolean tolerance is the
    # same, and it joins such regions: so does the reader
    m = modelfile.loads(text_of(three_layers_with_gaps(1e-7)), "detail.toml")
    assert len(outline.solid_pieces(m)) == 1
    edges = outline.outline_edges(m)
    # the outline of one 380 mm x 1000 mm block: 2 (380 + 1000) = 2760 mm
    assert sum(math.dist(e.start, e.end) for e in edges) == pytest.approx(2760.0)
    # a gap wider than the tolerance is a gap: the insulation is a piece of its own
    with pytest.raises(ModelError, match=r"regions\[1\]\.rectangle: the solid falls apart "
                                         r"into 3 separate pieces"):
        modelfile.loads(text_of(three_layers_with_gaps(0.01)), "detail.toml")


def test_regions_within_the_tolerance_give_the_one_dimensional_u_value():
    """The joined layers conduct as one wall: L2D = U·h with U = 1 / ΣR, the plane-
    layer formula of ISO 6946 (an analytic solution for this 1D case)."""
    import bridgecalc
    m = modelfile.loads(text_of(three_layers_with_gaps(1e-7)), "detail.toml")
    result = bridgecalc.run(m, refinement=None)
    resistance = 0.13 + 0.2 / 2.3 + 0.16 / 0.035 + 0.02 / 2.3 + 0.04   # m²·K/W
    height = 1.0                                                        # m
    assert result.coupling_coefficient == pytest.approx(height / resistance, rel=1e-6)


def test_a_corner_within_the_tolerance_of_an_edge_joins_it():
    # a block standing 1e-7 mm above the top of the wall, with no surface of its own
    data = base()
    data["regions"].append({"material": "insulation", "rectangle": [50, 1000.0000001, 150, 1100]})
    m = modelfile.loads(text_of(data), "detail.toml")
    assert len(outline.solid_pieces(m)) == 1


def test_a_path_in_a_gap_within_the_tolerance_lies_on_no_outline_edge():
    # the outside surface runs along a 1e-7 mm gap that the mesher closes
    data = base()
    data["regions"].append({"material": "concrete", "rectangle": [360.0000001, 0, 460, 1000]})
    with pytest.raises(ModelError, match=r"surfaces\[1\]\.path: lies on no outline edge"):
        modelfile.loads(text_of(data), "detail.toml")


# ---------------------------------------------------------------------------
# Round trips: read(write(m)) == m
# ---------------------------------------------------------------------------

def rich_model() -> Model:
    unit = "mm"
    cavity = air_layer_material("cavity 50", AirLayer(50, "upward", (0.9, 0.2)), unit,
                                  source="ISO 6946 Annex D")
    return Model(
        length_unit=unit,
        materials={"concrete": Material("concrete", 2.3, 'fictional "C30" mix, λ from catalogue'),
                   "cavity 50": cavity,
                   "eps": Material("eps", 0.1 + 0.2)},        # 0.30000000000000004 exactly
        regions=[Region.rectangle("concrete", 0, 0, 200, 1000, heat_source=12.5),
                 Region.polygon("eps", [(200, 0), (360, 0), (360, 1000), (200, 1000)]),
                 Region.polygon("cavity 50", [(0, 1000), (360, 1000), (360, 1050),
                                              (300, 1050.5), (250, 1050.25), (200, 1050.125),
                                              (150, 1050.0625), (100, 1050.03125),
                                              (0, 1050)])],
        environments=[Environment("inside", 20.0, "interior"),
                      Environment("outside", -7.5, "exterior"),
                      Environment("unheated", 5.0, "exterior")],
        surfaces=[Surface("inside", 0.13, ((0, 0), (0, 1050)), 0.25),
                  Surface("outside", 0.04, ((360, 0), (360, 1050))),
                  Surface("unheated", 0.0, ((0, 0), (360, 0)))],
        # three temperatures: each flanking element names its pair (addition A)
        flanking=[Flanking("wall", 1050, u_value=0.2, between=("inside", "outside")),
                  Flanking("floor", 360.0, layers=(Layer("concrete", 200), Layer("eps", 160)),
                           surface_resistances=(0.17, 0.04), between=("unheated", "inside")),
                  Flanking("roof", 0.0, layers=(Layer("cavity 50", 50),),
                           between=("inside", "outside"))],
        probes=[Probe("P1", (100, 500)), Probe("P2", (360, 1050))],
        name="Rich ünïcode model",
        origin="rich_script.py")


def rich_model_in_metres_unnamed() -> Model:
    m = rich_model()
    m.length_unit, m.name = "m", None
    # the same coordinates read as metres; the air layer is then 50 m thick and
    # its equivalent conductivity differs, so the material is rebuilt
    m.materials["cavity 50"] = air_layer_material(
        "cavity 50", m.materials["cavity 50"].air_layer, "m")
    return m


@pytest.mark.parametrize("make", [rich_model,
                                  lambda: modelfile.loads(text_of(BASE), "detail.toml"),
                                  rich_model_in_metres_unnamed],
                         ids=["rich", "base", "metres-unnamed"])
def test_write_then_read_gives_an_equal_model(tmp_path, make):
    m = make()
    path = tmp_path / "copy.toml"
    modelfile.write(m, path)
    back = modelfile.read(path)
    assert back == m
    assert back.origin == str(path)
    # writing again gives the same text
    assert modelfile.dumps(back) == path.read_text(encoding="utf-8")


def test_written_file_follows_the_format():
    text = modelfile.dumps(rich_model())
    assert "rectangle = [0, 0, 200, 1000]" in text
    assert 'polygon = [[200, 0], [360, 0], [360, 1000], [200, 1000]]' in text
    assert "heat_source = 12.5" in text and text.count("heat_source") == 1
    assert text.count("resistance_surface_temperature") == 1
    assert "conductivity = 0.30000000000000004" in text
    assert '[materials."cavity 50"]' in text
    assert "air_layer = { thickness = 50, direction = \"upward\", emissivities = [0.9, 0.2] }" in text
    # an air-layer material is written by its air layer, not its conductivity
    cavity_table = text.split('[materials."cavity 50"]')[1].split("[")[0]
    assert "conductivity" not in cavity_table
    assert "surface_resistances = [0.17, 0.04]" in text
    assert '{ material = "concrete", thickness = 200 },' in text
    assert 'layers = [{ material = "cavity 50", thickness = 50 }]' in text
    assert "name =" in modelfile.dumps(rich_model()) and "name =" not in modelfile.dumps(
        rich_model_in_metres_unnamed()).split("[materials")[0]


def test_docs_examples_read():
    text = DOCS.read_text(encoding="utf-8")
    blocks = re.findall(r"```toml\n(.*?)```", text, re.S)
    assert len(blocks) >= 2
    for block in blocks:
        if "[[junctions]]" in block:         # a project file (tests/test_schedule.py)
            continue
        m = modelfile.loads(block, "docs/model-format.md")
        assert modelfile.loads(modelfile.dumps(m)) == m


# ---------------------------------------------------------------------------
# Physics of the added air_layer key and of flanking U-values
# ---------------------------------------------------------------------------

# ISO 6946:2017 Table 8, thermal resistance of unventilated air layers with
# high-emissivity surfaces [m²·K/W], values from memory (printed to two
# decimals, so the tolerance is half a unit in the last place plus a margin).
#
# For thin layers with downward heat flow the table rests on ha = 0.025/d,
# the conduction limit, which ISO 6946 Annex D (from memory) applies in every
# direction: ha = max(0.12·d^-0.44, 0.025/d) downward.
ISO_6946_TABLE_8 = [
    (10, "horizontal", 0.15),
    (25, "horizontal", 0.18),
    (100, "horizontal", 0.18),
    (10, "upward", 0.15),
    (50, "upward", 0.16),
    (10, "downward", 0.15),
    (25, "downward", 0.19),
    (50, "downward", 0.21),
    (100, "downward", 0.22),
    (300, "downward", 0.23),
]


@pytest.mark.parametrize("thickness_mm, direction, table_resistance", ISO_6946_TABLE_8)
def test_air_layer_material_matches_iso_6946_table(thickness_mm, direction, table_resistance):
    data = base()
    data["materials"]["cavity"]["air_layer"] = {"thickness": thickness_mm, "direction": direction}
    m = modelfile.loads(text_of(data), "detail.toml")
    mat = m.materials["cavity"]
    assert mat.air_layer == AirLayer(float(thickness_mm), direction, (0.9, 0.9))
    resistance = thickness_mm * 1e-3 / mat.conductivity
    assert resistance == pytest.approx(table_resistance, abs=0.006)


def test_air_layer_thickness_follows_length_unit():
    data = base()
    data["length_unit"] = "m"
    for region in data["regions"]:
        key = "rectangle" if "rectangle" in region else "polygon"
        region[key] = (
            [c / 1000 for c in region[key]] if key == "rectangle"
            else [[x / 1000, y / 1000] for x, y in region[key]])
    for surface in data["surfaces"]:
        surface["path"] = [[x / 1000, y / 1000] for x, y in surface["path"]]
    for flank in data["flanking"]:
        flank["length"] /= 1000
    data["flanking"][1]["layers"][0]["thickness"] = 0.2
    data["probes"][0]["at"] = [0, 0.5]
    data["materials"]["cavity"]["air_layer"]["thickness"] = 0.025
    in_m = modelfile.loads(text_of(data), "detail.toml")
    in_mm = modelfile.loads(text_of(base()), "detail.toml")
    assert in_m.materials["cavity"].conductivity == pytest.approx(
        in_mm.materials["cavity"].conductivity, rel=1e-12)


def test_flanking_u_value_given():
    m = modelfile.loads(text_of(base()), "detail.toml")
    assert results.flanking_u_value(m, m.flanking[0]) == 0.21


def test_flanking_u_value_from_layers_hand_calculation():
    # Hand calculation, ISO 6946:2017 Formulae (7)-(9):
    # R = 0.200/2.3 + 0.160/0.035 = 0.086957 + 4.571429 = 4.658385 m²·K/W
    # U = 1 / (0.13 + 4.658385 + 0.04) = 1 / 4.828385 = 0.207108 W/(m²·K)
    m = rich_model()
    floor = Flanking("wall", 1000, layers=(Layer("concrete", 200), Layer("eps", 160)))
    m.materials["eps"] = Material("eps", 0.035)
    assert results.flanking_u_value(m, floor) == pytest.approx(0.207108, abs=2e-6)
    # the written surface resistances replace the default (0.17 + 0.04):
    # U = 1 / (0.17 + 4.658385 + 0.04) = 0.205407 W/(m²·K)
    floor2 = Flanking("floor", 360, layers=floor.layers, surface_resistances=(0.17, 0.04))
    assert results.flanking_u_value(m, floor2) == pytest.approx(0.205407, abs=2e-6)


def test_flanking_layer_of_air_uses_iso_6946_table():
    # A 100 mm horizontal air layer alone: R ≈ 0.18 (ISO 6946:2017 Table 8, from
    # memory), so U ≈ 1 / (0.13 + 0.18 + 0.04) = 2.86 W/(m²·K), to the rounding of
    # the table (±0.005 in R gives ±0.04 in U).
    data = base()
    data["materials"]["cavity"]["air_layer"] = {"thickness": 100, "direction": "horizontal"}
    data["flanking"][1]["layers"] = [{"material": "cavity", "thickness": 100}]
    m = modelfile.loads(text_of(data), "detail.toml")
    assert results.flanking_u_value(m, m.flanking[1]) == pytest.approx(1 / 0.35, abs=0.05)
