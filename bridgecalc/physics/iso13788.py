"""ISO 13788 surface humidity: the monthly method against mould and condensation.

For each month of a climate, the interior vapour pressure and the lowest
surface temperature that keeps the surface relative humidity at or below a
critical value, and the temperature factor a junction must reach for it.

References
----------
ISO 13788:2012, Hygrothermal performance of building components and building
elements -- Internal surface temperature to avoid critical surface humidity
and interstitial condensation -- Calculation methods. Clause 5 (surface
temperature to avoid critical surface humidity: the monthly steps 5.2 a) to
f)), Annex A (interior humidity classes), Annex E (saturation vapour
pressure). Every clause number and constant here is from memory of that
standard and has not been checked against its current text; the saturation
pressure is checked against ASHRAE's formulas (psychrolib) in the tests.
"""

from __future__ import annotations

import math
from types import MappingProxyType

#: Saturation vapour pressure at 0 °C of both branches of the formula [Pa],
#: ISO 13788 Annex E (from memory).
PSAT_AT_ZERO = 610.5
#: Coefficients (a, b [°C]) of psat = 610.5·exp(a·θ/(b + θ)) over water (θ ≥ 0 °C)
#: and over ice (θ < 0 °C), ISO 13788 Annex E, eq. E.7 and E.8 (from memory).
WATER = (17.269, 237.3)
ICE = (21.875, 265.5)

#: The excess of interior over exterior vapour pressure Δp [Pa] at a monthly
#: mean exterior temperature of 0 °C or less, per interior humidity class,
#: ISO 13788 Annex A, Table A.1 (from memory): 1 storage areas; 2 offices,
#: dwellings with normal occupancy and ventilation; 3 buildings with unknown
#: occupancy; 4 sports halls, kitchens, canteens; 5 special buildings (laundry,
#: brewery, swimming pool).
VAPOUR_PRESSURE_EXCESS = MappingProxyType({1: 270.0, 2: 540.0, 3: 810.0, 4: 1080.0,
                                           5: 1350.0})
HUMIDITY_CLASSES = tuple(VAPOUR_PRESSURE_EXCESS)
#: Monthly mean exterior temperature at and above which Δp is zero [°C]; Δp falls
#: linearly to it from its value at 0 °C, ISO 13788 Annex A (from memory).
EXCESS_ZERO_AT = 20.0
#: Safety factor on Δp of the humidity classes, ISO 13788 clause 5.2 c) (from
#: memory).
SAFETY_FACTOR = 1.10
#: Critical surface relative humidity φsi,crit [-]: 0.8 against mould growth,
#: 1.0 against surface condensation, ISO 13788 clause 5 (from memory).
CRITICAL_SURFACE_HUMIDITY = MappingProxyType({"mould": 0.8, "condensation": 1.0})


def saturation_vapour_pressure(temperature: float) -> float:
    """psat [Pa] at ``temperature`` θ [°C], over water for θ ≥ 0 °C and over
    ice below, ISO 13788 Annex E, eq. E.7/E.8 (from memory)::

        psat = 610.5 · exp(17.269 θ / (237.3 + θ))   θ ≥ 0
        psat = 610.5 · exp(21.875 θ / (265.5 + θ))   θ < 0

    Both branches give 610.5 Pa at 0 °C, so psat is continuous there.
    """
    a, b = WATER if temperature >= 0.0 else ICE
    return PSAT_AT_ZERO * math.exp(a * temperature / (b + temperature))


def saturation_temperature(vapour_pressure: float) -> float:
    """θ [°C] at which the saturation vapour pressure is ``vapour_pressure`` [Pa]
    (> 0): the inverse of :func:`saturation_vapour_pressure`, branch by branch
    (over water from 610.5 Pa up, over ice below), ISO 13788 Annex E (from
    memory)::

        θ = b · ln(p/610.5) / (a − ln(p/610.5))
    """
    if not vapour_pressure > 0.0:
        raise ValueError(f"a vapour pressure must be positive, got {vapour_pressure!r} Pa")
    x = math.log(vapour_pressure / PSAT_AT_ZERO)
    a, b = WATER if x >= 0.0 else ICE
    return b * x / (a - x)


def vapour_pressure_excess(humidity_class: int, exterior_temperature: float) -> float:
    """Δp [Pa]: the excess of interior over exterior vapour pressure of an
    interior humidity class (1 to 5) in a month of mean exterior temperature
    θe [°C]: its Table A.1 value for θe ≤ 0 °C, falling linearly to zero at
    θe = 20 °C and zero above, ISO 13788 Annex A (from memory). Without the
    safety factor (see :func:`interior_vapour_pressure`)."""
    excess = VAPOUR_PRESSURE_EXCESS[humidity_class]
    share = min(max(1.0 - exterior_temperature / EXCESS_ZERO_AT, 0.0), 1.0)
    return excess * share


def exterior_vapour_pressure(exterior_temperature: float,
                             exterior_relative_humidity: float) -> float:
    """pe = φe · psat(θe) [Pa], θe [°C], φe [-] (ISO 13788 clause 5.2 a), from memory)."""
    return exterior_relative_humidity * saturation_vapour_pressure(exterior_temperature)


def interior_vapour_pressure(exterior_temperature: float, exterior_relative_humidity: float,
                             humidity_class: int | None = None,
                             interior_relative_humidity: float | None = None,
                             interior_temperature: float | None = None) -> float:
    """pi [Pa] of one month, ISO 13788 clause 5.2 b)–c) (from memory).

    Either from the humidity class, pi = pe + 1.10·Δp(θe), or from a fixed
    interior relative humidity φi [-] at the interior temperature θi [°C],
    pi = φi·psat(θi). θe [°C], φe [-].
    """
    if (humidity_class is None) == (interior_relative_humidity is None):
        raise ValueError("give either a humidity class or an interior relative humidity")
    if humidity_class is not None:
        return (exterior_vapour_pressure(exterior_temperature, exterior_relative_humidity)
                + SAFETY_FACTOR * vapour_pressure_excess(humidity_class, exterior_temperature))
    return interior_relative_humidity * saturation_vapour_pressure(interior_temperature)


def minimum_surface_temperature(interior_vapour_pressure: float,
                                critical_surface_humidity: float) -> float:
    """θsi,min [°C]: the lowest surface temperature at which the surface relative
    humidity stays at or below φsi,crit [-], for an interior vapour pressure pi
    [Pa]: psat(θsi,min) = pi / φsi,crit, ISO 13788 clause 5.2 d)–e) (from memory)."""
    return saturation_temperature(interior_vapour_pressure / critical_surface_humidity)


def minimum_temperature_factor(minimum_surface_temperature: float, interior_temperature: float,
                               exterior_temperature: float) -> float | None:
    """fRsi,min = (θsi,min − θe) / (θi − θe) [-], temperatures [°C], ISO 13788
    clause 5.2 f) (from memory); None when θe ≥ θi (no heat flows outwards, so
    the month sets no requirement on the junction)."""
    if not exterior_temperature < interior_temperature:
        return None
    return ((minimum_surface_temperature - exterior_temperature)
            / (interior_temperature - exterior_temperature))
