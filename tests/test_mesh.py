"""Mesh properties the core relies on (ISO 10211 case 2 geometry)."""

import numpy as np
import pytest

from bridgecalc import validation
from bridgecalc.mesh import build_mesh

from conftest import triangle_angles


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
