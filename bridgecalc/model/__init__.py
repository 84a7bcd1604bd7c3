"""The model: plain data of one junction's cross-section, its rules and its outline.

``types`` holds the dataclasses, ``validate`` every rule of model format 1,
``outline`` the solid's pieces and which surface claims each outline edge,
``geometry`` the plane geometry they share with the mesher, and
``junctions`` the building steps of the shipped geometry scripts.
"""

from .types import (ABSOLUTE_ZERO, DIMENSION_SYSTEMS, ENVIRONMENT_KINDS, FORMAT, LENGTH_UNITS, AirLayer,
                    Environment, Flanking, Layer, Material, Model, Probe, Region, Surface,
                    air_layer_material)
from .rules import validate

__all__ = ["ABSOLUTE_ZERO", "DIMENSION_SYSTEMS", "ENVIRONMENT_KINDS", "FORMAT", "LENGTH_UNITS", "AirLayer",
           "Environment", "Flanking", "Layer", "Material", "Model", "Probe", "Region",
           "Surface", "air_layer_material", "validate"]
