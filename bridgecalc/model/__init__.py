"""The model: plain data of one junction's cross-section, its rules and its outline.

``types`` holds the dataclasses, ``rules`` every rule of model format 1,
``outline`` the solid's pieces and which surface claims each outline edge,
``geometry`` the plane geometry they share with the mesher, and
``junctions`` the building steps of the shipped geometry scripts.
"""

from .rules import validate
from .types import (ABSOLUTE_ZERO, DIMENSION_SYSTEMS, ENVIRONMENT_KINDS, FORMAT, LENGTH_UNITS,
                    AirLayer, Environment, Flanking, Layer, Material, Model, Probe, Region,
                    Surface, air_layer_material)

__all__ = ("ABSOLUTE_ZERO", "DIMENSION_SYSTEMS", "ENVIRONMENT_KINDS", "FORMAT", "LENGTH_UNITS",
           "AirLayer", "Environment", "Flanking", "Layer", "Material", "Model", "Probe",
           "Region", "Surface", "air_layer_material", "validate")
