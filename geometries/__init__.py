"""The junction library: parametric geometry scripts of a fictional building
(docs/scenario.md), installed with the package as ``bridgecalc.geometries``.

Each script defines ``PARAMETERS`` and ``build(**params)``; run one with
``bridgecalc run SCRIPT`` or :func:`bridgecalc.load`.
"""
