"""bridgecalc: two-dimensional thermal bridge calculations to ISO 10211.

A model (from a model file or a geometry script) is meshed with gmsh, solved
with scikit-fem, and reduced to the linear thermal transmittance Ψ and the
temperature factor fRsi::

    import bridgecalc
    model = bridgecalc.load("detail.toml")
    result = bridgecalc.run(model)
    result.psi, result.f_rsi
"""

from .errors import BridgecalcError, ModelError
from .model import (Environment, Flanking, Layer, Material, Model, Probe, Region,
                    Surface)
from .pipeline import Result, load, run

__version__ = "0.1.0"

__all__ = [
    "BridgecalcError", "ModelError", "Environment", "Flanking", "Layer",
    "Material", "Model", "Probe", "Region", "Surface", "Result", "load", "run",
    "__version__",
]
