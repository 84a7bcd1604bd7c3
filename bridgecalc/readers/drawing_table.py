"""A model file's ``[drawing]`` table: its keys checked, the drawing read, its
regions and surface paths as model objects (model format 1, addition C).

::

    [drawing]
    file = "balcony.dxf"          # relative to the model file
    layers = [{ layer = "CONCRETE", material = "concrete" }, ...]   # painter's order
    unit = "mm"                   # the drawing's unit when its header does not say
    snap = 0.1                    # added by bridgecalc: snapping tolerance [length_unit],
                                  # default 0.1 mm; 0 turns snapping off

Surfaces give ``layer = "NAME"`` instead of ``path``: every line, polyline,
arc and circle on that layer is a path of the surface (one surface per
path, all with its environment and resistances).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path

from ..model.checker import Checker, describe
from ..model.types import LENGTH_UNITS, DrawingSource, Region, Surface  # noqa: F401
from . import drawing

DRAWING_KEYS = ("file", "layers", "unit", "snap")
LAYER_KEYS = ("layer", "material")
DRAWING_UNITS = tuple(drawing.MM_PER_UNIT)


@dataclass
class LayerSurface:
    """A ``[[surfaces]]`` table that takes its paths from a layer."""

    index: int
    layer: str
    template: Surface


@dataclass
class Drawn:
    """What a drawing gives a model."""

    regions: list
    surfaces: list          # Surface for each path, in the order of the file's surfaces
    source: DrawingSource


def read_table(check: Checker, table, origin: str, length_unit: str, materials: dict,
               surfaces: list) -> Drawn:
    """Read the drawing a ``[drawing]`` table names.

    Parameters
    ----------
    check : Checker
        The model file's checker (messages name the file and the table).
    table : dict
        The ``[drawing]`` table.
    origin : str
        The model file's path; the drawing is found relative to it.
    length_unit : str
        The model's unit.
    materials : dict
        The model's materials, by name.
    surfaces : list of Surface or LayerSurface
        The file's surfaces in order; LayerSurface ones get their paths here.

    Raises
    ------
    ModelError
        For a bad key, or a drawing that cannot be read as asked (naming the
        drawing, the layer and the entity's handle).
    """
    # shapes (shapely, SciPy's k-d tree): loaded for a model with a drawing only
    from . import shapes
    if not isinstance(table, dict):
        check.fail("drawing", f"expected a table [drawing], got {describe(table)}")
    check.keys(table, DRAWING_KEYS, "drawing")
    if "file" not in table:
        check.fail("drawing.file", "missing; give the DXF drawing's path, relative to this file")
    name = check.string(table["file"], "drawing.file")
    unit = table.get("unit")
    if unit is not None:
        check.string(unit, "drawing.unit")
        if unit not in DRAWING_UNITS:
            check.fail("drawing.unit", f"unknown unit {unit!r}; use one of "
                                       f"{', '.join(repr(u) for u in DRAWING_UNITS)}")
    mm_per_model_unit = LENGTH_UNITS[length_unit] * 1000.0
    default_snap = shapes.SNAP_MM / mm_per_model_unit
    snap = check.number(table.get("snap", default_snap), "drawing.snap", minimum=0.0)
    layers = table.get("layers")
    if not isinstance(layers, list) or not layers:
        check.fail("drawing.layers", "expected a list of { layer = \"NAME\", material = "
                                     "\"MATERIAL\" } tables, in drawing order, got "
                                     f"{describe(layers)}")
    listed = []
    for k, entry in enumerate(layers):
        where = f"drawing.layers[{k}]"
        if not isinstance(entry, dict):
            check.fail(where, f"expected {{ layer = ..., material = ... }}, got {describe(entry)}")
        check.keys(entry, LAYER_KEYS, where)
        for key in LAYER_KEYS:
            if key not in entry:
                check.fail(f"{where}.{key}", "missing")
        layer = check.string(entry["layer"], f"{where}.layer")
        material = check.string(entry["material"], f"{where}.material")
        if material not in materials:
            check.fail(f"{where}.material", f"material {material!r} is not defined "
                                            f"(defined: {', '.join(materials) or 'none'})")
        if layer.upper() in (name_.upper() for name_, _ in listed):
            check.fail(f"{where}.layer", f"layer {layer!r} is listed twice; a layer holds "
                                         f"one material")
        listed.append((layer, material))
    surface_layers = [s for s in surfaces if isinstance(s, LayerSurface)]
    for s in surface_layers:
        if s.layer.upper() in (layer.upper() for layer, _ in listed):
            check.fail(f"surfaces[{s.index}].layer",
                       f"layer {s.layer!r} is also a material layer in [drawing] layers; "
                       f"put boundary lines on a layer of their own")

    base = Path(origin).parent if origin and not origin.startswith("<") else Path.cwd()
    path = base / name
    where = f"{origin}: drawing {name}"
    content = drawing.read_drawing(path, [layer for layer, _ in listed],
                                   [s.layer for s in surface_layers], unit, length_unit, where)
    scale = drawing.MM_PER_UNIT[content.unit] / mm_per_model_unit
    material_keys = [layer.upper() for layer, _ in listed]
    for (layer, _), key in zip(listed, material_keys):
        if not content.pieces.get(key):
            raise drawing.DrawingError(
                f"{where}: layer {layer!r} has no closed shape (nothing on it that "
                f"bridgecalc reads); check the layer name against the drawing's layers, "
                f"or leave it out of [drawing] layers")
    for s in surface_layers:
        if not content.pieces.get(s.layer.upper()):
            raise drawing.DrawingError(
                f"{where}: layer {s.layer!r} (surfaces[{s.index}].layer) has no line, "
                f"polyline, arc or circle; check the layer name against the drawing's layers")
    found, paths = shapes.build(material_keys, list({s.layer.upper(): 0 for s in surface_layers}),
                                content.pieces, scale, snap, where)
    material_of = dict(zip(material_keys, (m for _, m in listed)))
    places = []
    regions = []
    for shape in found:
        outline = [tuple(map(float, p)) for p in shape.outline]
        holes = [[tuple(map(float, p)) for p in hole] for hole in shape.holes]
        places.append((f"regions[{len(regions)}]", f"drawing {name}, {shape.source.describe()}"))
        regions.append(Region.polygon(material_of[shape.layer], outline, holes=holes))
    for key in material_keys:
        if not any(s.layer == key for s in found):
            layer = next(layer for layer, _ in listed if layer.upper() == key)
            raise drawing.DrawingError(f"{where}: layer {layer!r} has no closed shape")
    out_surfaces = []
    for s in surfaces:
        if not isinstance(s, LayerSurface):
            out_surfaces.append(s)
            continue
        for line, source in paths[s.layer.upper()]:
            places.append((f"surfaces[{len(out_surfaces)}]",
                           f"surfaces[{s.index}].layer, drawing {name}, {source.describe()}"))
            out_surfaces.append(dataclasses.replace(
                s.template, path=tuple(tuple(map(float, p)) for p in line)))
    source = DrawingSource(name, content.unit, content.unit_from, snap,
                           tuple(content.warnings), tuple(places))
    return Drawn(regions, out_surfaces, source)

