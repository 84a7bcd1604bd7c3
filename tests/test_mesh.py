"""Mesh properties the core relies on (ISO 10211 case 2 geometry; thin layers
meshed as strips one element across, on the README's wall with a liner)."""

import dataclasses
import math

import numpy as np
import pytest

from bridgecalc.validation import cases as validation
from bridgecalc.study import convergence
from bridgecalc.mesh import build as mesh_module
from bridgecalc.errors import ModelError
from bridgecalc.mesh import MeshOptions, build_mesh
from bridgecalc.readers.modelfile import loads

from conftest import thin_layer_models, triangle_angles


@pytest.fixture(scope="module")
def case2():
    model = validation.case2_model()
    return model, build_mesh(model)


def test_thin_aluminium_web_has_several_elements_across(case2):
    """The 1.5 mm web (x 0..1.5 mm, y 1.5..35 mm) must be resolved across its
    thickness: at mid-height, several triangles lie side by side."""
    model, mesh = case2
    web = [i for i, r in enumerate(model.regions)
           if r.material == "aluminium" and r.vertices[1][0] == 1.5]
    assert web
    in_web = np.isin(mesh.region, web)
    p = mesh.nodes[mesh.triangles[in_web]]
    y_mid = 0.018
    crossing = (p[:, :, 1].min(axis=1) <= y_mid) & (p[:, :, 1].max(axis=1) >= y_mid)
    # distinct x positions of nodes of crossing triangles = element columns + 1
    xs = np.unique(np.round(p[crossing][:, :, 0].ravel(), 7))
    assert len(xs) - 1 >= 3, xs


def test_every_triangle_inside_its_region(case2):
    """Painter's order: each triangle's centroid lies in its owning region and in
    no later region."""
    from shapely.geometry import Point, Polygon
    model, mesh = case2
    shapes = [Polygon(np.array(r.vertices) * 1e-3) for r in model.regions]
    centroids = mesh.nodes[mesh.triangles].mean(axis=1)
    for k in np.random.default_rng(1).choice(len(centroids), 400, replace=False):
        c = Point(centroids[k])
        owner = mesh.region[k]
        assert shapes[owner].buffer(1e-12).contains(c)
        assert not any(shapes[j].contains(c) for j in range(owner + 1, len(shapes)))


def test_material_interfaces_are_mesh_edges(case2):
    """No triangle straddles a material interface: all three vertices of each
    triangle lie in (or on) its own region."""
    from shapely.geometry import Polygon
    from shapely import contains_xy
    model, mesh = case2
    for index, region in enumerate(model.regions):
        shape = Polygon(np.array(region.vertices) * 1e-3).buffer(1e-9)
        pts = mesh.nodes[mesh.triangles[mesh.region == index]].reshape(-1, 2)
        assert contains_xy(shape, pts[:, 0], pts[:, 1]).all()


def test_outline_edges_carry_their_surface(case2):
    """Top edges face outside (surface 0), bottom edges inside (surface 1), the
    two cut-off planes x = 0 and x = 0.5 m are adiabatic (-1)."""
    _, mesh = case2
    mid = mesh.nodes[mesh.boundary_edges].mean(axis=1)
    tag = mesh.boundary_surface
    assert np.all(tag[np.isclose(mid[:, 1], 0.0475)] == 0)
    assert np.all(tag[np.isclose(mid[:, 1], 0.0)] == 1)
    sides = np.isclose(mid[:, 0], 0.0) | np.isclose(mid[:, 0], 0.5)
    assert sides.any() and np.all(tag[sides] == -1)
    # the top and bottom are covered completely
    length = np.linalg.norm(np.diff(mesh.nodes[mesh.boundary_edges], axis=1)[:, 0], axis=1)
    assert length[tag == 0].sum() == pytest.approx(0.5, rel=1e-12)
    assert length[tag == 1].sum() == pytest.approx(0.5, rel=1e-12)


def test_element_quality(case2):
    """Quality guard: no sliver triangles (smallest angle above 10°)."""
    _, mesh = case2
    assert triangle_angles(mesh.nodes, mesh.triangles).min() > 10.0


def test_counter_clockwise(case2):
    _, mesh = case2
    p = mesh.nodes[mesh.triangles]
    cross = ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
             - (p[:, 1, 1] - p[:, 0, 1]) * (p[:, 2, 0] - p[:, 0, 0]))
    assert (cross > 0).all()


