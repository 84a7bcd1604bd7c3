"""The Galerkin solution: the weak form's terms (``assembly``), one type per
kind of boundary (``boundaries``), the problem of one mesh solving any number
of calculation cases per resistance set (``problem``), the linear solvers
(``linsolve``) and the model's calculation cases: one unit solution per
environment (``cases``).
"""

from .problem import Condition, ConductionProblem, TemperatureField

__all__ = ("Condition", "ConductionProblem", "TemperatureField")
