"""Built-in validation cases against published or analytic references.

``bridgecalc check`` runs them all and prints, per compared quantity: case,
source, value, reference, deviation, tolerance and pass. The test suite runs
the same functions.

Cases
-----
iso10211-case1
    ISO 10211 test reference case of the known-surface-temperature kind: a
    rectangle with one side held at 20 °C and the other three at 0 °C
    (ISO 10211:2017 Annex C, case 1, from memory of its set-up; its
    published table is not reproduced here). Reference: the analytic
    Fourier-series solution by separation of variables (Carslaw & Jaeger,
    *Conduction of Heat in Solids*, 2nd ed., §5.3; Incropera et al.,
    *Fundamentals of Heat and Mass Transfer*, §4.2), at 28 grid points.
iso10211-case2
    ISO 10211:2017 Annex C test reference case 2 (also ISO 10211:2007
    Annex A): nine temperatures (0.1 K) and the total heat flow (0.1 W/m).
iso6946-layers
    A plane layered wall between adiabatic cut-offs: L2D per metre equals
    U = 1/(Rsi + Σ d/λ + Rse) of ISO 6946:2017, 6.7.1, to 1e-9 relative,
    and Ψ = 0.
heat-source-slab
    A slab with uniform heat generation q between held temperatures:
    θ(x) = θ1 + (θ2 − θ1)x/L + q x (L − x) / (2λ) (Incropera et al., §3.5,
    Eq. 3.40 form): to 1e-9 K with P2 elements, whose space contains the
    parabola, and to 1 % of the temperature rise with P1.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..model import Environment, Flanking, Layer, Material, Model, Probe, Region, Surface
from ..physics.iso6946 import u_value_plane_layers


@dataclass(frozen=True)
class CheckRow:
    """One compared quantity."""

    case: str
    source: str
    quantity: str
    value: float
    reference: float
    tolerance: float
    relative: bool = False

    @property
    def deviation(self) -> float:
        d = self.value - self.reference
        return d / abs(self.reference) if self.relative else d

    @property
    def passed(self) -> bool:
        return bool(abs(self.deviation) <= self.tolerance)


# -- ISO 10211 case 1: known surface temperatures ---------------------------

CASE1_WIDTH = 1.0     # a [m]
CASE1_HEIGHT = 2.0    # b [m]
CASE1_HOT = 20.0      # θ on the side y = b [°C]
CASE1_SOURCE = "ISO 10211 Annex C case 1 set-up; Fourier series (Carslaw & Jaeger §5.3)"


def fourier_rectangle(x, y, width=CASE1_WIDTH, height=CASE1_HEIGHT, hot=CASE1_HOT,
                      terms=2001) -> np.ndarray:
    """Temperature in a rectangle with θ = hot at y = b and 0 on the other sides [°C].

    θ(x, y) = (4 θh/π) Σ_{n odd} sin(nπx/a) sinh(nπy/a) / (n sinh(nπb/a))
    (separation of variables; Incropera et al., Eq. 4.19 with the series of
    a uniform edge temperature).

    Parameters
    ----------
    x, y : array_like
        Points inside the rectangle [m].
    width, height : float
        a, b [m].
    hot : float
        θh [°C].
    terms : int
        Number of odd terms.
    """
    x = np.asarray(x, dtype=float)[..., None]
    y = np.asarray(y, dtype=float)[..., None]
    n = 2 * np.arange(terms) + 1.0
    k = n * np.pi / width
    # sinh(k y)/sinh(k b) without overflow
    ratio = np.exp(k * (y - height)) * (-np.expm1(-2 * k * y)) / (-np.expm1(-2 * k * height))
    return (4 * hot / np.pi) * np.sum(np.sin(k * x) * ratio / n, axis=-1)


def case1_points() -> np.ndarray:
    """The 28 comparison points: a 4 × 7 grid at quarter-metre spacing [m]."""
    xs = np.array([0.125, 0.375, 0.625, 0.875])
    ys = np.arange(1, 8) * 0.25
    return np.array([(x, y) for y in ys for x in xs])


def case1_model() -> Model:
    """The known-surface-temperature rectangle as a model [m]."""
    a, b = CASE1_WIDTH, CASE1_HEIGHT
    probes = [Probe(f"P{i + 1}", (float(x), float(y))) for i, (x, y) in enumerate(case1_points())]
    return Model(
        length_unit="m",
        name="ISO 10211 case 1 (known surface temperatures)",
        materials={"solid": Material("solid", 1.0)},
        regions=[Region.rectangle("solid", 0, 0, a, b)],
        environments=[Environment("hot", CASE1_HOT, "interior"),
                      Environment("cold", 0.0, "exterior")],
        surfaces=[Surface("hot", 0.0, ((0, b), (a, b))),
                  Surface("cold", 0.0, ((0, b), (0, 0), (a, 0), (a, b)))],
        probes=probes,
        origin="iso10211-case1")


def check_case1(run) -> list[CheckRow]:
    result = run(case1_model())
    pts = case1_points()
    reference = fourier_rectangle(pts[:, 0], pts[:, 1])
    return [CheckRow("iso10211-case1", CASE1_SOURCE, f"θ {name} [°C]", value, ref, 0.1)
            for (name, value), ref in zip(result.heat_flow_case.probes.items(), reference)]


# -- ISO 10211 case 2 --------------------------------------------------------

CASE2_SOURCE = "ISO 10211:2017 Annex C, case 2"
#: Reference temperatures [°C] at points A..I with their positions [mm].
CASE2_POINTS = {
    "A": ((0.0, 47.5), 7.1), "B": ((500.0, 47.5), 0.8), "C": ((0.0, 41.5), 7.9),
    "D": ((15.0, 41.5), 6.3), "E": ((500.0, 41.5), 0.8), "F": ((0.0, 36.5), 16.4),
    "G": ((15.0, 36.5), 16.3), "H": ((0.0, 0.0), 16.8), "I": ((500.0, 0.0), 18.3),
}
CASE2_HEAT_FLOW = 9.5          # W/m
CASE2_TEMPERATURE_TOLERANCE = 0.1   # K
CASE2_HEAT_FLOW_TOLERANCE = 0.1     # W/m


def case2_model() -> Model:
    """ISO 10211 test reference case 2 as a model [mm]."""
    R = Region.rectangle
    materials = {name: Material(name, k, CASE2_SOURCE) for name, k in
                 [("concrete", 1.15), ("wood", 0.12), ("insulation", 0.029),
                  ("aluminium", 230.0)]}
    regions = [R("insulation", 0, 0, 500, 41.5), R("concrete", 0, 41.5, 500, 47.5),
               R("wood", 0, 36.5, 15, 41.5), R("aluminium", 0, 0, 500, 1.5),
               R("aluminium", 0, 1.5, 1.5, 35), R("aluminium", 0, 35, 15, 36.5)]
    return Model(
        length_unit="mm",
        name="ISO 10211 case 2 (four materials)",
        materials=materials,
        regions=regions,
        environments=[Environment("inside", 20.0, "interior"),
                      Environment("outside", 0.0, "exterior")],
        surfaces=[Surface("outside", 0.06, ((0, 47.5), (500, 47.5))),
                  Surface("inside", 0.11, ((0, 0), (500, 0)))],
        probes=[Probe(k, at) for k, (at, _) in CASE2_POINTS.items()],
        origin="iso10211-case2")


def check_case2(run) -> list[CheckRow]:
    result = run(case2_model())
    hf = result.heat_flow_case
    rows = [CheckRow("iso10211-case2", CASE2_SOURCE, f"θ {k} [°C]", hf.probes[k], ref,
                     CASE2_TEMPERATURE_TOLERANCE) for k, (_, ref) in CASE2_POINTS.items()]
    rows.append(CheckRow("iso10211-case2", CASE2_SOURCE, "heat flow [W/m]",
                         hf.heat_flow["inside"], CASE2_HEAT_FLOW, CASE2_HEAT_FLOW_TOLERANCE))
    return rows


# -- ISO 6946 plane layers ---------------------------------------------------

LAYERS_SOURCE = "ISO 6946:2017, 6.7.1, U = 1/(Rsi + Σd/λ + Rse)"
#: (material, λ [W/(m·K)], d [mm]) from inside to outside; demo values.
LAYERS = [("plaster", 0.70, 15.0), ("masonry", 0.80, 240.0), ("insulation", 0.035, 160.0),
          ("render", 0.87, 10.0)]
LAYERS_RSI, LAYERS_RSE = 0.13, 0.04
LAYERS_HEIGHT = 1000.0    # mm


def layers_model() -> Model:
    """A 1 m high strip of plane layers, cut-offs top and bottom [mm]."""
    materials = {name: Material(name, k) for name, k, _ in LAYERS}
    regions, x = [], 0.0
    for name, _, d in LAYERS:
        regions.append(Region.rectangle(name, x, 0, x + d, LAYERS_HEIGHT))
        x += d
    return Model(
        length_unit="mm",
        name="ISO 6946 plane layers",
        materials=materials,
        regions=regions,
        environments=[Environment("inside", 20.0, "interior"),
                      Environment("outside", -5.0, "exterior")],
        surfaces=[Surface("inside", LAYERS_RSI, ((0, 0), (0, LAYERS_HEIGHT))),
                  Surface("outside", LAYERS_RSE, ((x, 0), (x, LAYERS_HEIGHT)))],
        flanking=[Flanking("wall", LAYERS_HEIGHT,
                           layers=tuple(Layer(name, d) for name, _, d in LAYERS),
                           surface_resistances=(LAYERS_RSI, LAYERS_RSE))],
        origin="iso6946-layers")


def check_layers(run) -> list[CheckRow]:
    result = run(layers_model())
    u = u_value_plane_layers([d * 1e-3 / k for _, k, d in LAYERS], LAYERS_RSI, LAYERS_RSE)
    l2d = result.heat_flow_case.coupling_coefficient / (LAYERS_HEIGHT * 1e-3)
    return [CheckRow("iso6946-layers", LAYERS_SOURCE, "L2D per metre [W/(m²·K)]", l2d, u,
                     1e-9, relative=True),
            CheckRow("iso6946-layers", LAYERS_SOURCE, "Ψ [W/(m·K)]", result.psi, 0.0, 1e-9)]


# -- heat source -------------------------------------------------------------

SOURCE_SOURCE = "1D conduction with uniform generation (Incropera et al. §3.5)"
SLAB_THICKNESS = 0.2      # L [m]
SLAB_CONDUCTIVITY = 1.5   # λ [W/(m·K)]
SLAB_GENERATION = 2000.0  # q [W/m³]
SLAB_THETA = (10.0, 0.0)  # θ1 at x = 0, θ2 at x = L [°C]


def slab_profile(x) -> np.ndarray:
    """θ(x) = θ1 + (θ2 − θ1) x/L + q x (L − x) / (2λ) [°C], x in [m]."""
    x = np.asarray(x, dtype=float)
    t1, t2 = SLAB_THETA
    L, k, q = SLAB_THICKNESS, SLAB_CONDUCTIVITY, SLAB_GENERATION
    return t1 + (t2 - t1) * x / L + q * x * (L - x) / (2 * k)


def source_model() -> Model:
    """The generating slab, 0.2 m thick and 0.4 m high, adiabatic top and bottom [m]."""
    L, h = SLAB_THICKNESS, 0.4
    xs = np.linspace(0.0, L, 9)
    return Model(
        length_unit="m",
        name="Slab with uniform heat generation",
        materials={"solid": Material("solid", SLAB_CONDUCTIVITY)},
        regions=[Region.rectangle("solid", 0, 0, L, h, heat_source=SLAB_GENERATION)],
        environments=[Environment("warm", SLAB_THETA[0], "interior"),
                      Environment("cold", SLAB_THETA[1], "exterior")],
        surfaces=[Surface("warm", 0.0, ((0, 0), (0, h))),
                  Surface("cold", 0.0, ((L, 0), (L, h)))],
        probes=[Probe(f"x={x:.3f}", (float(x), h / 3)) for x in xs],
        origin="heat-source-slab")


def check_source(run) -> list[CheckRow]:
    """P2 contains the parabola, so Galerkin must reproduce it to round-off;
    P1 interpolates it between nodes, within q h²/(8λ)."""
    rise = SLAB_GENERATION * SLAB_THICKNESS ** 2 / (8 * SLAB_CONDUCTIVITY)
    rows = []
    for element, tolerance in (("P2", 1e-9), ("P1", 1e-2 * rise)):
        result = run(source_model(), element=element)
        for probe in source_model().probes:
            value = result.heat_flow_case.probes[probe.name]
            rows.append(CheckRow("heat-source-slab", SOURCE_SOURCE,
                                 f"θ at {probe.name} m, {element} [°C]",
                                 value, float(slab_profile(probe.at[0])), tolerance))
    return rows


CHECKS = (check_case1, check_case2, check_layers, check_source)


def run_checks(run=None) -> list[CheckRow]:
    """Run every validation case with default settings."""
    if run is None:
        from ..api import run
    rows = []
    for check in CHECKS:
        rows.extend(check(run))
    return rows


def format_table(rows) -> str:
    """The table ``bridgecalc check`` prints."""
    header = ("case", "source", "quantity", "value", "reference", "deviation", "tolerance",
              "pass")
    body = []
    for r in rows:
        dev = f"{r.deviation:+.2e}" + (" rel" if r.relative else "")
        tol = f"{r.tolerance:.1e}" + (" rel" if r.relative else "")
        body.append((r.case, r.source, r.quantity, f"{r.value:.6g}", f"{r.reference:.6g}",
                     dev, tol, "yes" if r.passed else "NO"))
    widths = [max(len(str(x)) for x in col) for col in zip(header, *body)]
    lines = ["  ".join(str(x).ljust(w) for x, w in zip(row, widths)) for row in [header, *body]]
    failed = sum(not r.passed for r in rows)
    lines.append(f"{len(rows) - failed} passed, {failed} failed")
    return "\n".join(lines)


__all__ = ("CheckRow", "run_checks", "format_table", "fourier_rectangle", "case1_model",
           "case2_model", "layers_model", "source_model")
