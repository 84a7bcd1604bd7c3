"""Models read from DXF drawings (model format 1, addition C) and written back.

Every drawing here is made in the test with ezdxf, of a section with a known
answer: ISO 10211 test reference case 2 drawn as hatches and blocks, and a
circular pipe insulation against the analytic cylinder solution.
"""

import json
import math

import ezdxf
import numpy as np
import pytest

import bridgecalc
from bridgecalc.cli import main
from bridgecalc.validation.cases import (CASE2_HEAT_FLOW, CASE2_HEAT_FLOW_TOLERANCE,
                                         CASE2_POINTS, CASE2_SOURCE,
                                         CASE2_TEMPERATURE_TOLERANCE, case2_model)

MATERIALS = """
[materials.concrete]
conductivity = 1.15
[materials.wood]
conductivity = 0.12
[materials.insulation]
conductivity = 0.029
[materials.aluminium]
conductivity = 230.0
"""

ENVIRONMENTS = """
[[environments]]
name = "inside"
temperature = 20.0
kind = "interior"
[[environments]]
name = "outside"
temperature = 0.0
kind = "exterior"
"""


def rect(x0, y0, x1, y1):
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def hatch(layout, layer, ring, islands=(), attribs=None):
    h = layout.add_hatch(dxfattribs={"layer": layer, **(attribs or {})})
    h.paths.add_polyline_path(ring, is_closed=True, flags=1)
    for island in islands:
        h.paths.add_polyline_path(island, is_closed=True, flags=0)
    return h


def case2_drawing(path, units=6, scale=1.0):
    """ISO 10211 case 2 (/work/shared/validation/iso10211-case2.md) drawn as a CAD
    user would: in metres ($INSUNITS 6), insulation and concrete as hatches over
    their outlines, the wood spacer as a MINSERT array of three 5 mm blocks, the
    aluminium profile as a block drawn in millimetres, rotated, mirrored and
    with a nested block for its flange, and clutter on other layers (text, a
    dimension, a title frame)."""
    doc = ezdxf.new("R2010", units=units)
    msp = doc.modelspace()
    s = scale
    msp.add_lwpolyline([(x * s, y * s) for x, y in rect(0, 0, 0.5, 0.0415)], close=True,
                       dxfattribs={"layer": "INSULATION"})
    hatch(msp, "INSULATION", [(x * s, y * s) for x, y in rect(0, 0, 0.5, 0.0415)])
    hatch(msp, "CONCRETE", [(x * s, y * s) for x, y in rect(0, 0.0415, 0.5, 0.0475)])
    # wood spacer: three 5 mm wide pieces as one MINSERT
    piece = doc.blocks.new("SPACER-PIECE")
    piece.add_lwpolyline(rect(0, 0, 0.005 * s, 0.005 * s), close=True,
                         dxfattribs={"layer": "0"})     # layer 0 takes the reference's layer
    msp.add_blockref("SPACER-PIECE", (0, 0.0365 * s), dxfattribs={"layer": "WOOD"}) \
        .grid(size=(1, 3), spacing=(0.005 * s, 0.005 * s))
    # aluminium profile in mm, drawn turned by -90° and mirrored about y; the
    # reference turns it back (+90°), mirrors it (x scale -1) and scales mm -> m
    flange = doc.blocks.new("FLANGE")
    flange.add_lwpolyline(_profile_local(rect(0, 35, 15, 36.5)), close=True,
                          dxfattribs={"layer": "ALUMINIUM"})
    profile = doc.blocks.new("PROFILE")
    hatch(profile, "ALUMINIUM", _profile_local(rect(0, 0, 500, 1.5)))
    profile.add_lwpolyline(_profile_local(rect(0, 1.5, 1.5, 35)), close=True,
                           dxfattribs={"layer": "ALUMINIUM"})
    profile.add_blockref("FLANGE", (0, 0), dxfattribs={"layer": "ALUMINIUM"})
    msp.add_blockref("PROFILE", (0, 0), dxfattribs={
        "layer": "DETAIL", "xscale": -0.001 * s, "yscale": 0.001 * s, "rotation": 90})
    msp.add_line((0, 0.0475 * s), (0.5 * s, 0.0475 * s), dxfattribs={"layer": "BC-OUTSIDE"})
    msp.add_lwpolyline([(0.5 * s, 0), (0, 0)], dxfattribs={"layer": "BC-INSIDE"})
    msp.add_text("ISO 10211 case 2", dxfattribs={"layer": "TEXT", "height": 0.005 * s})
    msp.add_linear_dim(base=(0, -0.01 * s), p1=(0, 0), p2=(0.5 * s, 0),
                       dxfattribs={"layer": "DIMENSIONS"}).render()
    msp.add_lwpolyline(rect(-0.1 * s, -0.1 * s, 0.6 * s, 0.1 * s), close=True,
                       dxfattribs={"layer": "FRAME"})
    doc.saveas(path)


def _profile_local(ring):
    """Block coordinates of a ring placed by x scale −1 and rotation +90°: the
    reference maps (u, v) to (−v, −u), so a point (x, y) is drawn at (−y, −x)."""
    return [(-y, -x) for x, y in ring]


