"""Exports and the post-processing they share with the figures.

References: ISO 6946:2017, 6.7.1 (U of plane layers, U = 1/(Rsi + Σd/λ + Rse));
Fourier's law q = −λ∇θ; far from a junction, between adiabatic cut-off planes,
the flow is one-dimensional, so q = U (θi − θe) and the interior surface sits
at θi − Rsi U (θi − θe) (ISO 13788 surface-temperature method, from memory).
"""

import csv
import io

import meshio
import numpy as np
import pytest

from bridgecalc.outputs import exports
from bridgecalc.results import heat_flux_density, interior_surface_profiles

# The scenario's external wall (geometries/slab_edge.py defaults): clay masonry
# 240 mm, λ 0.7; EPS 160 mm, λ 0.035; from the scenario's material table.
WALL = [(0.240, 0.7), (0.160, 0.035)]


@pytest.fixture(scope="module")
def slab_edge(geometries):
    """The slab edge, whose wall is one-dimensional 1 m from the slab (the demo's
    balcony slab still bends the flow there by 2 %)."""
    from bridgecalc.api import load, run
    return run(load(geometries / "slab_edge.py"))


def u_plane(rsi, rse=0.04):
    """ISO 6946:2017, 6.7.1: U = 1/(Rsi + Σ d/λ + Rse) [W/(m²·K)]."""
    return 1.0 / (rsi + sum(d / k for d, k in WALL) + rse)


def test_vtu_reads_back_as_the_solution(demo, tmp_path):
    path = tmp_path / "field.vtu"
    exports.write_vtu(demo, path)
    back = meshio.read(path)
    scale = 1.0 / demo.model.metres_per_unit
    np.testing.assert_allclose(back.points[:, :2], demo.mesh.nodes * scale, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(back.cells_dict["triangle"], demo.mesh.triangles)
    np.testing.assert_allclose(back.point_data["temperature_heat_flow_case"],
                               demo.heat_flow_case.field.nodal, rtol=0, atol=1e-12)
    np.testing.assert_allclose(back.point_data["temperature_surface_temperature_case"],
                               demo.surface_temperature_case.field.nodal, rtol=0, atol=1e-12)
    names = exports.material_names(demo.model)
    index = back.cell_data["material_index"][0]
    expected = [names.index(demo.model.regions[r].material) for r in demo.mesh.region]
    np.testing.assert_array_equal(index, expected)
    k = back.cell_data["conductivity"][0]
    assert np.allclose(k, [demo.model.materials[names[i]].conductivity for i in index])


def test_heat_flux_far_from_the_slab_is_the_one_dimensional_u_times_dt(slab_edge):
    # Fourier's law and ISO 6946 U (Rsi 0.13, Rse 0.04) of the scenario's wall
    q = heat_flux_density(slab_edge.model, slab_edge.heat_flow_case.field)
    xy = slab_edge.mesh.nodes / slab_edge.model.metres_per_unit
    centroid = xy[slab_edge.mesh.triangles].mean(axis=1)
    far = centroid[:, 1] > 1300          # > 1 m above the slab top (220 mm)
    expected = u_plane(0.13) * 20.0      # θi − θe = 20 K
    assert np.allclose(q[far, 0], expected, rtol=0.01)
    assert np.all(np.abs(q[far, 1]) < 0.01 * expected)


def test_surface_profile_runs_follow_the_interior_surfaces(slab_edge):
    profiles = interior_surface_profiles(slab_edge.model,
                                         slab_edge.surface_temperature_case.field)
    assert len(profiles) == 2           # broken by the slab's cut-off plane in the room
    first = profiles[0]
    np.testing.assert_allclose(first.points[0], slab_edge.model.surfaces[0].path[0])
    # wall above (1200 mm) + floor (1000 mm), from the model's paths
    assert first.arc_length[-1] == pytest.approx(2200.0)
    assert set(first.surface) == {0, 1}
    # one-dimensional surface temperature at the top cut-off, Rsi 0.25 (ISO 13788)
    expected = 20.0 - 0.25 * u_plane(0.25) * 20.0
    assert first.temperature[0] == pytest.approx(expected, abs=0.02)
    lowest = min(p.temperature.min() for p in profiles)
    assert lowest == pytest.approx(slab_edge.theta_si_min, abs=1e-9)   # P1: nodes hold the extremes


def test_csv_row_carries_the_headline_numbers(demo):
    text = exports.csv_text(exports.headline_row(demo, 0.75, "external", "9.9"))
    rows = list(csv.DictReader(io.StringIO(text)))
    assert len(rows) == 1
    row = rows[0]
    assert float(row["psi_W_per_mK"]) == demo.psi
    assert float(row["coupling_coefficient_W_per_mK"]) == demo.coupling_coefficient
    assert float(row["f_rsi"]) == demo.f_rsi
    assert row["f_rsi_verdict"] == ("passes" if demo.f_rsi >= 0.75 else "fails")
    assert row["dimension_system"] == "external"
    assert exports.csv_text(exports.headline_row(demo, 0.75, "external", "9.9")) == text
