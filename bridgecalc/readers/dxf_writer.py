"""Any model as a DXF drawing and the model file that reads it (model format 1,
addition C), so a CAD user can open the section, edit it and read it back.

The drawing has one layer per material, each region a closed polyline with a
hatch over it (holes as islands and as closed polylines of their own), and
one layer per surface with its path as a polyline; $INSUNITS says the
model's unit. The model file next to it keeps materials, environments,
resistances, flanking elements and probes, lists the layers in painter's
order under ``[drawing]`` and gives each surface its ``layer``.

A layer holds one material, so the regions' painter's order must become an
order of layers: where regions of different materials overlap, the later
material's layer comes later. When no such order exists (concrete, then
insulation over it, then concrete over the insulation), each region is cut
back to what later regions of other materials leave visible; the drawing
then shows no overlap between materials, and any layer order reads the same.
"""

from __future__ import annotations

import os
import re

import numpy as np
import shapely
from scipy.spatial import cKDTree

from ..model.geometry import largest_dimension
from ..model.outline import region_shapes
from ..model.types import Model
from . import shapes
from .drawing import MM_PER_UNIT

#: $INSUNITS of the model's unit (DXF reference).
INSUNITS = {"mm": 4, "m": 6}
#: Characters a DXF layer name may not hold (DXF reference, symbol table names).
_NOT_IN_LAYER = re.compile(r'[<>/\\":;?*|=`,\x00-\x1f]')
#: AutoCAD colour indices given to the layers in turn.
_COLOURS = (1, 3, 5, 30, 6, 4, 2, 8, 140, 200, 40, 90)


def layer_names(model: Model) -> tuple[dict, list]:
    """Layer names: one per material (``{material: layer}``) and one per
    surface (list, in the model's order), unique ignoring case."""
    used = set()

    def unique(text: str) -> str:
        base = _NOT_IN_LAYER.sub("_", text).strip() or "LAYER"
        name, k = base, 2
        while name.upper() in used:
            name, k = f"{base}-{k}", k + 1
        used.add(name.upper())
        return name

    materials = {}
    for region in model.regions:
        if region.material not in materials:
            materials[region.material] = unique(region.material)
    surfaces = [unique(f"surface-{i + 1}-{s.environment}") for i, s in enumerate(model.surfaces)]
    return materials, surfaces


def _overlaps(model: Model) -> list[tuple[int, int]]:
    """Pairs (i, j), i < j, of regions of different materials whose areas overlap."""
    geoms = region_shapes(model)
    tree = shapely.STRtree(geoms)
    first, second = tree.query(geoms, predicate="intersects")
    pairs = []
    for i, j in zip(first.tolist(), second.tolist()):
        if i < j and model.regions[i].material != model.regions[j].material:
            if shapely.intersection(geoms[i], geoms[j]).area > 0:
                pairs.append((i, j))
    return sorted(pairs)


def layer_order(model: Model) -> list[str] | None:
    """Materials in an order that keeps the painter's order of every pair of
    overlapping regions, nearest to first appearance; None when there is none."""
    materials = list(dict.fromkeys(r.material for r in model.regions))
    after = {m: set() for m in materials}
    for i, j in _overlaps(model):
        after[model.regions[i].material].add(model.regions[j].material)
    before = {m: {a for a in materials if m in after[a]} for m in materials}
    order = []
    while len(order) < len(materials):
        ready = [m for m in materials if m not in order and before[m] <= set(order)]
        if not ready:
            return None
        order.append(ready[0])
    return order


def visible_regions(model: Model) -> list[tuple[str, list]]:
    """(material, [(outline, holes), ...]) per region: each cut back by the
    later regions of other materials that overlap it."""
    geoms = region_shapes(model)
    out = []
    for i, region in enumerate(model.regions):
        cover = [geoms[j] for j in range(i + 1, len(geoms))
                 if model.regions[j].material != region.material
                 and geoms[j].intersects(geoms[i])]
        seen = geoms[i].difference(shapely.union_all(cover)) if cover else geoms[i]
        parts = []
        for poly in getattr(seen, "geoms", [seen]):
            if isinstance(poly, shapely.Polygon) and poly.area > 0:
                parts.append((list(poly.exterior.coords)[:-1],
                              [list(h.coords)[:-1] for h in poly.interiors]))
        out.append((region.material, parts))
    return out


