"""bridgecalc: two-dimensional thermal bridge calculations to ISO 10211.

A model (from a model file or a geometry script) is meshed with gmsh, solved
with scikit-fem, and reduced to the coupling coefficients between its
environments, the linear thermal transmittance Ψ and the temperature factor
fRsi (or, with more than two temperatures, the temperature weighting factors)::

    import bridgecalc
    model = bridgecalc.load("detail.toml")
    result = bridgecalc.run(model)
    result.psi, result.f_rsi, result.coupling_coefficients
"""

from .api import load, run
from .errors import BridgecalcError, ModelError
from .model import (AirLayer, Environment, Flanking, Layer, Material, Model, Probe, Region,
                    Surface)
from .results import Result

__version__ = "0.1.0"

__all__ = [
    "BridgecalcError", "ModelError", "AirLayer", "Environment", "Flanking", "Layer",
    "Material", "Model", "Probe", "Region", "Surface", "Result", "load", "run",
    "__version__",
]
