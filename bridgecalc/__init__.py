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

__version__ = "0.1.0"

from .api import export, load, run  # noqa: E402
from .errors import BridgecalcError, ModelError  # noqa: E402
from .model import (AirLayer, Environment, Flanking, Layer, Material, Model, Probe, Region,
                    Surface)
from .results import Result  # noqa: E402

__all__ = (
    "BridgecalcError", "ModelError", "AirLayer", "Environment", "Flanking", "Layer",
    "Material", "Model", "Probe", "Region", "Surface", "Result", "export", "load", "run",
    "__version__",
)