def snap_for(model: Model, rings: list) -> float:
    """A snapping tolerance for reading the drawing back [length_unit]: the
    default, or a tenth of the closest approach of two distinct vertices (or
    a vertex and another ring's edge) when that is smaller, so that no
    feature of the model is snapped away."""
    default = shapes.SNAP_MM / (MM_PER_UNIT[model.length_unit])
    pts = np.concatenate([np.asarray(r, dtype=float) for r in rings])
    closest = np.inf
    unique = np.unique(pts, axis=0)
    if len(unique) > 1:
        pairs = cKDTree(unique).query_pairs(default, output_type="ndarray")
        if len(pairs):
            closest = float(np.min(np.hypot(*(unique[pairs[:, 0]] - unique[pairs[:, 1]]).T)))
    lines = [shapely.LineString(np.vstack([r, r[:1]])) for r in map(np.asarray, rings)]
    tree = shapely.STRtree(lines)
    for k, ring in enumerate(rings):
        for p in np.asarray(ring, dtype=float):
            point = shapely.Point(p)
            for j in tree.query(point, predicate="dwithin", distance=default):
                if j == k:
                    continue
                d = lines[j].distance(point)
                if d > 0:
                    closest = min(closest, d)
    return default if closest >= default else closest / 10


def write_drawing(model: Model, dxf_path, drawing_name: str) -> tuple[object, dict]:
    """The ezdxf document of ``model`` and the ``[drawing]`` content of the model
    file that reads it (see :func:`bridgecalc.readers.modelfile.dumps`).

    Parameters
    ----------
    model : Model
        A validated model.
    dxf_path : str or Path
        Unused except in messages; the caller saves the document.
    drawing_name : str
        The drawing's file name as the model file will give it.
    """
    import ezdxf

    material_layer, surface_layers = layer_names(model)
    order = layer_order(model)
    if order is None:
        drawn = visible_regions(model)
        order = list(material_layer)
    else:
        drawn = [(r.material, [(list(r.vertices), [list(h) for h in r.holes])])
                 for r in model.regions]
    doc = ezdxf.new("R2010", units=INSUNITS[model.length_unit])
    doc.header["$MEASUREMENT"] = 1            # metric
    for k, name in enumerate([material_layer[m] for m in order] + surface_layers):
        doc.layers.add(name, color=_COLOURS[k % len(_COLOURS)])
    msp = doc.modelspace()
    size = largest_dimension([r.vertices for r in model.regions])
    scale = size / (3.175 * 40)               # about 40 hatch lines across the section
    rings = []
    for material in order:
        layer = material_layer[material]
        for owner, parts in drawn:
            if owner != material:
                continue
            for outline, holes in parts:
                rings.append(outline)
                rings.extend(holes)
                attribs = {"layer": layer}
                msp.add_lwpolyline(outline, close=True, dxfattribs=attribs)
                for hole in holes:
                    msp.add_lwpolyline(hole, close=True, dxfattribs=attribs)
                hatch = msp.add_hatch(dxfattribs=attribs)
                hatch.set_pattern_fill("ANSI31", scale=scale)
                hatch.paths.add_polyline_path(outline, is_closed=True, flags=1)
                for hole in holes:
                    hatch.paths.add_polyline_path(hole, is_closed=True, flags=16)
    for surface, layer in zip(model.surfaces, surface_layers):
        msp.add_lwpolyline(list(surface.path), dxfattribs={"layer": layer})
    table = {"file": drawing_name,
             "layers": [{"layer": material_layer[m], "material": m} for m in order],
             "unit": model.length_unit}
    snap = snap_for(model, rings)
    if snap != shapes.SNAP_MM / MM_PER_UNIT[model.length_unit]:
        table["snap"] = snap
    return doc, {"table": table, "surface_layers": surface_layers}


def save(doc, path) -> None:
    """Write an ezdxf document to ``path`` (ASCII DXF)."""
    doc.saveas(os.fspath(path))
