"""Rules on the outline: adiabatic edges that cannot be cut-off or symmetry
planes, and surface paths that stop short.

An outline edge on no surface path is adiabatic. ISO 10211 (from memory)
makes the cut-off planes adiabatic, and symmetry planes are adiabatic by
symmetry; both are straight and bound the model: the whole solid lies on one
side of them. Any other adiabatic edge is a surface the file forgot.
"""

from __future__ import annotations

import numpy as np

from ..model.checker import fmt_point
from .findings import Finding
from .layout import Layout, Piece


def _from_to(a, b) -> str:
    return f"from {fmt_point(_round(a))} to {fmt_point(_round(b))}"


def _round(p):
    return tuple(float(f"{c:.6g}") for c in p)


def _env(layout: Layout, surface: int) -> str:
    return layout.model.surfaces[surface].environment


def adiabatic_runs(layout: Layout) -> list[tuple[list[Piece], Piece | None, Piece | None]]:
    """Maximal runs of consecutive adiabatic pieces of every ring, with the
    pieces before and after them (None when the whole ring is adiabatic)."""
    out = []
    for ring in layout.rings:
        pieces = ring.pieces
        n = len(pieces)
        adiabatic = [p.surface is None for p in pieces]
        if all(adiabatic):
            out.append((list(pieces), None, None))
            continue
        # start at a claimed piece so that no run wraps around the end
        first = next(k for k in range(n) if not adiabatic[k])
        order = [pieces[(first + k) % n] for k in range(n)]
        run = []
        for k, p in enumerate(order):
            if p.surface is None:
                run.append(p)
                continue
            if run:
                out.append((run, order[k - len(run) - 1], p))
                run = []
        if run:
            out.append((run, order[-len(run) - 1], order[0]))
    return out


def stray_adiabatic_edges(layout: Layout) -> list[Finding]:
    """Adiabatic edges that cannot be cut-off or symmetry planes.

    * an adiabatic run between two surfaces of the same environment that is
      not one straight edge (a forgotten ceiling or reveal: a straight
      cut-off through a floor between two rooms of one environment is fine);
    * edges of a void enclosed by the solid;
    * edges not on the model's outer extent in their outward direction.
    """
    unit = layout.model.length_unit
    found = []
    reported = {id(p) for p, _, _ in layout.stopped_short}
    for run, before, after in adiabatic_runs(layout):
        if any(layout.along_gap(p) for p in run):
            reported.update(id(p) for p in run)       # the gap's own finding explains it
            continue
        ring = layout.rings[run[0].ring]
        length = sum(p.length for p in run)
        if ring.hole:
            at = run[0].middle
            found.append(Finding(
                "adiabatic void", at,
                f"the edges of a void enclosed by the solid ({length:.4g} {unit} of them, "
                f"e.g. {_from_to(run[0].start, run[0].end)}) face no environment, so they are "
                f"adiabatic: a cavity drawn as a void blocks heat like a perfect insulator",
                "draw the cavity as a material (an air layer, ISO 6946 equivalent "
                "conductivity), or give its edges a surface if it is open to an environment"))
            reported.update(id(p) for p in run)
            continue
        # (a run from one end of a surface round to its other end is the rest
        # of the outline, which an unfaced environment's warning explains)
        if (before is not None and after is not None and before is not after
                and len(run) > 1 and _env(layout, before.surface) == _env(layout, after.surface)):
            env = _env(layout, before.surface)
            found.append(Finding(
                "adiabatic between one environment", run[0].middle,
                f"the outline {_from_to(run[0].start, run[-1].end)} ({len(run)} straight "
                f"edges, {length:.4g} {unit}) is adiabatic, between two surfaces facing "
                f"{env!r}: a cut-off plane is one straight edge, so this looks like a "
                f"forgotten surface (a ceiling, a floor, a reveal)",
                f"give these edges a [[surfaces]] table (environment {env!r}?), or make the "
                f"cut-off plane one straight edge"))
            reported.update(id(p) for p in run)
    for ring in layout.rings:
        if ring.hole:
            continue
        for p in ring.pieces:
            if p.surface is not None or id(p) in reported or layout.on_extent(p):
                continue
            inside = layout.extent(p.normal) - float(p.start @ p.normal)
            found.append(Finding(
                "adiabatic inside the extent", p.middle,
                f"the adiabatic edge {_from_to(p.start, p.end)} lies {inside:.4g} {unit} "
                f"inside the model's outer extent in its direction, so it cannot be a "
                f"cut-off or symmetry plane (those bound the model: all of it lies on one "
                f"side of them)",
                "give the edge the surface of the environment it faces (a forgotten "
                "[[surfaces]] path, or a path that stops short?)"))
    return found


def partial_surfaces(layout: Layout) -> list[Finding]:
    """A surface path that covers only part of a straight outline run, the
    rest of the run left adiabatic (a path that stops short)."""
    unit = layout.model.length_unit
    found = []
    for p, run, s in layout.stopped_short:
        start, end = run[0].start, run[-1].end
        total = float(np.hypot(*(end - start)))
        covered = sum(q.length for q in run if q.surface == s)
        found.append(Finding(
            "surface stops short", p.middle,
            f"surfaces[{s}] ({_env(layout, s)!r}) covers {covered:.4g} of the "
            f"{total:.4g} {unit} of the straight outline {_from_to(start, end)}; the "
            f"rest, {_from_to(p.start, p.end)} ({p.length:.4g} {unit}), is adiabatic",
            f"extend surfaces[{s}].path over the whole straight run, or, if that part "
            f"faces another environment, give it its own surface"))
    return found
