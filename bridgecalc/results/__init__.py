"""Unit cases → the numbers a junction is reported by.

``couplings``: heat flows, L_ij of every pair of environments, Ψ (and the
two-temperature L2D); ``flanking``: U·l of the flanking elements and the pair
each counts against; ``surface``: θsi,min, where, the weighting factors g
there and fRsi; ``fields``: heat-flux density and surface profiles for the
figures; ``result``: the :class:`Result` and results.json's content. No
assembly and no meshing here.
"""

from .couplings import (Coupling, HeatFlowCase, coupling_coefficient, heat_flow_case,
                        linear_thermal_transmittance, probe_temperatures)
from .fields import SurfaceProfile, heat_flux_density, interior_surface_profiles
from .flanking import FlankingResult, flanking_results, flanking_sums, flanking_u_value
from .result import BALANCE_LIMIT, RESULTS_FORMAT, Result, build_result
from .surface import (CAUTION, SurfaceTemperatureCase, design_temperatures,
                      lowest_surface_temperature, printed_position, surface_temperature_case,
                      temperature_factor)

__all__ = ("BALANCE_LIMIT", "CAUTION", "Coupling", "FlankingResult", "HeatFlowCase",
           "RESULTS_FORMAT", "Result", "SurfaceProfile", "SurfaceTemperatureCase",
           "build_result", "coupling_coefficient", "design_temperatures",
           "flanking_results", "flanking_sums", "flanking_u_value", "heat_flow_case",
           "heat_flux_density", "interior_surface_profiles", "linear_thermal_transmittance",
           "lowest_surface_temperature",
           "printed_position", "probe_temperatures", "surface_temperature_case",
           "temperature_factor")
