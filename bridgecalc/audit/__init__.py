"""The audit: what a valid model may have got wrong, found before it is solved.

A model that breaks a rule of the format is refused (:mod:`bridgecalc.model.rules`);
one that keeps every rule can still be a slip that gives a plausible wrong
answer: a slit between two materials, a surface path that stops short, a
flanking layer in the wrong unit. :func:`audit` takes a valid model and
returns one :class:`Finding` per such place, with where it is (in the
model's length unit) and what to do. Each family of rules has its module:

- :mod:`.solid`: pieces that do not touch, slits and gaps, implausible size;
- :mod:`.boundaries`: adiabatic edges that cannot be cut-off or symmetry
  planes, surface paths that stop short;
- :mod:`.cutoff`: cut-off planes nearer than ISO 10211 asks, flanking layers
  that do not match the section drawn;
- :mod:`.materials`: conductivities and resistances outside the range of
  building materials.

:mod:`.layout` is what they share: the outline's straight pieces and who
claims them, and where each material shows.
"""

from __future__ import annotations

from ..model.types import Model
from . import boundaries, cutoff, materials, solid
from .findings import Finding
from .layout import read_layout

#: Every rule, in the order findings are reported.
RULES = (solid.size, solid.falling_apart, solid.slits, boundaries.stray_adiabatic_edges,
         boundaries.partial_surfaces, cutoff.close_cut_off_planes,
         cutoff.stack_against_section, materials.conductivities, materials.resistances)


def audit(model: Model) -> list[Finding]:
    """Findings on a valid model, in :data:`RULES` order (empty when nothing
    looks wrong)."""
    layout = read_layout(model)
    return [finding for rule in RULES for finding in rule(layout)]


def audit_texts(model: Model, findings) -> list[str]:
    """The findings as the lines of results.json ``warnings`` and stderr."""
    layout_size = _size(model)
    return [f.text(model.origin, model.length_unit, layout_size) for f in findings]


def _size(model: Model) -> float:
    from ..model import geometry
    return geometry.largest_dimension([r.vertices for r in model.regions])


__all__ = ("Finding", "RULES", "audit", "audit_texts")
