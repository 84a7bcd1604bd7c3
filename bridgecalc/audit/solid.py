"""Rules on the solid as a whole: pieces that do not touch, slits and gaps, size."""

from __future__ import annotations

import numpy as np
import shapely
from shapely.ops import polylabel

from .findings import Finding
from .layout import SLIT_WIDTH, Layout

#: A building junction is larger than this [m] (the smallest detail of
#: interest, a frame section, spans some 50 mm; common practice) ...
SMALLEST_SIZE = 0.020
#: ... and smaller than this [m] (the largest model of the trade, a ground
#: floor with its 20 m ground block, ISO 10211 / ISO 13370, from memory, is
#: about 25 m across).
LARGEST_SIZE = 50.0


def regions_in(layout: Layout, shape) -> list[int]:
    """Indices of the regions whose drawn shape lies in ``shape``."""
    found = []
    for i, region in enumerate(layout.model.regions):
        poly = shapely.Polygon(region.vertices)
        if shape.distance(poly.representative_point()) <= layout.tol:
            found.append(i)
    return found


def _listed(indices) -> str:
    return ", ".join(f"regions[{i}]" for i in indices[:4]) + (" ..." if len(indices) > 4 else "")


def falling_apart(layout: Layout) -> list[Finding]:
    """The solid falls apart into pieces: no heat passes between them, however
    close they are (each piece is faced by some surface, or validation would
    have refused the model)."""
    pieces = layout.pieces
    if len(pieces) < 2:
        return []
    unit = layout.model.length_unit
    found = []
    for p in range(1, len(pieces)):
        others = shapely.union_all([q for k, q in enumerate(pieces) if k != p])
        a, b = shapely.get_coordinates(shapely.shortest_line(pieces[p], others))
        gap = float(np.hypot(*(b - a)))
        found.append(Finding(
            "solid in pieces", (float((a[0] + b[0]) / 2), float((a[1] + b[1]) / 2)),
            f"the solid falls apart into {len(pieces)} pieces that do not touch, so no heat "
            f"passes between them: {_listed(regions_in(layout, pieces[p]))} "
            f"{'is' if len(regions_in(layout, pieces[p])) == 1 else 'are'} "
            f"{gap:.3g} {unit} away from the rest at the closest",
            "close the gap (move the regions onto each other; a drawing's gap?), or draw "
            "what fills it as a material, e.g. an air layer"))
    return found


def slits(layout: Layout) -> list[Finding]:
    """Voids narrower than :data:`SLIT_WIDTH` within one piece of the solid,
    closed or open to the outline (:attr:`Layout.gaps`); gaps between pieces
    are :func:`falling_apart`'s."""
    unit = layout.model.length_unit
    found = []
    for part in layout.gaps:
        touching = [p for p in layout.pieces if p.distance(part) <= 10 * layout.tol]
        if len(touching) > 1:
            continue
        centre, radius = _widest_point(part, SLIT_WIDTH / 2 / layout.metres)
        if radius <= layout.tol:
            continue
        found.append(Finding(
            "slit", centre,
            f"a void about {2 * radius:.2g} {unit} wide and "
            f"{part.area / (2 * radius):.3g} {unit} long inside the solid, narrower than "
            f"{SLIT_WIDTH * 1000:g} mm: its sides are adiabatic, so it blocks the heat "
            f"flow like a perfect insulator",
            "close it (regions that should touch, a drawing's gap?), or draw what fills "
            "it as a material, e.g. an air layer"))
    return found


def _widest_point(part, half: float) -> tuple[tuple[float, float], float]:
    """A point deep inside ``part`` and its distance from the edge (half the width)."""
    poly = max(getattr(part, "geoms", [part]), key=lambda g: g.area)
    point = polylabel(poly, tolerance=half / 50)
    return (float(point.x), float(point.y)), float(poly.exterior.distance(point))


def size(layout: Layout) -> list[Finding]:
    """A model far larger or smaller than a building junction: usually the
    wrong ``length_unit`` (millimetre numbers in a file that says metres)."""
    pts = layout.solid_vertices
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    largest = float((hi - lo).max()) * layout.metres
    unit = layout.model.length_unit
    centre = (float((lo[0] + hi[0]) / 2), float((lo[1] + hi[1]) / 2))
    if largest > LARGEST_SIZE:
        return [Finding(
            "size", centre,
            f"the model is {largest:.4g} m across, more than any building junction "
            f"(about {LARGEST_SIZE:g} m at most)",
            "check length_unit: millimetre numbers in a file that says \"m\"?" if unit == "m"
            else "check the coordinates and length_unit")]
    if largest < SMALLEST_SIZE:
        return [Finding(
            "size", centre,
            f"the model is {largest * 1000:.4g} mm across, less than any building junction "
            f"(about {SMALLEST_SIZE * 1000:g} mm at least)",
            "check length_unit: metre numbers in a file that says \"mm\"?" if unit == "mm"
            else "check the coordinates and length_unit")]
    return []