def test_mesh_deterministic():
    model = validation.case2_model()
    a, b = build_mesh(model), build_mesh(model)
    assert np.array_equal(a.nodes, b.nodes) and np.array_equal(a.triangles, b.triangles)


def test_partial_surface_path_splits_the_side():
    """A path covering part of a side claims exactly that part: the path's
    end becomes a node."""
    import dataclasses
    from bridgecalc.model import Surface
    model = validation.layers_model()          # 1000 mm high strip, inside at x = 0
    inside = model.surfaces[0]
    half = Surface(inside.environment, inside.resistance, ((0, 0), (0, 400)))
    model = dataclasses.replace(model, surfaces=[half, model.surfaces[1]])
    mesh = build_mesh(model)
    ends = mesh.nodes[mesh.boundary_edges[mesh.boundary_surface == 0]]
    assert ends[:, :, 1].max() == pytest.approx(0.4, abs=1e-12)
    length = np.linalg.norm(ends[:, 1] - ends[:, 0], axis=1).sum()
    assert length == pytest.approx(0.4, rel=1e-12)


# -- thin layers: one element across, the neighbours' size along ------------------
#
# A 1 mm steel liner over the whole height of a 2000 mm wall (the README's
# wall with a plate through its insulation). The expectations are geometric
# (which nodes exist where); the physics of such meshes is checked against an
# independent reference in tests/test_thin_layers.py.


def _thin_wall(liner=1.0, sloped=False):
    b = thin_layer_models()
    if sloped:
        return loads(b.models()["sloped sheet 0.5 mm"])
    return loads(b.wall_text("liner", [("concrete", 200 - liner), ("steel", liner),
                                       ("insulation", 160)]))


def _strip_nodes(mesh, x0, x1):
    """Nodes on the two faces x0 and x1 of a vertical strip, and strictly inside [m]."""
    x = mesh.nodes[:, 0]
    on0 = np.isclose(x, x0, rtol=0, atol=1e-9)
    on1 = np.isclose(x, x1, rtol=0, atol=1e-9)
    inside = (x > x0 + 1e-9) & (x < x1 - 1e-9)
    return on0, on1, inside


@pytest.mark.parametrize("liner", [1.0, 0.2])
def test_thin_liner_is_a_ladder_of_needles(liner):
    """First mesh of the study: one element across the liner (no node inside
    it) except within ten thicknesses of where the plate meets it, every node
    on one face of the liner faces a node on the other (same height), and the
    whole section takes under 1 000 nodes (isotropic elements across a 0.2 mm
    layer took 59 487)."""
    model = _thin_wall(liner)
    mesh = build_mesh(model, convergence.FIRST_MESH)
    x0, x1 = (200 - liner) * 1e-3, 0.2
    on0, on1, inside = _strip_nodes(mesh, x0, x1)
    assert (np.abs(mesh.nodes[inside, 1] - 1.0) <= 5e-3 + 10 * liner * 1e-3).all()
    y0 = np.sort(mesh.nodes[on0, 1])
    y1 = np.sort(mesh.nodes[on1, 1])
    np.testing.assert_allclose(y0, y1, rtol=0, atol=1e-9)
    assert mesh.node_count < 1000
    # needles: the liner's elements are far longer than thick, its ends keep
    # one segment, and it is refined to about its thickness where the plate
    # meets it (y = 995 and 1005 mm)
    steel = mesh.region == 1                      # the liner: regions[1]
    p = mesh.nodes[mesh.triangles[steel]]
    height = np.ptp(p[:, :, 1], axis=1)
    assert height.max() > 20 * liner * 1e-3
    gaps = np.diff(y1)
    near_plate = np.abs(y1[:-1] - 0.995) < 1e-3
    assert gaps[near_plate].min() <= 2 * liner * 1e-3


def test_thin_liner_mesh_keeps_tags_and_is_deterministic():
    """The strip meshing changes no tag: regions cover their areas exactly, the
    interior and exterior faces carry their surfaces over the full 2 m, and two
    runs give the same mesh."""
    model = _thin_wall(0.2)
    a = build_mesh(model, convergence.FIRST_MESH)
    b = build_mesh(model, convergence.FIRST_MESH)
    assert np.array_equal(a.nodes, b.nodes) and np.array_equal(a.triangles, b.triangles)
    p = a.nodes[a.triangles]
    area = 0.5 * ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                  - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    assert (area > 0).all()
    liner = area[a.region == 1].sum()
    assert liner == pytest.approx(0.2e-3 * 2.0, rel=1e-9)
    assert area[a.region == 3].sum() == pytest.approx(0.160 * 0.010, rel=1e-9)
    e = a.boundary_edges
    length = np.linalg.norm(a.nodes[e[:, 1]] - a.nodes[e[:, 0]], axis=1)
    assert length[a.boundary_surface == 0].sum() == pytest.approx(2.0, rel=1e-12)
    assert length[a.boundary_surface == 1].sum() == pytest.approx(2.0, rel=1e-12)
    from test_adapt import check_conforming
    check_conforming(a)


