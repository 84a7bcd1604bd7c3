"""What a mesh is, and how fine to make one."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ModelError


@dataclass(frozen=True)
class MeshOptions:
    """How fine to mesh.

    Attributes
    ----------
    refinement : float
        Divides every target element size; 2 halves them all (about four times
        the elements). ISO 10211's doubling check uses 2.
    cells_across_model : float
        Coarsest size is the model's largest dimension divided by this [-].
    cells_across_part : float
        Elements across the thickness of each part (fragment) [-].
    corner_ratio : float
        Element size at a geometric corner relative to the size of the parts
        meeting there [-].
    surface_ratio : float
        Element size along interior surfaces relative to the coarsest size [-].
    growth : float
        Rate at which the size grows away from corners and surfaces
        [m of size per m of distance].
    thin_aspect : float
        A fragment that is a straight strip at least this many times longer
        than thick, and at most a quarter as thick as the elements of the
        parts along it (:data:`STRIP_NEIGHBOUR_RATIO`), is meshed with one
        element across and its neighbours' size along (see the module
        docstring, step 3a) [-]; ``inf`` (the default) meshes every fragment
        by its own thickness.
    """

    refinement: float = 1.0
    cells_across_model: float = 25.0
    cells_across_part: float = 3.0
    corner_ratio: float = 0.2
    surface_ratio: float = 0.25
    growth: float = 0.35
    thin_aspect: float = math.inf

    def __post_init__(self):
        if not (isinstance(self.refinement, (int, float)) and math.isfinite(self.refinement)
                and self.refinement > 0):
            raise ModelError(f"mesh refinement must be a positive number, got {self.refinement!r}")
        aspect = self.thin_aspect
        if isinstance(aspect, bool) or not isinstance(aspect, (int, float)) or not aspect >= 1:
            raise ModelError(f"thin_aspect must be a number of at least 1 (inf: never), got "
                             f"{self.thin_aspect!r}")


@dataclass
class Mesh:
    """A conforming triangular mesh of a model.

    Attributes
    ----------
    nodes : ndarray, shape (N, 2)
        Node coordinates [m].
    triangles : ndarray of int, shape (T, 3)
        Node indices, counter-clockwise.
    region : ndarray of int, shape (T,)
        Index into ``model.regions`` of the region each triangle belongs to.
    boundary_edges : ndarray of int, shape (F, 2)
        Node indices of every outline edge.
    boundary_surface : ndarray of int, shape (F,)
        Index into ``model.surfaces`` per outline edge; -1 where adiabatic.
    metres_per_unit : float
        Scale of the model's length unit [m per length_unit].
    """

    nodes: np.ndarray = field(repr=False)
    triangles: np.ndarray = field(repr=False)
    region: np.ndarray = field(repr=False)
    boundary_edges: np.ndarray = field(repr=False)
    boundary_surface: np.ndarray = field(repr=False)
    metres_per_unit: float

    def __repr__(self) -> str:
        return f"Mesh({self.node_count} nodes, {self.triangle_count} triangles)"
    _skfem: object = field(default=None, repr=False, compare=False)
    #: The mesh this one was refined from (:func:`bridgecalc.mesh.refine`), or None.
    coarser: "Mesh | None" = field(default=None, repr=False, compare=False)
    #: Sparse (N, N_coarser) interpolation of P1 node values from ``coarser``
    #: to this mesh (the coarse space is a subspace: meshes are nested), or None.
    prolongation: object = field(default=None, repr=False, compare=False)

    @property
    def skfem(self):
        """The same mesh as a :class:`skfem.MeshTri` (built once)."""
        if self._skfem is None:
            from skfem import MeshTri
            self._skfem = MeshTri(np.ascontiguousarray(self.nodes.T),
                                  np.ascontiguousarray(self.triangles.T),
                                  sort_t=False)
        return self._skfem

    @property
    def node_count(self) -> int:
        return len(self.nodes)

    @property
    def triangle_count(self) -> int:
        return len(self.triangles)
