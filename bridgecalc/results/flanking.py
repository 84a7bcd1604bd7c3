"""Flanking elements: their U (given, or by ISO 6946 from a layer stack), their
U·l, and which coupling coefficient each counts against (Ψ = L − Σ U·l).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import ModelError
from ..model import Flanking, Model
from ..model.rules import two_temperature_sides
from ..physics import iso6946


def flanking_u_value(model: Model, flanking: Flanking) -> float:
    """Thermal transmittance Uj of a flanking element [W/(m²·K)].

    The given ``u_value``, or, for a layer stack, U = 1 / (Rsi + ΣRj + Rse)
    by ISO 6946:2017 Formulae (7)–(9) (:func:`bridgecalc.physics.iso6946.u_value_plane_layers`)
    with thicknesses converted to metres. A layer of an air-layer material
    takes R from ISO 6946 Annex D for that layer's own thickness
    (:func:`bridgecalc.physics.iso6946.air_layer_resistance`). (Rsi, Rse) default to
    :data:`bridgecalc.physics.iso6946.DEFAULT_SURFACE_RESISTANCES`.

    Parameters
    ----------
    model : Model
        Supplies materials and the length unit.
    flanking : Flanking
        One of ``model.flanking`` (or any validated flanking element).
    """
    if flanking.u_value is not None:
        return float(flanking.u_value)
    scale = model.metres_per_unit
    resistances = []
    for layer in flanking.layers:
        mat = model.materials.get(layer.material)
        if mat is None:
            raise ModelError(f"{model.origin}: flanking {flanking.name!r}: material "
                             f"{layer.material!r} is not defined")
        d = float(layer.thickness) * scale
        if mat.air_layer is not None:
            resistances.append(iso6946.air_layer_resistance(
                d, mat.air_layer.direction, tuple(mat.air_layer.emissivities)))
        else:
            resistances.append(iso6946.thermal_resistance(d, float(mat.conductivity)))
    rsi, rse = flanking.surface_resistances or iso6946.DEFAULT_SURFACE_RESISTANCES
    return iso6946.u_value_plane_layers(resistances, float(rsi), float(rse))


@dataclass
class FlankingResult:
    """One flanking element's share of the 1D heat flow.

    Attributes
    ----------
    name : str
    u_value : float
        [W/(m²·K)]
    length : float
        [length_unit]
    ul : float
        U·l [W/(m·K)].
    between : (str, str) or None
        The pair of environments it separates, as the model names it.
    """

    name: str
    u_value: float
    length: float
    ul: float
    between: tuple[str, str] | None = None

    def to_dict(self) -> dict:
        """The entry of results.json's ``flanking`` lists."""
        out = {"name": self.name, "u_value": self.u_value, "length": self.length,
               "ul": self.ul}
        if self.between is not None:
            out["between"] = list(self.between)
        return out


def flanking_results(model: Model) -> list[FlankingResult]:
    """U, length and U·l of every flanking element, in model order."""
    out = []
    for f in model.flanking:
        u = flanking_u_value(model, f)
        out.append(FlankingResult(f.name, u, f.length, u * f.length * model.metres_per_unit,
                                  None if f.between is None else tuple(f.between)))
    return out


def pair_key(model: Model, between) -> tuple[str, str]:
    """A pair of environment names in model order (L_ij = L_ji)."""
    names = [e.name for e in model.environments]
    a, b = between
    return (a, b) if names.index(a) < names.index(b) else (b, a)


def counts_in_two_temperature_psi(model: Model, flanking: FlankingResult) -> bool:
    """Whether a flanking element's U·l counts in the two-temperature Ψ: it
    names no pair, or a pair of environments at different temperatures."""
    if two_temperature_sides(model) is None:
        return False
    if flanking.between is None:
        return True
    a, b = (model.environment(name).temperature for name in flanking.between)
    return a != b


def flanking_by_coupling(model: Model, results: list[FlankingResult] | None = None) -> dict:
    """The flanking elements each coupling coefficient is reduced by: keyed
    None for the two-temperature Ψ, and by pair (model order) for Ψ_ij. An
    element without ``between`` counts against the one pair of a model with
    two environments."""
    results = flanking_results(model) if results is None else results
    groups: dict = {}
    for f in results:
        if counts_in_two_temperature_psi(model, f):
            groups.setdefault(None, []).append(f)
        if f.between is not None:
            groups.setdefault(pair_key(model, f.between), []).append(f)
        elif len(model.environments) == 2:
            groups.setdefault(pair_key(model, [e.name for e in model.environments]),
                              []).append(f)
    return groups


def flanking_sums(model: Model, results: list[FlankingResult] | None = None) -> dict:
    """Σ U·l [W/(m·K)] per coupling coefficient with flanking elements, keyed as
    :func:`flanking_by_coupling`."""
    return {key: math.fsum(f.ul for f in members)
            for key, members in flanking_by_coupling(model, results).items()}
