"""Post-processing of fields for figures and exports: heat-flux density and
the temperature along interior surfaces. No assembly here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..model import Model
from ..solve.assembly import p1_gradients


def heat_flux_density(model: Model, temperature_field) -> np.ndarray:
    """Heat-flux density q = −λ∇θ, averaged over each triangle [W/m²].

    Fourier's law. For P1 elements ∇θ is constant in a triangle, so the value
    is exact for the discrete field; for P2 it is the area mean of the
    triangle's linear gradient.

    Parameters
    ----------
    model : Model
    temperature_field : bridgecalc.solve.TemperatureField

    Returns
    -------
    ndarray, shape (T, 2)
        (qx, qy) per mesh triangle [W/m²], in mesh triangle order.
    """
    problem = temperature_field.problem
    mesh = problem.mesh
    conductivity = np.array([model.materials[r.material].conductivity
                             for r in model.regions])[mesh.region]
    if problem.element == "P1":
        # the constant gradient of each triangle in closed form (no quadrature),
        # as the error indicators take it
        gradient = p1_gradients(mesh.nodes, mesh.triangles,
                                np.asarray(temperature_field.temperature))   # [K/m]
        return -(conductivity[:, None] * gradient)
    basis = problem.basis
    gradient = basis.interpolate(temperature_field.temperature).grad    # (2, T, nqp) [K/m]
    weights = basis.dx                                                 # (T, nqp) [m²]
    mean = (gradient * weights[None]).sum(axis=2) / weights.sum(axis=1)[None]
    return -(conductivity[:, None] * mean.T)


@dataclass
class SurfaceProfile:
    """Temperatures along one connected run of interior surface.

    Attributes
    ----------
    points : ndarray, shape (K, 2)
        Positions along the run [length_unit], in walking order.
    arc_length : ndarray, shape (K,)
        Distance along the run from its first point [length_unit].
    temperature : ndarray, shape (K,)
        Surface temperature [°C] at each point.
    surface : ndarray of int, shape (K - 1,)
        Index into ``model.surfaces`` of each piece between two points.
    """

    points: np.ndarray
    arc_length: np.ndarray
    temperature: np.ndarray
    surface: np.ndarray


def interior_surface_profiles(model: Model, temperature_field) -> list[SurfaceProfile]:
    """Surface temperature along every connected run of interior surface.

    Outline edges facing an interior environment are chained end to end; a
    run ends where the outline turns adiabatic (a cut-off plane) or faces
    an exterior environment. Each run starts at the end nearer to the first
    point of the lowest-numbered surface it contains, so the order follows
    the model's surface paths. Values are the field's own degrees of
    freedom: edge ends, and edge midpoints for P2.

    Parameters
    ----------
    model : Model
    temperature_field : bridgecalc.solve.TemperatureField
        Usually the surface-temperature case's field.

    Returns
    -------
    list of SurfaceProfile
        Ordered by the lowest surface index in each run.
    """
    problem = temperature_field.problem
    mesh = problem.mesh
    interior = [j for j, s in enumerate(model.surfaces)
                if model.environment(s.environment).kind == "interior"]
    mask = np.isin(mesh.boundary_surface, interior)
    edge_ids = np.flatnonzero(mask)
    theta = temperature_field.temperature
    mid = problem.edge_midpoint_dofs if problem.element == "P2" else None
    scale = 1.0 / model.metres_per_unit

    touching: dict[int, list[int]] = {}
    for e in edge_ids:
        for node in mesh.boundary_edges[e]:
            touching.setdefault(int(node), []).append(int(e))
    unused = set(int(e) for e in edge_ids)
    profiles = []
    while unused:
        first_surface = min(int(mesh.boundary_surface[e]) for e in unused)
        start_point = np.asarray(model.surfaces[first_surface].path[0], float) / scale
        # the run containing any edge of that surface: walk it to one end first
        seed = min(e for e in unused if mesh.boundary_surface[e] == first_surface)
        run_edges = _connected_run(seed, unused, touching, mesh.boundary_edges)
        ends = [n for n in {int(n) for e in run_edges for n in mesh.boundary_edges[e]}
                if sum(1 for e in touching[n] if e in run_edges) == 1]
        if ends:
            start = min(ends, key=lambda n: (float(np.linalg.norm(mesh.nodes[n] - start_point)),
                                             n))
        else:                                          # a closed loop (a hole)
            start = int(min((int(n) for e in run_edges for n in mesh.boundary_edges[e]),
                            key=lambda n: (float(np.linalg.norm(mesh.nodes[n] - start_point)),
                                           n)))
        points, values, surfaces = [mesh.nodes[start]], [theta[start]], []
        node, remaining = start, set(run_edges)
        while True:
            nxt = sorted(e for e in touching[node] if e in remaining)
            if not nxt:
                break
            e = nxt[0]
            remaining.discard(e)
            a, b = (int(v) for v in mesh.boundary_edges[e])
            other = b if a == node else a
            if mid is not None:
                points.append(0.5 * (mesh.nodes[node] + mesh.nodes[other]))
                values.append(theta[mid[e]])
                surfaces.append(int(mesh.boundary_surface[e]))
            points.append(mesh.nodes[other])
            values.append(theta[other])
            surfaces.append(int(mesh.boundary_surface[e]))
            node = other
        unused -= set(run_edges)
        xy = np.asarray(points) * scale
        arc = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(xy, axis=0), axis=1))])
        profiles.append(SurfaceProfile(xy, arc, np.asarray(values, dtype=float),
                                       np.asarray(surfaces, dtype=np.int64)))
    return profiles


def _connected_run(seed, candidates, touching, edges) -> set:
    """Edges of ``candidates`` connected to ``seed`` through shared nodes."""
    run, stack = {seed}, [seed]
    while stack:
        e = stack.pop()
        for node in edges[e]:
            for f in touching[int(node)]:
                if f in candidates and f not in run:
                    run.add(f)
                    stack.append(f)
    return run
