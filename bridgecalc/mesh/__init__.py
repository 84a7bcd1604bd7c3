"""Model → conforming triangular mesh, and nested refinement of it.

``build`` meshes a model with gmsh (the only place gmsh is imported; thin
strips in ``strips``), ``refinement`` splits triangles keeping material and
surface tags exact, ``types`` holds :class:`Mesh` and :class:`MeshOptions`.
"""

from .build import build_mesh, region_polygons
from .refinement import refine
from .types import Mesh, MeshOptions

__all__ = ("Mesh", "MeshOptions", "build_mesh", "refine", "region_polygons")
