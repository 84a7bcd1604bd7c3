"""The kinds of boundary, each with its matrix term, its load and its heat flow.

A surface Γj faces its environment at θj through a surface resistance Rj
(ISO 10211:2017, 7.2 and Annex A):

* :class:`ResistanceBoundary`, Rj > 0: the flux condition −λ∂θ/∂n = hj(θ − θj),
  hj = 1/Rj, adds hj ∫Γj θ v dΓ to the matrix and hj θj ∫Γj v dΓ to the load;
  the heat flow into the model is hj (θj |Γj| − ∫Γj θ dΓ);
* :class:`HeldBoundary`, Rj = 0 (or at most ``model.types.HELD_RESISTANCE``):
  θ = θj on Γj; its degrees of freedom are
  eliminated, and the heat flow into the model is the residual of the
  discrete equations at them (consistent boundary flux), so the flows balance
  to round-off;
* adiabatic (no surface, or Rj = ∞): no term at all; cut-off and symmetry
  planes.

Which kind a surface is depends only on its resistance, so all calculation
cases with the same resistances (a *resistance set*) share one matrix.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ..mesh import Mesh
from ..model.types import holds_temperature


@dataclass(frozen=True)
class ResistanceBoundary:
    """Surface ``index`` exchanging heat through a resistance R > 0 [m²·K/W]."""

    index: int
    resistance: float

    @property
    def coefficient(self) -> float:
        """h = 1/R [W/(m²·K)]."""
        return 1.0 / self.resistance

    def load(self, surface_load: np.ndarray, temperatures: np.ndarray) -> np.ndarray:
        """h θj ∫Γj v for each case [W/m], shape (n, k).

        ``temperatures``: θj of this surface's environment per case [°C], shape (k,).
        """
        return np.outer(surface_load, self.coefficient * np.asarray(temperatures, float))

    def flow(self, surface_load: np.ndarray, theta: np.ndarray,
             temperatures: np.ndarray) -> np.ndarray:
        """Heat flow into the model through the surface per case [W/m], shape (k,):
        h (θj |Γj| − ∫Γj θ dΓ)."""
        return self.coefficient * (np.asarray(temperatures, float) * surface_load.sum()
                                   - surface_load @ theta)


@dataclass(frozen=True)
class HeldBoundary:
    """Surface ``index`` held at its environment's temperature (R = 0)."""

    index: int

    @staticmethod
    def flow(residual: np.ndarray, held_here: np.ndarray) -> np.ndarray:
        """Heat flow into the model per case [W/m], shape (k,): the discrete
        equations' residual A θ − b summed over the degrees of freedom it holds."""
        return residual[held_here].sum(axis=0)


def boundary_kinds(resistances) -> list:
    """One boundary object per surface: ResistanceBoundary, HeldBoundary, or
    None (adiabatic: resistance ∞ or None).

    Parameters
    ----------
    resistances : sequence of float or None
        Rj per surface [m²·K/W].
    """
    kinds = []
    for j, r in enumerate(resistances):
        if r is None or math.isinf(r):
            kinds.append(None)
        elif not holds_temperature(r):
            kinds.append(ResistanceBoundary(j, float(r)))
        else:
            kinds.append(HeldBoundary(j))
    return kinds


def held_nodes(mesh: Mesh, held_surfaces) -> np.ndarray:
    """Mask of the mesh nodes on the outline edges of the given surfaces."""
    mask = np.zeros(mesh.node_count, dtype=bool)
    if held_surfaces:
        on = np.isin(mesh.boundary_surface, sorted(held_surfaces))
        mask[mesh.boundary_edges[on].ravel()] = True
    return mask


def floating_part(mesh: Mesh, held_surfaces, exchanging_surfaces) -> bool:
    """Whether a connected part of the solid exchanges heat with nothing.

    Such a part neither touches a surface with a finite resistance nor a held
    one, so its temperature level is undefined and the system singular.
    Nested refinement keeps the parts and what they touch, so the check runs
    on the coarsest mesh of the refinement chain (``mesh.coarser``).

    Parameters
    ----------
    mesh : Mesh
    held_surfaces, exchanging_surfaces : collection of int
        Surfaces with R = 0, and with R > 0.
    """
    while mesh.coarser is not None:
        mesh = mesh.coarser
    n = mesh.node_count
    held = held_nodes(mesh, held_surfaces)
    anchored = held_nodes(mesh, exchanging_surfaces) & ~held
    t = mesh.triangles
    ends = np.concatenate([t[:, [0, 1]], t[:, [1, 2]], t[:, [2, 0]]])
    one_held = held[ends[:, 0]] != held[ends[:, 1]]
    anchored[ends[one_held].ravel()] = True                 # next to a held node
    free_edges = ends[~held[ends[:, 0]] & ~held[ends[:, 1]]]
    graph = sp.coo_matrix((np.ones(len(free_edges)), (free_edges[:, 0], free_edges[:, 1])),
                          shape=(n, n))
    n_parts, label = connected_components(graph, directed=False)
    anchored &= ~held
    parts_anchored = np.bincount(label[anchored], minlength=n_parts) > 0
    in_use = np.bincount(label[~held], minlength=n_parts) > 0
    return bool(np.any(in_use & ~parts_anchored))