def test_sloped_sheet_nodes_face_each_other():
    """A 0.5 mm steel sheet crossing the insulation on a slope (a polygon, not
    axis-aligned) is meshed as a strip too: away from its ends (ten
    thicknesses), no node lies inside it and the nodes of its two faces pair
    up, each pair offset along the sheet by the same amount, less than half
    the thickness (its ends are vertical, not square to it: the ladder's
    rungs are parallel to them)."""
    model = _thin_wall(sloped=True)
    mesh = build_mesh(model, convergence.FIRST_MESH)
    sheet = len(model.regions) - 1
    nodes = np.unique(mesh.triangles[mesh.region == sheet])
    p = mesh.nodes[nodes] * 1e3                                   # [mm]
    axis = np.array([160.0, 50.0]) / math.hypot(160.0, 50.0)
    normal = np.array([-axis[1], axis[0]])
    offset = (p - [200.0, 900.0]) @ normal
    along = (p - [200.0, 900.0]) @ axis
    thickness = 0.5 * axis[0]                                     # 0.5 mm measured vertically
    middle = (along > 10 * thickness) & (along < along.max() - 10 * thickness)
    lower = np.isclose(offset, 0, atol=1e-6) & middle
    upper = np.isclose(offset, thickness, atol=1e-6) & middle
    assert (lower | upper)[middle].all()                          # no node inside the sheet
    assert lower.sum() == upper.sum() > 3
    shift = np.sort(along[upper]) - np.sort(along[lower])
    np.testing.assert_allclose(shift, shift[0], rtol=0, atol=1e-6)
    assert abs(shift[0]) < 0.5 * 0.5 * axis[0]
    assert mesh.node_count < 2000


def test_thin_layers_off_by_default_and_for_shapes_that_are_no_strip():
    """The single-mesh default (MeshOptions()) meshes every part by its
    thickness as before (for the 1 mm liner, 25 times the nodes of the
    study's first mesh with the option off); an L-shaped sheet drawn as one
    polygon is no straight strip and is meshed as before by the study's first
    mesh too."""
    assert MeshOptions().thin_aspect == math.inf
    model = _thin_wall(1.0)
    plain = build_mesh(model, dataclasses.replace(convergence.FIRST_MESH,
                                                  thin_aspect=math.inf))
    assert plain.node_count > 10 * build_mesh(model, convergence.FIRST_MESH).node_count
    text = thin_layer_models().wall_text(
        "L", [("concrete", 200), ("insulation", 160)], plate=None,
        extra_regions=[("steel", [(200, 500), (300, 500), (300, 501), (201, 501), (201, 1500),
                                  (200, 1500)])])
    shape = loads(text)
    a = build_mesh(shape, convergence.FIRST_MESH)
    b = build_mesh(shape, dataclasses.replace(convergence.FIRST_MESH, thin_aspect=math.inf))
    assert np.array_equal(a.nodes, b.nodes) and np.array_equal(a.triangles, b.triangles)


def test_strip_meshing_gmsh_refuses_falls_back(monkeypatch):
    """Should gmsh refuse the periodic strip meshing, the model is meshed with
    every part by its own thickness, as without thin layers: no error."""
    model = _thin_wall(1.0)

    def refuse(gmsh, strips, part_size):
        raise Exception("gmsh refused")

    monkeypatch.setattr(mesh_module, "align_strips", refuse)
    fallback = build_mesh(model, convergence.FIRST_MESH)
    plain = build_mesh(model, dataclasses.replace(convergence.FIRST_MESH, thin_aspect=math.inf))
    assert np.array_equal(fallback.nodes, plain.nodes)


@pytest.mark.parametrize("value", [0, 0.5, -1, float("nan"), True, "20"])
def test_thin_aspect_must_be_at_least_one(value):
    with pytest.raises(ModelError, match="thin_aspect"):
        MeshOptions(thin_aspect=value)