CASE2_MODEL = """
format = 1
name = "ISO 10211 case 2 from a drawing"
length_unit = "mm"
{materials}
[drawing]
file = "case2.dxf"
layers = [
  {{ layer = "INSULATION", material = "insulation" }},
  {{ layer = "concrete", material = "concrete" }},
  {{ layer = "WOOD", material = "wood" }},
  {{ layer = "ALUMINIUM", material = "aluminium" }},
]
{unit}
{environments}
[[surfaces]]
environment = "outside"
resistance = 0.06
layer = "BC-OUTSIDE"
[[surfaces]]
environment = "inside"
resistance = 0.11
layer = "BC-INSIDE"
{probes}
"""


def case2_text(unit=""):
    probes = "\n".join(f'[[probes]]\nname = "{k}"\nat = [{x}, {y}]'
                       for k, ((x, y), _) in CASE2_POINTS.items())
    return CASE2_MODEL.format(materials=MATERIALS, environments=ENVIRONMENTS, unit=unit,
                              probes=probes)


@pytest.fixture(scope="module")
def case2_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("case2")
    case2_drawing(folder / "case2.dxf")
    (folder / "case2.toml").write_text(case2_text(), encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def case2_result(case2_files):
    return bridgecalc.run(bridgecalc.load(case2_files / "case2.toml"))


def test_case2_drawing_reads_the_published_section(case2_files):
    """Hatches, outlines under them, a MINSERT array and a rotated, mirrored,
    scaled, nested block give exactly the regions of the reference case."""
    model = bridgecalc.load(case2_files / "case2.toml")
    assert model.drawing.unit == "m" and model.drawing.unit_from == "header"
    got = {}
    for region in model.regions:
        got.setdefault(region.material, []).append(
            sorted((round(x, 9), round(y, 9)) for x, y in region.vertices))
    assert len(got["insulation"]) == 1 and len(got["concrete"]) == 1    # outline + hatch: one
    assert len(got["wood"]) == 3                                        # the MINSERT array
    assert sorted(got["aluminium"]) == sorted(
        sorted(r) for r in (rect(0, 0, 500, 1.5), rect(0, 1.5, 1.5, 35), rect(0, 35, 15, 36.5)))
    wood = sorted(min(v) for v in got["wood"])
    assert wood == [(0, 36.5), (5, 36.5), (10, 36.5)]
    assert [s.path for s in model.surfaces] == [((0, 47.5), (500, 47.5)), ((500, 0), (0, 0))]


def test_case2_drawing_gives_the_published_values(case2_result):
    """ISO 10211:2017 Annex C case 2 (CASE2_SOURCE): temperatures within 0.1 K
    and the heat flow within 0.1 W/m of the published values."""
    hf = case2_result.heat_flow_case
    for name, (_, reference) in CASE2_POINTS.items():
        assert abs(hf.probes[name] - reference) <= CASE2_TEMPERATURE_TOLERANCE, (
            name, CASE2_SOURCE)
    assert abs(hf.heat_flow["inside"] - CASE2_HEAT_FLOW) <= CASE2_HEAT_FLOW_TOLERANCE


def test_case2_drawing_in_cm_without_header_takes_the_unit_key(tmp_path):
    """No $INSUNITS: [drawing] unit says cm; coordinates are converted to mm."""
    case2_drawing(tmp_path / "case2.dxf", units=0, scale=100.0)
    (tmp_path / "case2.toml").write_text(case2_text('unit = "cm"'), encoding="utf-8")
    model = bridgecalc.load(tmp_path / "case2.toml")
    assert model.drawing.unit == "cm" and model.drawing.unit_from == "unit"
    reference = case2_from(tmp_path).regions
    assert [r.material for r in model.regions] == [r.material for r in reference]
    for got, want in zip(model.regions, reference):
        assert np.allclose(got.vertices, want.vertices, rtol=0, atol=1e-9)
    # no header and no unit: the model's length_unit (mm) -> a section 100 x 10 times too small
    (tmp_path / "case2.toml").write_text(case2_text(), encoding="utf-8")
    with pytest.raises(bridgecalc.ModelError, match="probes"):
        bridgecalc.load(tmp_path / "case2.toml")     # probe A at y = 47.5 mm lies outside


def case2_from(folder):
    case2_drawing(folder / "ref.dxf")
    (folder / "ref.toml").write_text(case2_text().replace("case2.dxf", "ref.dxf"),
                                     encoding="utf-8")
    return bridgecalc.load(folder / "ref.toml")


def test_header_wins_over_the_unit_key_with_a_warning(case2_files, tmp_path, capsys):
    (tmp_path / "case2.dxf").write_bytes((case2_files / "case2.dxf").read_bytes())
    (tmp_path / "case2.toml").write_text(case2_text('unit = "mm"'), encoding="utf-8")
    model = bridgecalc.load(tmp_path / "case2.toml")
    assert model.drawing.unit == "m" and model.drawing.unit_from == "header"
    assert len(model.drawing.warnings) == 1
    assert "header wins" in model.drawing.warnings[0]
    assert main(["export", str(tmp_path / "case2.toml"), "--to", str(tmp_path / "out.toml")]) == 0
    err = capsys.readouterr().err
    assert "warning:" in err and "$INSUNITS = 6" in err and "case2.dxf" in err


# -- circular pipe insulation: the analytic cylinder ---------------------------------


def pipe_conductance(r1, r2, conductivity, r_si, r_se):
    """Heat flow per metre of pipe and kelvin [W/(m·K)] through a cylindrical
    layer r1 < r < r2 [m] with surface resistances r_si, r_se [m²·K/W]:
    1 / (Rsi/(2π r1) + ln(r2/r1)/(2π λ) + Rse/(2π r2)). Radial conduction in a
    cylinder wall, Incropera, DeWitt, Bergman & Lavine, Fundamentals of Heat and
    Mass Transfer, 6th ed., §3.3.1, eq. 3.28 and the resistance network of
    §3.3 (equation numbers from memory)."""
    return 1.0 / (r_si / (2 * math.pi * r1) + math.log(r2 / r1) / (2 * math.pi * conductivity)
                  + r_se / (2 * math.pi * r2))


PIPE_MODEL = """
format = 1
name = "Pipe insulation from a drawing"
length_unit = "m"
[materials.wool]
conductivity = 0.04
[drawing]
file = "pipe.dxf"
layers = [{ layer = "WOOL", material = "wool" }]
unit = "cm"
[[environments]]
name = "water"
temperature = 60.0
kind = "interior"
[[environments]]
name = "room"
temperature = 20.0
kind = "exterior"
[[surfaces]]
environment = "water"
resistance = 0.02
layer = "BC-PIPE"
[[surfaces]]
environment = "room"
resistance = 0.10
layer = "BC-ROOM"
"""


def test_pipe_insulation_against_the_cylinder_solution(tmp_path):
    """A 50 mm layer of wool (λ 0.04) on a pipe of 100 mm diameter, drawn in cm
    without a header as a hatch with a circular island (edge paths of full
    arcs) over two circles (which nest: the inner one is the hole): L2D within
    0.5 % of :func:`pipe_conductance` (the chords of the flattened circles lie
    within 0.1 mm of them, so the polygon differs from the cylinder by about
    0.1 % in L)."""
    r1, r2 = 5.0, 10.0                                   # cm
    doc = ezdxf.new("R2010", units=0)
    msp = doc.modelspace()
    msp.add_circle((3, 4), r2, dxfattribs={"layer": "WOOL"})
    msp.add_circle((3, 4), r1, dxfattribs={"layer": "WOOL"})
    h = msp.add_hatch(dxfattribs={"layer": "WOOL"})
    h.paths.add_edge_path(flags=1).add_arc((3, 4), r2, 0, 360)
    h.paths.add_edge_path(flags=0).add_arc((3, 4), r1, 0, 360)
    msp.add_circle((3, 4), r1, dxfattribs={"layer": "BC-PIPE"})
    msp.add_circle((3, 4), r2, dxfattribs={"layer": "BC-ROOM"})
    doc.saveas(tmp_path / "pipe.dxf")
    (tmp_path / "pipe.toml").write_text(PIPE_MODEL, encoding="utf-8")
    model = bridgecalc.load(tmp_path / "pipe.toml")
    assert len(model.regions) == 1 and len(model.regions[0].holes) == 1
    for ring, radius in ((model.regions[0].vertices, 0.10), (model.regions[0].holes[0], 0.05)):
        ring = np.asarray(ring) - (0.03, 0.04)
        assert np.allclose(np.hypot(*ring.T), radius, rtol=0, atol=1e-12)   # vertices on it
        mid = 0.5 * (ring + np.roll(ring, -1, axis=0))
        sagitta = radius - np.hypot(*mid.T)
        assert sagitta.max() <= 1e-4 + 1e-12                                # chords within 0.1 mm
    result = bridgecalc.run(model)
    expected = pipe_conductance(0.05, 0.10, 0.04, 0.02, 0.10)
    assert result.coupling_coefficient == pytest.approx(expected, rel=5e-3)
    # the outer surface temperature of the cylinder: θ = θroom + q·Rse/(2π r2)
    q = expected * 40.0
    assert result.theta_si_min == pytest.approx(60.0 - q * 0.02 / (2 * math.pi * 0.05), abs=0.05)


# -- curves and blocks -----------------------------------------------------------------


SQUARE_MODEL = """
format = 1
length_unit = "mm"
[materials.a]
conductivity = 1.0
[drawing]
file = "d.dxf"
layers = [{ layer = "A", material = "a" }]
[[environments]]
name = "in"
temperature = 20.0
kind = "interior"
[[environments]]
name = "out"
temperature = 0.0
kind = "exterior"
[[surfaces]]
environment = "in"
resistance = 0.13
layer = "IN"
"""


def read_drawn(tmp_path, draw, model=SQUARE_MODEL, units=4):
    doc = ezdxf.new("R2010", units=units)
    draw(doc, doc.modelspace())
    doc.saveas(tmp_path / "d.dxf")
    (tmp_path / "d.toml").write_text(model, encoding="utf-8")
    return bridgecalc.load(tmp_path / "d.toml")


def drawn_shapes(tmp_path, draw, layers=("A",)):
    """The shapes the reader finds on ``layers`` of a drawing (no model rules)."""
    from bridgecalc.readers import drawing, shapes
    doc = ezdxf.new("R2010", units=4)
    draw(doc, doc.modelspace())
    doc.saveas(tmp_path / "d.dxf")
    content = drawing.read_drawing(tmp_path / "d.dxf", list(layers), [], None, "mm", "d")
    found, _ = shapes.build([layer.upper() for layer in layers], [], content.pieces, 1.0,
                            shapes.SNAP_MM, "d")
    return found


def boundary_line(msp, start, end):
    msp.add_line(start, end, dxfattribs={"layer": "IN"})


SPLINE_POINTS = [(2000, 0), (2000, 1500), (0, 2000), (-2000, 1500), (-2000, 0)]


@pytest.mark.parametrize("kind", ["bulge", "ellipse", "spline", "hatch-arc", "hatch-ellipse",
                                  "hatch-spline"])
def test_curves_flattened_within_a_tenth_of_a_millimetre(tmp_path, kind):
    """Curves of about 2 m radius drawn with each kind of curve entity or hatch
    edge: every chord stays within 0.1 mm of the curve (measured against a
    dense sampling of the curve by ezdxf's own evaluators)."""
    r = 2000.0

    def draw(doc, msp):
        for layer in ("A", "IN"):
            if kind == "bulge":
                msp.add_lwpolyline([(r, 0, 1.0), (-r, 0, 0)], format="xyb", close=True,
                                   dxfattribs={"layer": layer})
            elif kind == "ellipse":
                msp.add_ellipse((0, 0), major_axis=(r, 0), ratio=0.5, dxfattribs={"layer": layer})
            elif kind == "spline":
                msp.add_spline(dxfattribs={"layer": layer}).set_closed([(x, y, 0) for x, y in SPLINE_POINTS])
        if kind.startswith("hatch"):
            h = msp.add_hatch(dxfattribs={"layer": "A"})
            path = h.paths.add_edge_path(flags=1)
            if kind == "hatch-arc":
                path.add_arc((0, 0), r, 0, 180)
            elif kind == "hatch-ellipse":
                path.add_ellipse((0, 0), (r, 0), 0.5, 0, 180)
            else:
                path.add_spline(control_points=[(r, 0), (r, r), (-r, r), (-r, 0)],
                                knot_values=[0, 0, 0, 0, 1, 1, 1, 1], degree=3)
            path.add_line((-r, 0), (r, 0))
            boundary_line(msp, (-r, 0), (r, 0))

    model = read_drawn(tmp_path, draw)
    ring = np.asarray(model.regions[0].vertices)
    if kind in ("spline", "hatch-spline"):
        from ezdxf.math import BSpline
        if kind == "spline":
            tool = ezdxf.readfile(tmp_path / "d.dxf").modelspace()[0].construction_tool()
            knots = tool.knots()         # periodic: defined between knots p and n
            t = np.linspace(knots[tool.degree], knots[tool.count], 40001)
            dense = np.array([(q.x, q.y) for q in tool.points(t)])
        else:
            tool = BSpline([(r, 0), (r, r), (-r, r), (-r, 0)], order=4)
            dense = np.array([(p.x, p.y) for p in tool.approximate(40000)])
    else:
        ratio = 0.5 if "ellipse" in kind else 1.0
        t = np.linspace(0, 2 * np.pi, 40001)
        dense = np.column_stack([r * np.cos(t), ratio * r * np.sin(t)])
    import shapely
    curve = shapely.LineString(dense)
    a, b = ring, np.roll(ring, -1, axis=0)
    chord = np.hypot(*(b - a).T)
    curved = ~((np.abs(a[:, 1]) < 1e-9) & (np.abs(b[:, 1]) < 1e-9))   # not the straight edge
    assert curved.sum() > 20
    worst = 0.0
    for f in (0.0, 0.25, 0.5, 0.75):
        p = (a + f * (b - a))[curved]
        worst = max(worst, float(shapely.distance(curve, shapely.points(p)).max()))
    assert worst <= 0.1 + 1e-3, worst                   # [mm]
    assert worst > 0.01                                  # and not needlessly fine
    assert chord[curved].min() > 1.0                     # no vertex crowding


def test_blocks_nested_moved_rotated_scaled_mirrored_and_arrays(tmp_path):
    """A unit square block placed every way a CAD user places blocks: the corners
    land where the transformations put them."""
    def draw(doc, msp):
        sq = doc.blocks.new("SQ")
        sq.add_lwpolyline(rect(0, 0, 10, 10), close=True, dxfattribs={"layer": "A"})
        outer = doc.blocks.new("OUTER")
        outer.add_blockref("SQ", (100, 0), dxfattribs={"rotation": 90})
        msp.add_blockref("SQ", (0, 0))                                    # as drawn
        msp.add_blockref("SQ", (0, 10), dxfattribs={"xscale": 2, "yscale": 3})
        msp.add_blockref("SQ", (0, 100), dxfattribs={"xscale": -1})        # mirrored
        msp.add_blockref("OUTER", (0, 200), dxfattribs={"rotation": 180})  # nested
        msp.add_blockref("SQ", (300, 0)).grid(size=(2, 2), spacing=(20, 30))  # MINSERT:
        # two rows 20 apart, two columns 30 apart
        boundary_line(msp, (0, 0), (10, 0))

    found = drawn_shapes(tmp_path, draw)
    boxes = sorted(tuple(np.round(np.r_[np.min(s.outline, axis=0), np.max(s.outline, axis=0)], 9))
                   for s in found)
    expected = sorted([(0, 0, 10, 10), (0, 10, 20, 40), (-10, 100, 0, 110),
                       (-100, 190, -90, 200),
                       (300, 0, 310, 10), (330, 0, 340, 10), (300, 20, 310, 30), (330, 20, 340, 30)])
    assert boxes == [tuple(map(float, b)) for b in expected]
    assert all("placed by block reference" in s.source.describe() for s in found)


# -- messy drawings ----------------------------------------------------------------------


WALL_MODEL = """
format = 1
length_unit = "mm"
[materials.concrete]
conductivity = 2.3
[materials.insulation]
conductivity = 0.035
[materials.steel]
conductivity = 50.0
{drawing}
[[environments]]
name = "inside"
temperature = 20.0
kind = "interior"
[[environments]]
name = "outside"
temperature = 0.0
kind = "exterior"
[[surfaces]]
environment = "inside"
resistance = 0.13
resistance_surface_temperature = 0.25
{inside}
[[surfaces]]
environment = "outside"
resistance = 0.04
{outside}
[[flanking]]
name = "wall"
length = 1200
layers = [{{ material = "concrete", thickness = 200 }}, {{ material = "insulation", thickness = 160 }}]
"""

WALL_DRAWING = """[drawing]
file = "wall.dxf"
layers = [
  { layer = "CONCRETE", material = "concrete" },
  { layer = "INSULATION", material = "insulation" },
  { layer = "STEEL", material = "steel" },
]"""


def wall_clean_text():
    regions = """
[[regions]]
material = "concrete"
rectangle = [0, 0, 200, 1200]
[[regions]]
material = "insulation"
rectangle = [200, 0, 360, 1200]
[[regions]]
material = "steel"
rectangle = [200, 595, 360, 605]
"""
    return WALL_MODEL.format(drawing=regions, inside="path = [[0, 0], [0, 1200]]",
                             outside="path = [[360, 0], [360, 1200]]")


def messy_wall(doc, msp):
    """The clean wall as drawn in a hurry: the concrete as a clockwise polyline with
    a repeated vertex and a zero-length segment, hatched; the insulation stopping
    0.04 mm short of the concrete and drawn twice; the steel plate as four lines,
    one of them reversed, overlapping the concrete by 0.03 mm; the inner boundary
    drawn twice, partly overlapping; the outer boundary a hair off the face."""
    conc = [(0, 0), (0, 1200), (200, 1200), (200, 1200), (200, 0)]      # clockwise, repeat
    msp.add_lwpolyline(conc + [(0, 0)], dxfattribs={"layer": "CONCRETE"})  # open, ends meet
    hatch(msp, "CONCRETE", rect(0, 0, 200, 1200))
    ins = rect(200.04, 0, 360, 1200)
    msp.add_lwpolyline(ins, close=True, dxfattribs={"layer": "INSULATION"})
    msp.add_lwpolyline(ins[::-1], close=True, dxfattribs={"layer": "INSULATION"})
    for a, b in [((199.97, 595), (360, 595)), ((360, 595), (360, 605)),
                 ((199.97, 605), (360, 605)), ((199.97, 605), (199.97, 595))]:
        msp.add_line(a, b, dxfattribs={"layer": "STEEL"})
    msp.add_line((0, 0), (0, 800), dxfattribs={"layer": "BC-IN"})
    msp.add_line((0, 1200), (0, 500), dxfattribs={"layer": "BC-IN"})
    msp.add_line((360.02, 0), (360.02, 1200), dxfattribs={"layer": "BC-OUT"})
    msp.add_text("wall", dxfattribs={"layer": "NOTES"})


def test_a_messy_drawing_gives_the_clean_models_results(tmp_path):
    """Duplicates, hairline gaps and overlaps, repeated vertices, zero-length
    segments and both orientations: the same Ψ and fRsi as the clean model file
    (within the study's tolerance; the drawing's regions come in another order)."""
    doc = ezdxf.new("R2010", units=4)
    messy_wall(doc, doc.modelspace())
    doc.saveas(tmp_path / "wall.dxf")
    (tmp_path / "wall.toml").write_text(
        WALL_MODEL.format(drawing=WALL_DRAWING, inside='layer = "BC-IN"',
                          outside='layer = "BC-OUT"'), encoding="utf-8")
    messy = bridgecalc.load(tmp_path / "wall.toml")
    from bridgecalc.readers.modelfile import loads
    clean = loads(wall_clean_text())
    assert [r.material for r in messy.regions] == ["concrete", "insulation", "steel"]
    for got, want in zip(messy.regions, clean.regions):
        assert sorted(got.vertices) == sorted(want.vertices), got.material
    assert sorted(p for s in messy.surfaces for p in s.path) == sorted(
        [(0, 0), (0, 800), (0, 800), (0, 1200), (360, 0), (360, 1200)])
    a, b = bridgecalc.run(messy), bridgecalc.run(clean)
    assert a.psi == pytest.approx(b.psi, rel=1e-3)
    assert a.f_rsi == pytest.approx(b.f_rsi, abs=1e-4)


def test_nested_outlines_on_one_layer_are_holes_islands_within_them_regions(tmp_path):
    """Three nested squares on one layer: the outer filled, the middle a hole,
    the inner an island (odd parity, as hatches nest)."""
    def draw(doc, msp):
        for k, half in enumerate((300, 200, 100)):
            msp.add_lwpolyline(rect(-half, -half, half, half), close=True,
                               dxfattribs={"layer": "A"})
        boundary_line(msp, (-300, -300), (300, -300))

    found = drawn_shapes(tmp_path, draw)
    assert len(found) == 2
    assert len(found[0].holes) == 1 and not found[1].holes
    assert np.abs(found[0].holes[0]).max() == 200 and np.abs(found[1].outline).max() == 100


# -- round trips --------------------------------------------------------------------------


def numbers(result):
    hf, st = result.heat_flow_case, result.surface_temperature_case
    return (hf.coupling_coefficient, hf.psi, dict(hf.heat_flow), dict(hf.probes),
            st.theta_si_min, st.f_rsi, result.mesh.node_count)


def test_round_trip_through_a_drawing_and_a_model_file(tmp_path, case2_result, case2_files):
    """ISO 10211 case 2 (a model) -> DXF -> model, and the drawn case 2 (a model
    from a drawing) -> self-contained model file -> model: the same polygons in
    the same order, so the same results to the last digit."""
    original = case2_model()
    written = bridgecalc.export(original, tmp_path / "case2-out.dxf")
    assert [p.name for p in written] == ["case2-out.dxf", "case2-out.toml"]
    doc = ezdxf.readfile(tmp_path / "case2-out.dxf")
    assert doc.header["$INSUNITS"] == 4
    assert {layer.dxf.name for layer in doc.layers} >= {"concrete", "wood", "insulation",
                                                       "aluminium", "surface-1-outside",
                                                       "surface-2-inside"}
    assert {e.dxftype() for e in doc.modelspace()} == {"LWPOLYLINE", "HATCH"}
    back = bridgecalc.load(tmp_path / "case2-out.toml")
    assert [r.vertices for r in back.regions] == [r.vertices for r in original.regions]
    assert numbers(bridgecalc.run(back)) == numbers(bridgecalc.run(original))

    drawn = bridgecalc.load(case2_files / "case2.toml")
    bridgecalc.export(drawn, tmp_path / "self-contained.toml")
    text = (tmp_path / "self-contained.toml").read_text(encoding="utf-8")
    assert "[drawing]" not in text and "polygon = " in text
    assert numbers(bridgecalc.run(bridgecalc.load(tmp_path / "self-contained.toml"))) == \
        numbers(case2_result)


def test_round_trip_of_interleaved_materials_cuts_regions_to_what_shows(tmp_path):
    """Concrete, insulation over it, concrete over the insulation: no order of
    one layer per material keeps that, so the drawing holds what shows of each
    region; the results agree within the study's tolerance."""
    text = wall_clean_text().replace('''[[regions]]
material = "steel"
rectangle = [200, 595, 360, 605]''', '''[[regions]]
material = "concrete"
rectangle = [100, 595, 360, 605]''')
    from bridgecalc.readers.modelfile import loads
    original = loads(text)
    bridgecalc.export(original, tmp_path / "x.dxf")
    back = bridgecalc.load(tmp_path / "x.toml")
    a, b = bridgecalc.run(original), bridgecalc.run(back)
    assert b.psi == pytest.approx(a.psi, rel=2e-3)
    assert b.f_rsi == pytest.approx(a.f_rsi, abs=2e-4)


# -- errors through the command line --------------------------------------------------------


def error_case(tmp_path, draw, model=SQUARE_MODEL, file_text=None):
    if draw is not None:
        doc = ezdxf.new("R2010", units=4)
        draw(doc, doc.modelspace())
        doc.saveas(tmp_path / "d.dxf")
    if file_text is not None:
        (tmp_path / "d.dxf").write_text(file_text, encoding="utf-8")
    (tmp_path / "d.toml").write_text(model, encoding="utf-8")
    return tmp_path / "d.toml"


def square(msp, layer="A"):
    return msp.add_lwpolyline(rect(0, 0, 100, 100), close=True, dxfattribs={"layer": layer})


ERRORS = {
    "open shape": (lambda doc, msp: (msp.add_lwpolyline(rect(0, 0, 100, 100),
                                                         dxfattribs={"layer": "A"}),
                                     boundary_line(msp, (0, 0), (100, 0))),
                   ["open shape", "layer 'A'", "entity "]),
    "nothing closed": (lambda doc, msp: (square(msp, "B"), boundary_line(msp, (0, 0), (100, 0))),
                       ["layer 'A'", "no closed shape"]),
    "unreadable type": (lambda doc, msp: (square(msp), msp.add_text("x", dxfattribs={"layer": "A"}),
                                          boundary_line(msp, (0, 0), (100, 0))),
                        ["TEXT", "layer 'A'", "entity "]),
    "mesh entity": (lambda doc, msp: (square(msp), msp.add_3dface([(0, 0), (1, 0), (1, 1)],
                                                                  dxfattribs={"layer": "A"}),
                                      boundary_line(msp, (0, 0), (100, 0))),
                    ["3DFACE", "layer 'A'", "entity "]),
    "self-crossing": (lambda doc, msp: (msp.add_lwpolyline([(0, 0), (100, 0), (0, 100), (100, 120)],
                                                           close=True, dxfattribs={"layer": "A"}),
                                        boundary_line(msp, (0, 0), (100, 0))),
                      ["crosses or touches itself", "layer 'A'", "entity "]),
    "empty surface layer": (lambda doc, msp: square(msp), ["layer 'IN'", "surfaces[0].layer"]),
    "missing file": (None, ["no such drawing", "d.dxf"]),
    "not a drawing": ("not a drawing at all\n", ["d.dxf", "not a DXF drawing"]),
}


@pytest.mark.parametrize("case", list(ERRORS))
def test_drawing_errors_through_the_cli(tmp_path, capsys, case):
    """Exit 2, ``error:`` naming the drawing, the layer and the entity's handle;
    nothing written (neither the run's folder nor an exported file)."""
    draw, expected = ERRORS[case]
    if isinstance(draw, str):
        path = error_case(tmp_path, None, file_text=draw)
    else:
        path = error_case(tmp_path, draw)
    handles = set()
    if (tmp_path / "d.dxf").exists() and callable(draw):
        handles = {e.dxf.handle for e in ezdxf.readfile(tmp_path / "d.dxf").modelspace()}
    for argv in (["run", str(path), "--out", str(tmp_path / "out")],
                 ["export", str(path), "--to", str(tmp_path / "x.dxf")]):
        assert main(argv) == 2
        err = capsys.readouterr().err
        assert err.startswith("error: ") and "Traceback" not in err
        assert "d.toml" in err and "drawing d.dxf" in err
        for text in expected:
            assert text in err, (text, err)
        if "entity " in expected:
            assert any(f"entity {h} " in err for h in handles), err
        assert not (tmp_path / "out").exists() and not (tmp_path / "x.dxf").exists()
        assert not (tmp_path / "x.toml").exists()


def test_export_refuses_to_overwrite_its_own_model(tmp_path, capsys):
    path = error_case(tmp_path, lambda doc, msp: (square(msp), boundary_line(msp, (0, 0), (100, 0))))
    before = path.read_text(encoding="utf-8")
    assert main(["export", str(path), "--to", str(tmp_path / "d.dxf")]) == 2
    assert "which the model was read from" in capsys.readouterr().err
    assert path.read_text(encoding="utf-8") == before


def test_run_summary_and_results_say_which_unit(tmp_path, capsys, case2_files):
    out = tmp_path / "out"
    assert main(["run", str(case2_files / "case2.toml"), "--out", str(out)]) == 0
    summary = capsys.readouterr().out
    assert "drawing            case2.dxf, read in m (from its header ($INSUNITS))" in summary
    data = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert data["drawing"]["unit"] == "m" and data["drawing"]["unit_from"] == "header"


# -- the shipped example -----------------------------------------------------------------


def test_shipped_stair_tower_corner(geometries):
    """geometries/stair_tower_corner.toml reads the shipped drawing (arcs as
    bulges, hatches over outlines, dimensions, text and a title block on other
    layers). Its L2D agrees within 0.5 % with the sum of the two straight legs
    (ISO 6946 plane layers, U = 1/(Rsi + Σd/λ + Rse)) and the quarter
    cylinder of the curve (radial conduction, Incropera et al., Fundamentals of
    Heat and Mass Transfer, 6th ed., §3.3.1, from memory): the straight and
    the curved parts meet with nearly the same temperature field, so the sum
    is close to, though not exactly, the 2D answer (0.05 % apart here)."""
    model = bridgecalc.load(geometries / "stair_tower_corner.toml")
    assert [r.material for r in model.regions] == ["masonry", "eps"]
    assert model.drawing.unit_from == "header" and model.dimension_system == "external"
    result = bridgecalc.run(model)
    r_i, r_m, r_o, leg = 0.600, 0.840, 1.000, 1.500           # [m]
    u = 1 / (0.13 + 0.240 / 0.7 + 0.160 / 0.035 + 0.04)
    quarter = (math.pi / 2) / (0.13 / r_i + math.log(r_m / r_i) / 0.7
                                + math.log(r_o / r_m) / 0.035 + 0.04 / r_o)
    assert result.coupling_coefficient == pytest.approx(2 * leg * u + quarter, rel=5e-3)
    # Ψ against external dimensions: the flanking walls count 2 × 2.5 m
    assert result.psi == pytest.approx(result.coupling_coefficient - 2 * 2.5 * u, abs=1e-9)
    assert result.psi < 0          # a convex corner measured externally


def test_benchmark_drawing_reads_as_its_model_file(tmp_path):
    """benchmarks/bench_drawing.py: its 5 000-entity drawing (400 blocks, each a
    polyline under its hatch, and clutter) reads to one region per block plus
    mortar and insulation, the same as its self-contained model file."""
    import importlib.util
    from conftest import ROOT
    spec = importlib.util.spec_from_file_location("bench_drawing",
                                                  ROOT / "benchmarks" / "bench_drawing.py")
    bench = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(bench)
    assert bench.make_drawing(tmp_path / "wall.dxf") == bench.ENTITIES
    (tmp_path / "wall.toml").write_text(bench.MODEL, encoding="utf-8")
    model = bridgecalc.load(tmp_path / "wall.toml")
    assert len(model.regions) == bench.COURSES * bench.PER_COURSE + 2
    bridgecalc.export(model, tmp_path / "polygons.toml")
    again = bridgecalc.load(tmp_path / "polygons.toml")
    assert [r.vertices for r in again.regions] == [r.vertices for r in model.regions]


def test_solids_old_polylines_loops_of_lines_and_hatch_styles(tmp_path):
    """SOLID (3 and 4 corners, in DXF's zig-zag order), an old-style POLYLINE with a
    bulge, lines and an arc that join end to end, and the three hatch styles
    (odd parity, outermost, ignore islands) read as a CAD program draws them."""
    import shapely

    def draw(doc, msp):
        msp.add_solid([(0, 0), (10, 0), (0, 10), (10, 10)], dxfattribs={"layer": "A"})
        msp.add_solid([(20, 0), (30, 0), (25, 10)], dxfattribs={"layer": "A"})
        msp.add_polyline2d([(40, 0, 0, 0, 1), (50, 0, 0, 0, 0)], format="xyseb", close=True,
                           dxfattribs={"layer": "A"})
        msp.add_line((60, 0), (70, 0), dxfattribs={"layer": "A"})
        msp.add_arc((70, 5), 5, -90, 90, dxfattribs={"layer": "A"})
        msp.add_line((60, 10), (70, 10), dxfattribs={"layer": "A"})
        msp.add_line((60, 10), (60, 0), dxfattribs={"layer": "A"})
        for style, x in ((0, 200), (1, 300), (2, 400)):
            h = msp.add_hatch(dxfattribs={"layer": "A", "hatch_style": style})
            for k, half in enumerate((40, 30, 20)):
                h.paths.add_polyline_path(rect(x - half, -half, x + half, half),
                                          flags=1 if k == 0 else 0)

    found = drawn_shapes(tmp_path, draw)
    areas = [round(shapely.Polygon(s.outline, s.holes).area, 1) for s in found]
    # a half disc of r = 5 mm less the segments cut off by chords with a sagitta of at
    # most 0.1 mm: at most 2/3 · 0.1 mm · the arc's length (parabolic segments)
    half_disc, loss = math.pi * 25 / 2, 2 / 3 * 0.1 * math.pi * 5
    assert areas[:2] == [100.0, 50.0]
    assert half_disc - loss - 0.05 <= areas[2] <= half_disc
    assert 100 + half_disc - loss - 0.05 <= areas[3] <= 100 + half_disc
    # odd parity: a ring with a hole and the island filled; outermost: the ring
    # only; ignore: the whole outer square
    assert areas[4:] == [2800.0, 1600.0, 2800.0, 6400.0]


def test_model_rules_name_the_drawing_layer_and_handle(tmp_path, capsys):
    """A region from the drawing that breaks a model rule (a piece no surface
    touches) is named by drawing, layer and handle as well as regions[i]."""
    def draw(doc, msp):
        square(msp)
        msp.add_lwpolyline(rect(500, 0, 600, 100), close=True, dxfattribs={"layer": "A"})
        boundary_line(msp, (0, 0), (100, 0))

    path = error_case(tmp_path, draw)
    handle = list(ezdxf.readfile(tmp_path / "d.dxf").modelspace())[1].dxf.handle
    assert main(["run", str(path), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert f"regions[1].polygon (drawing d.dxf, layer 'A', entity {handle} (LWPOLYLINE))" in err
    assert "touches no surface" in err and not (tmp_path / "out").exists()


@pytest.mark.parametrize("change, expected", [
    (('layer = "IN"', 'path = [[0, 0], [100, 0]]\nlayer = "IN"'), "give either path or layer"),
    (('[drawing]', '[drawing]\nunit = "inch"'), "drawing.unit: unknown unit 'inch'"),
    (('layers = [{ layer = "A", material = "a" }]',
      'layers = [{ layer = "A", material = "a" }, { layer = "in", material = "a" }]'),
     "also a material layer"),
    (('material = "a" }]', 'material = "b" }]'), "drawing.layers[0].material: material 'b'"),
    (('file = "d.dxf"\n', ''), "drawing.file: missing"),
])
def test_drawing_table_keys_are_checked(tmp_path, capsys, change, expected):
    path = error_case(tmp_path, lambda doc, msp: (square(msp), boundary_line(msp, (0, 0), (100, 0))),
                      model=SQUARE_MODEL.replace(*change))
    assert main(["export", str(path), "--to", str(tmp_path / "x.toml")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and expected in err, err
    assert not (tmp_path / "x.toml").exists()


def test_a_surface_layer_without_a_drawing(tmp_path, capsys):
    text = SQUARE_MODEL.replace('[drawing]\nfile = "d.dxf"\nlayers = [{ layer = "A", material = "a" }]',
                                '[[regions]]\nmaterial = "a"\nrectangle = [0, 0, 100, 100]')
    (tmp_path / "m.toml").write_text(text, encoding="utf-8")
    assert main(["export", str(tmp_path / "m.toml"), "--to", str(tmp_path / "x.toml")]) == 2
    assert "surfaces[0].layer: takes its paths from a drawing" in capsys.readouterr().err


def test_blocks_scaled_unevenly_turn_arcs_into_elliptic_arcs(tmp_path):
    """A circle and a polyline with a bulge in a block placed with x scale 2, y
    scale 1 (ezdxf turns them into ellipses and pieces that join into a loop):
    the ellipse of semi-axes 20 and 10 mm and a half ellipse, their areas less
    at most the segments cut off by 0.1 mm chords."""
    import shapely

    def draw(doc, msp):
        block = doc.blocks.new("B")
        block.add_circle((0, 0), 10, dxfattribs={"layer": "A"})
        block.add_lwpolyline([(30, 0, 1), (50, 0, 0)], format="xyb", close=True,
                             dxfattribs={"layer": "A"})
        msp.add_blockref("B", (0, 0), dxfattribs={"xscale": 2, "yscale": 1})

    found = drawn_shapes(tmp_path, draw)
    areas = [shapely.Polygon(s.outline).area for s in found]
    ellipse, perimeter = math.pi * 20 * 10, 2 * math.pi * math.sqrt((20**2 + 10**2) / 2)
    assert ellipse - 2 / 3 * 0.1 * perimeter <= areas[0] <= ellipse
    assert ellipse / 2 - 2 / 3 * 0.1 * perimeter <= areas[1] <= ellipse / 2
    assert "block 'B'" in found[0].source.describe()
