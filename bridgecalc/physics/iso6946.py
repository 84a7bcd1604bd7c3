"""ISO 6946 calculations for plane layers and unventilated air layers.

References
----------
ISO 6946:2017, Building components and building elements -- Thermal
resistance and thermal transmittance -- Calculation methods. Clause 6.7
(total thermal resistance of a component of homogeneous layers), 6.5 (surface
resistances, Table 7) and Annex D (unventilated air layers). Values marked
"from memory" were recalled from that standard and not checked against its
current text here.
"""

from __future__ import annotations

import math

from ..errors import ModelError

#: Interior surface resistance, horizontal heat flow [m²·K/W], ISO 6946 Table 7
#: (from memory).
RSI_HORIZONTAL = 0.13
#: Interior surface resistance, upward heat flow [m²·K/W] (from memory).
RSI_UPWARD = 0.10
#: Interior surface resistance, downward heat flow [m²·K/W] (from memory).
RSI_DOWNWARD = 0.17
#: Exterior surface resistance, any direction [m²·K/W] (from memory).
RSE = 0.04
#: Interior surface resistance for surface temperatures on opaque elements
#: [m²·K/W], ISO 13788 (from memory).
RSI_SURFACE_TEMPERATURE = 0.25
#: Default (Rsi, Rse) for a flanking element's layer stack [m²·K/W].
DEFAULT_SURFACE_RESISTANCES = (RSI_HORIZONTAL, RSE)

#: Stefan–Boltzmann constant [W/(m²·K⁴)] (CODATA 2018, exact by SI definition).
STEFAN_BOLTZMANN = 5.670374419e-8

HEAT_FLOW_DIRECTIONS = ("horizontal", "upward", "downward")


def thermal_resistance(thickness: float, conductivity: float) -> float:
    """Thermal resistance of a homogeneous layer R = d/λ [m²·K/W].

    ISO 6946:2017, Formula (7).

    Parameters
    ----------
    thickness : float
        d [m].
    conductivity : float
        λ [W/(m·K)].
    """
    return thickness / conductivity


def u_value_plane_layers(resistances, rsi: float, rse: float) -> float:
    """Thermal transmittance of plane homogeneous layers [W/(m²·K)].

    U = 1 / (Rsi + ΣRj + Rse), ISO 6946:2017, Formulae (8) and (9).

    Parameters
    ----------
    resistances : iterable of float
        Layer resistances Rj [m²·K/W].
    rsi, rse : float
        Interior and exterior surface resistances [m²·K/W].
    """
    total = rsi + math.fsum(resistances) + rse
    if not total > 0:
        raise ModelError("layer stack has no thermal resistance; U would be infinite")
    return 1.0 / total


def radiative_coefficient(mean_temperature: float = 10.0) -> float:
    """Radiative coefficient for a black body hr0 = 4σTm³ [W/(m²·K)].

    ISO 6946:2017, Annex D, Formula (D.4) (from memory).

    Parameters
    ----------
    mean_temperature : float
        Mean temperature of the surfaces Tm [°C].
    """
    tm = mean_temperature + 273.15
    return 4.0 * STEFAN_BOLTZMANN * tm ** 3


def air_layer_resistance(thickness: float, direction: str = "horizontal",
                         emissivities=(0.9, 0.9), mean_temperature: float = 10.0) -> float:
    """Thermal resistance of an unventilated air layer [m²·K/W].

    R = 1 / (ha + E·hr0), ISO 6946:2017, Annex D, Formulae (D.1)–(D.4)
    (from memory): ha = max(1.25, 0.025/d) for horizontal heat flow,
    max(1.95, 0.025/d) upward, max(0.12·d^(−0.44), 0.025/d) downward (d in m);
    E = 1/(1/ε1 + 1/ε2 − 1); hr0 = 4σTm³.

    Parameters
    ----------
    thickness : float
        d, the layer thickness in the direction of heat flow [m], > 0.
    direction : str
        ``"horizontal"``, ``"upward"`` or ``"downward"`` heat flow.
    emissivities : (float, float)
        Hemispherical emissivities ε1, ε2 of the bounding surfaces, in (0, 1].
    mean_temperature : float
        Mean temperature of the layer [°C].
    """
    if not (math.isfinite(thickness) and thickness > 0):
        raise ModelError(f"air layer thickness must be a positive number, got {thickness!r}")
    if direction not in HEAT_FLOW_DIRECTIONS:
        raise ModelError(f"air layer direction {direction!r} is not one of "
                         f"{', '.join(HEAT_FLOW_DIRECTIONS)}")
    e1, e2 = emissivities
    for e in (e1, e2):
        if not (math.isfinite(e) and 0 < e <= 1):
            raise ModelError(f"air layer emissivity must lie in (0, 1], got {e!r}")
    if direction == "horizontal":
        ha = max(1.25, 0.025 / thickness)
    elif direction == "upward":
        ha = max(1.95, 0.025 / thickness)
    else:
        ha = max(0.12 * thickness ** -0.44, 0.025 / thickness)
    emittance = 1.0 / (1.0 / e1 + 1.0 / e2 - 1.0)
    return 1.0 / (ha + emittance * radiative_coefficient(mean_temperature))


def air_layer_conductivity(thickness: float, direction: str = "horizontal",
                           emissivities=(0.9, 0.9), mean_temperature: float = 10.0) -> float:
    """Equivalent conductivity of an unventilated air layer λ = d/R [W/(m·K)].

    ISO 6946:2017, Annex D, with R from :func:`air_layer_resistance`.

    Parameters
    ----------
    thickness : float
        d [m].
    direction, emissivities, mean_temperature
        As for :func:`air_layer_resistance`.
    """
    return thickness / air_layer_resistance(thickness, direction, emissivities,
                                            mean_temperature)
