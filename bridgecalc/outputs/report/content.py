"""What the review report says, built once from a result.

:func:`report_content` turns a result (and what the run knows besides: the
fRsi criterion, the dimension system, the validation stamp, the figures) into
a :class:`.blocks.Report`: headings, paragraphs, tables, figures.

Everything shown is read from the result and the model; nothing here
recomputes physics.
"""

from __future__ import annotations

import hashlib
from pathlib import Path
from types import MappingProxyType

from ... import __version__
from ...assessments import f_rsi_verdict
from ...results import CAUTION, printed_position
from ..exports import several_pairs
from . import couplings, moisture
from .audit import audit_blocks, audit_texts
from .bounds import bounds_blocks
from .blocks import Figure, Heading, KeyFigures, Para, Report, Table
from .numbers import g_text as _g, n_text as _n, point_text as _point
from .title_block import report_date, title_block_table
from ..figures.catalogue import SECTION_FIGURES, detail_window


#: Added to the caption of a figure of the section that shows its close view
#: beside the whole.
CLOSE_VIEW_CAPTION = (" Beside the whole section, a close view of the junction (where the "
                      "heat flux and the temperature gradient concentrate); the dashed box "
                      "on the whole marks it.")

FIGURE_CAPTIONS = MappingProxyType({
    "materials": "Materials as modelled, regions drawn in file order (a later region "
                 "covers an earlier one). Fill lightness follows λ on a log scale; hatches "
                 "tell materials apart.",
    "mesh": "The finite-element mesh as the size of its elements (log scale: dark where the "
            "refinement concentrated) and the boundary conditions on the outline. S1, S2, ... "
            "are the surfaces of the inputs table; unmarked dotted edges are adiabatic "
            "cut-off or symmetry planes.",
    "temperature": "Temperatures of the surface-temperature case (surface resistances for "
                   "surface temperature) with labelled isotherms; the ring marks θsi,min. "
                   "With an ISO 13788 check, the dashed line is where the temperature factor "
                   "equals the critical month's fRsi,min: surface colder than it fails.",
    "heat_flux": "Heat-flux density |q| = |−λ∇θ| per triangle in the heat-flow case, on a "
                 "log scale; arrows show the direction of heat flow only.",
    "moisture": "ISO 13788 monthly check: bars, the temperature factor fRsi,min each month "
                "of the climate asks for (hatched: the critical month; none where the "
                "exterior is not colder than the interior); line, the junction's fRsi. A pass "
                "is no proof of a mould-free detail.",
    "surface_temperature": "Interior surface temperature along every run of interior "
                           "surface (surface-temperature case), against the distance along "
                           "it; the right axis reads it as a temperature factor.",
})


def stated_dimension_system(model, stated: str | None = None) -> tuple[str | None, str]:
    """The dimension system for Ψ and where it was stated.

    Parameters
    ----------
    model : Model
        Its ``dimension_system``, when set, is the answer.
    stated : str, optional
        What the caller knows of a model that states none.

    Returns
    -------
    (str or None, str)
        The system ("external", "internal", "overall internal") or None, and a
        sentence saying how it is known.
    """
    if model.dimension_system:
        return model.dimension_system, (f"as stated by the model: {model.dimension_system} "
                                        f"dimensions (its dimension_system)")
    if stated:
        return stated, f"as stated for this run: {stated} dimensions"
    return None, ("not stated by the model. Ψ depends on the dimension system used for the "
                  "flanking lengths (ISO 14683 names external, overall internal and internal); "
                  "state it wherever this Ψ is used")


def model_fingerprint(model) -> str:
    """SHA-256 of the model written as a format-1 file: the same inputs, the same digits."""
    from ...readers.modelfile import dumps
    try:
        text = dumps(model)
    except Exception:           # a model that cannot be written still gets a report
        return "not available"
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]


def surface_outline_lengths(result) -> list[float]:
    """Length of outline lying on each surface [length_unit], from the mesh edges."""
    import numpy as np
    mesh = result.mesh
    xy = mesh.nodes / result.model.metres_per_unit
    seg = xy[mesh.boundary_edges]
    lengths = np.linalg.norm(seg[:, 1] - seg[:, 0], axis=1)
    return [float(lengths[mesh.boundary_surface == j].sum())
            for j in range(len(result.model.surfaces))]


def _surface_of_minimum(result) -> int | None:
    """Index of the surface holding θsi,min (nearest outline edge on an interior surface)."""
    import numpy as np
    model, mesh = result.model, result.mesh
    at = np.asarray(result.surface_temperature_case.theta_si_min_at, float)
    xy = mesh.nodes / model.metres_per_unit
    interior = [j for j, s in enumerate(model.surfaces)
                if model.environment(s.environment).kind == "interior"]
    mask = np.isin(mesh.boundary_surface, interior)
    if not mask.any():
        return None
    seg = xy[mesh.boundary_edges[mask]]
    a, d = seg[:, 0], seg[:, 1] - seg[:, 0]
    t = np.clip(((at - a) * d).sum(1) / np.maximum((d * d).sum(1), 1e-300), 0, 1)
    dist = np.linalg.norm(a + t[:, None] * d - at, axis=1)
    return int(mesh.boundary_surface[mask][int(np.argmin(dist))])


#: Polygons with more corners than this are listed by their box, not corner by corner.
LISTED_CORNERS = 12


def regions_table(model) -> "Table":
    """The geometry as drawn: each region in file order, its material and corners.

    A rectangle is given by two corners, a polygon by all of them (or, past
    :data:`LISTED_CORNERS`, by its number of corners and its bounding box).
    """
    unit = model.length_unit
    rows = []
    for k, region in enumerate(model.regions):
        xy = region.vertices
        if region.shape == "rectangle":
            (x0, y0), (x1, y1) = xy[0], xy[2]
            shape = f"rectangle {_point((x0, y0))} – {_point((x1, y1))}"
        elif len(xy) <= LISTED_CORNERS:
            shape = "polygon " + " ".join(_point(p) for p in xy)
        else:
            xs, ys = [p[0] for p in xy], [p[1] for p in xy]
            shape = (f"polygon of {len(xy)} corners within {_point((min(xs), min(ys)))} – "
                     f"{_point((max(xs), max(ys)))}")
        source = f"{_g(region.heat_source)} W/m³" if region.heat_source else "–"
        rows.append([str(k + 1), region.material, shape, source])
    return Table(["region", "material", f"shape [{unit}]", "heat source"], rows,
                 "Regions in drawing order: where two overlap, the later one is drawn "
                 "over the earlier (model format 1).", (0,), (0.8, 2.2, 6.8, 1.2))


def minimum_at_cut_off(result) -> bool:
    """True when θsi,min lies where an interior surface meets an adiabatic edge
    (a cut-off or symmetry plane) of the model: a point of the flanking element."""
    import numpy as np
    model, mesh = result.model, result.mesh
    adiabatic = mesh.boundary_edges[mesh.boundary_surface < 0].ravel()
    if not len(adiabatic):
        return False
    at = np.asarray(result.surface_temperature_case.theta_si_min_at, float)
    xy = mesh.nodes[adiabatic] / model.metres_per_unit
    size = float(np.ptp(mesh.nodes, axis=0).max()) / model.metres_per_unit
    return float(np.linalg.norm(xy - at, axis=1).min()) <= 1e-9 * size


COMMON_PRACTICE = ("Common practice, no single source: fRsi ≥ 0.75 is a usual design "
                   "criterion for dwellings in the UK and 0.70 in Germany; other countries "
                   "and uses differ. The criterion that applies is set by the codes in force "
                   "where the building stands.")


EXTRA_CAUTIONS = (
    "A temperature factor that meets a criterion does not by itself rule out mould or "
    "condensation: the criterion assumes design interior temperature and humidity, and "
    "occupancy, ventilation and workmanship may differ. A factor below the criterion marks "
    "a surface at risk under those design conditions.",
    "This is a two-dimensional steady-state calculation per metre of junction: point "
    "thermal bridges (fixings, brackets, column heads) and three-dimensional corners are "
    "not included, and the values hold only for the geometry, conductivities and surface "
    "resistances listed above.",
    "Ψ is only meaningful with the dimension system and flanking U-values it was computed "
    "with; reuse it only with the same ones.",
)


def report_content(result, figures: dict | None = None, f_rsi_min: float | None = None,
                   stamp=None, dimension_system: str | None = None,
                   files: list[str] | None = None, results_dict: dict | None = None,
                   figure_sizes: dict | None = None) -> Report:
    """The report as blocks.

    Parameters
    ----------
    result : bridgecalc.results.Result
    figures : dict of str to Path, optional
        PNG file per figure name (:func:`bridgecalc.outputs.figures.figure_names`).
    f_rsi_min : float, optional
        The user's fRsi criterion [-].
    stamp : bridgecalc.validation.stamp.Stamp, optional
        The validation stamp; None says the checks were not run.
    dimension_system : str, optional
        As stated by a geometry script.
    files : list of str, optional
        Names of the files written beside the report.
    results_dict : dict, optional
        ``result.to_dict()`` if already made (it may carry ``convergence``).
    figure_sizes : dict of str to (float, float), optional
        Width and height [in] per figure name, so the PDF can be laid out
        before the PNG files exist.
    """
    data = results_dict if results_dict is not None else result.to_dict()
    model = result.model
    unit = data["length_unit"]
    hf, st = data["heat_flow_case"], data["surface_temperature_case"]
    several = several_pairs(data)
    system, system_note = stated_dimension_system(model, dimension_system)
    title = data["name"] or "Junction"
    subtitle = (f"Two-dimensional steady conduction to ISO 10211 · bridgecalc {__version__} · "
                f"model {model.origin} · inputs fingerprint {model_fingerprint(model)}")
    date = report_date(model.report)
    blocks: list = [title_block_table(model.report, date),
                    *audit_blocks(data, lambda at: printed_position(model, at).replace("-", "−"))]

    # -- summary
    blocks.append(Heading(2, "Result", "result"))
    key = KeyFigures()
    if "coupling_coefficient" in hf:
        key.items.append(("L2D", _n(hf["coupling_coefficient"]), "W/(m·K)",
                          "thermal coupling coefficient"))
    if "psi" in hf:
        key.items.append(("Ψ", _n(hf["psi"]), "W/(m·K)",
                          f"{system} dimensions" if system else "dimension system not stated"))
    if several:
        couplings.key_figures(key, data, system)
    at_text = printed_position(model, st["theta_si_min_at"]).replace("-", "−")
    key.items.append(("θsi,min", _n(st["theta_si_min"], 2), "°C",
                      f"at {at_text} {unit}"))
    warnings = data.get("warnings", [])
    verdict = f_rsi_verdict(st.get("f_rsi"), f_rsi_min, warnings)
    if "f_rsi" in st:
        key.items.append(("fRsi", _n(st["f_rsi"], 3), "",
                          "no criterion given" if verdict is None else
                          f"{verdict} fRsi ≥ {_g(f_rsi_min)}"))
    else:
        key.items.append((f"g {st['theta_si_min_environment']}",
                          _n(st["temperature_weighting_factors"][
                              st["theta_si_min_environment"]], 3), "",
                          "weighting factors at θsi,min: " + couplings.weighting_factor_note(data)))
    moisture.key_figure(key, data)
    blocks.append(key)
    for warning in warnings:
        if warning in audit_texts(data):
            continue                        # in the audit's block above
        blocks.append(Para(f"Warning: {warning}. These numbers must not be used as they "
                           f"stand.", "fail"))
    where = _surface_of_minimum(result)
    where_text = f" on surface S{where + 1}" if where is not None else ""
    if verdict == "passes":
        blocks.append(Para(
            f"PASS against the criterion given for this run: fRsi = {_n(st['f_rsi'], 3)} ≥ "
            f"{_g(f_rsi_min)} (θsi,min = {_n(st['theta_si_min'], 2)} °C at "
            f"{at_text} {unit}{where_text}). The criterion was set by "
            f"the user; check that it is the one required where the building stands.", "pass"))
    elif verdict == "fails":
        blocks.append(Para(
            f"FAIL against the criterion given for this run: fRsi = {_n(st['f_rsi'], 3)} < "
            f"{_g(f_rsi_min)}. The interior surface at {at_text} {unit}"
            f"{where_text} reaches only {_n(st['theta_si_min'], 2)} °C: under the design "
            f"conditions it is at risk of mould growth or surface condensation. Do not "
            f"accept the detail as it is; revise it or have it assessed by a qualified "
            f"practitioner.", "fail"))
    elif verdict == "not assessed" and "f_rsi" not in st:
        blocks.append(couplings.no_f_rsi_verdict(f_rsi_min))
    elif verdict == "not assessed":
        blocks.append(Para(
            f"NOT ASSESSED against the criterion given for this run (fRsi ≥ {_g(f_rsi_min)}): "
            + ("the warning above makes this fRsi meaningless."
               if set(warnings) - audit_texts(data)
               else "the model audit's findings above must be checked first."), "fail"))
    else:
        blocks.append(Para(
            "No fRsi criterion was given for this run (bridgecalc run --f-rsi-min), so no "
            "pass or fail against a fixed criterion is stated"
            + (" (the ISO 13788 check below states its own against the climate)"
               if data.get("moisture") else "") + f". {COMMON_PRACTICE}", "note"))
    if minimum_at_cut_off(result):
        blocks.append(Para(
            f"θsi,min lies at {at_text} {unit}, where the interior surface meets an adiabatic "
            f"edge of the model (a cut-off or symmetry plane): the coldest interior point is "
            f"on a flanking element, and the junction itself is warmer (see the interior "
            f"surface temperature figure). This fRsi is then the flanking element's; check "
            f"that the cut-off planes lie as far from the junction as ISO 10211 asks (at "
            f"least 1 m or three times the flanking element's thickness, from memory).",
            "note"))
    blocks.append(Para(f"Dimension system for Ψ: {system_note}.",
                       "normal" if system else "warn"))
    convergence = data.get("convergence")
    if convergence and not convergence.get("criterion_met", False):
        blocks.append(Para(
            "The result did not converge: refining the mesh still changed it by more than "
            "the ISO 10211 criterion allows (see Mesh refinement below). Treat the values "
            "as provisional.", "fail"))
    blocks.append(Para(CAUTION, "caution"))

    # -- inputs
    blocks.append(Heading(2, "Inputs", "inputs"))
    if "temperatures" in data:
        theta_i, theta_e = data["temperatures"]["interior"], data["temperatures"]["exterior"]
        temperatures = (f"Interior {_g(theta_i)} °C, exterior {_g(theta_e)} °C "
                        f"(θi − θe = {_g(theta_i - theta_e)} K)")
    else:
        temperatures = "Environments at " + ", ".join(
            f"{e.name} {_g(e.temperature)} °C" for e in model.environments)
    blocks.append(Para(
        f"Lengths in {unit}. {temperatures}. Model origin: {model.origin}.", "normal"))
    names_sorted = sorted(model.materials)
    used = {}
    for r in model.regions:
        used[r.material] = used.get(r.material, 0) + 1
    rows = []
    for name in names_sorted:
        m = model.materials[name]
        source = m.source or "not stated"
        if m.air_layer is not None:
            a = m.air_layer
            source = (f"unventilated air layer, d = {_g(a.thickness)} {unit}, {a.direction} "
                      f"heat flow, ε = {_g(a.emissivities[0])}/{_g(a.emissivities[1])}; "
                      f"equivalent λ by ISO 6946 Annex D" + (f"; {m.source}" if m.source else ""))
        rows.append([str(names_sorted.index(name)), name, _g(m.conductivity), source,
                     str(used.get(name, 0))])
    blocks.append(Table(["#", "material", "λ [W/(m·K)]", "source of λ", "regions"], rows,
                        "Materials (# is the material_index of field.vtu).", (0, 2, 4),
                        (0.5, 2.2, 1.3, 6.0, 1.0)))
    blocks.append(regions_table(model))
    blocks.append(Table(
        ["environment", "kind", "θ [°C]"],
        [[e.name, e.kind, _g(e.temperature)] for e in model.environments],
        "Environments.", (2,), (3, 2, 1.5)))
    lengths = surface_outline_lengths(result)
    rows = []
    for j, s in enumerate(model.surfaces):
        kind = model.environment(s.environment).kind
        rows.append([f"S{j + 1}", s.environment, kind, _g(s.resistance),
                     _g(s.resistance_for_surface_temperature),
                     " → ".join(_point(p) for p in s.path), _g(round(lengths[j], 6))])
    blocks.append(Table(
        ["surface", "environment", "kind", "R for heat flow [m²·K/W]",
         "R for surface temperature [m²·K/W]", f"path [{unit}]", f"outline on it [{unit}]"],
        rows, "Surfaces and their surface resistances: the first is used for heat flow, L2D "
              "and Ψ, the second for θsi,min and fRsi (ISO 13788). Outline edges on no surface "
              "are adiabatic (cut-off or symmetry planes).", (3, 4, 6),
        (1.0, 1.4, 1.1, 1.4, 1.6, 3.2, 1.2)))
    if hf["flanking"]:
        rows = []
        named = any("between" in f for f in hf["flanking"])
        for f_model, f in zip(model.flanking, hf["flanking"]):
            if f_model.u_value is not None:
                how = "given"
            else:
                layers = "; ".join(f"{layer.material} {_g(layer.thickness)} {unit}"
                                   for layer in f_model.layers)
                rs = f_model.surface_resistances
                how = ("ISO 6946 plane layers: " + layers
                       + (f"; Rsi {_g(rs[0])}, Rse {_g(rs[1])} m²·K/W" if rs else
                          "; default surface resistances"))
            rows.append([f["name"], _n(f["u_value"]), how, _g(f["length"]), _n(f["ul"])]
                        + ([couplings.pair_text(f["between"]) if "between" in f else "–"]
                           if named else []))
        blocks.append(Table(
            ["flanking element", "U [W/(m²·K)]", "how U was obtained", f"l [{unit}]",
             "U·l [W/(m·K)]"] + (["between"] if named else []), rows,
            f"Flanking elements for Ψ = L − Σ U·l; lengths in the dimension system: "
            f"{system or 'not stated'}.", (1, 3, 4),
            (1.8, 1.1, 4.6, 1.0, 1.2) + ((1.8,) if named else ())))
    else:
        blocks.append(Para("No flanking elements: Ψ is not computed, only L2D.", "note"))

    # -- results in detail
    blocks.append(Heading(2, "Results in detail", "details"))
    if several:
        blocks.append(couplings.coupling_table(data))
        blocks.append(couplings.weighting_table(data, model.environments))
    rows = []
    if "coupling_coefficient" in hf:
        rows.append(["L2D, thermal coupling coefficient", _n(hf["coupling_coefficient"]),
                     "W/(m·K)"])
    if hf["flanking"] and "psi" in hf:
        rows.append(["Σ U·l of the flanking elements", _n(sum(f["ul"] for f in hf["flanking"])),
                     "W/(m·K)"])
    if "psi" in hf:
        rows.append(["Ψ, linear thermal transmittance", _n(hf["psi"]), "W/(m·K)"])
    rows.append(["θsi,min, lowest interior surface temperature", _n(st["theta_si_min"], 2),
                 f"°C at {at_text} {unit}{where_text}"])
    if "f_rsi" in st:
        rows.append(["fRsi = (θsi,min − θe)/(θi − θe)", _n(st["f_rsi"], 3), "–"])
    if f_rsi_min is not None:
        rows.append(["fRsi criterion given for this run", _g(f_rsi_min),
                     {"passes": "passes", "fails": "FAILS"}.get(verdict, "NOT ASSESSED")])
    for name, value in hf["heat_flow"].items():
        rows.append([f"heat flow from environment {name} (heat-flow case)", _n(value), "W/m"])
    rows.append(["heat-flow balance |Σ Φ| / max |Φ|", f"{hf['balance']:.1e}", "–"])
    mesh = data["mesh"]
    rows.append(["mesh", f"{mesh['nodes']} nodes, {mesh['triangles']} triangles",
                 f"{mesh['element']} elements"])
    blocks.append(Table(["quantity", "value", "unit / note"], rows, "", (1,), (4.5, 1.6, 3.9)))
    if hf.get("probes"):
        blocks.append(Table(
            ["probe", f"at [{unit}]", "θ heat-flow case [°C]", "θ surface-temperature case [°C]"],
            [[name, _point(p.at), _n(hf["probes"][name], 2), _n(st["probes"].get(name), 2)]
             for name, p in zip(hf["probes"], model.probes)],
            "Probe temperatures.", (2, 3), (3, 2, 2, 2.4)))

    blocks.extend(moisture.moisture_blocks(data))

    # -- convergence
    blocks.append(Heading(2, "Mesh refinement", "convergence"))
    if convergence:
        if "coupling_coefficient" in hf:
            rows = []
            for k, level in enumerate(convergence.get("levels", [])):
                rows.append([str(k + 1), str(level.get("nodes", "")),
                             str(level.get("triangles", "")), _n(level.get("heat_flow")),
                             _n(level.get("coupling_coefficient")), _n(level.get("psi")),
                             _n(level.get("theta_si_min"), 3)])
            blocks.append(Table(["level", "nodes", "triangles", "heat flow [W/m]",
                                 "L2D [W/(m·K)]", "Ψ [W/(m·K)]", "θsi,min [°C]"], rows,
                                "Mesh refinement study.", (0, 1, 2, 3, 4, 5, 6)))
        else:
            blocks.append(couplings.convergence_table(convergence))
        change = convergence.get("iso_doubling_change")
        lines = []
        if convergence.get("method"):
            lines.append(f"Refinement: {convergence['method']}"
                         + (f", tolerance {_g(convergence['tolerance'])}"
                            if convergence.get("tolerance") is not None else "")
                         + (f", observed order {convergence['observed_order']:.2f}"
                            if convergence.get("observed_order") is not None else "") + ".")
        if convergence.get("psi_extrapolated") is not None:
            error = convergence.get("psi_error_estimate")
            error = None if error is None else float(f"{error:.2g}")     # two significant digits
            guaranteed = convergence.get("error_estimates_guaranteed")
            lines.append(f"Ψ extrapolated to a zero mesh size: "
                         f"{_n(convergence['psi_extrapolated'])} W/(m·K)"
                         + ((f" ± {_g(error)} W/(m·K) (guaranteed: the exact Ψ of the model "
                             "as drawn lies within)" if guaranteed else
                             f" ± {_g(error)} W/(m·K) (estimate)")
                            if error is not None else "") + ".")
        check = convergence.get("theta_si_min_error_estimate")
        if check is not None and convergence.get("theta_si_min_quadratic") is not None:
            lines.append(f"θsi,min: estimated error {_g(float(f'{check:.2g}'))} K (four "
                         "times the difference to quadratic elements on the finest mesh: "
                         "an estimate, not a bound).")
        if change is not None:
            # stored as a fraction of the heat flow
            lines.append(f"Change of the heat flow on doubling the subdivisions: "
                         f"{100 * change:.3g} % (ISO 10211 asks for less than 1 %).")
        blocks.append(Para(" ".join(lines), "normal"))
        blocks.extend(bounds_blocks(convergence))
        if convergence.get("stop_reason"):
            blocks.append(Para(f"Stopped because: {convergence['stop_reason']}.", "normal"))
        if convergence.get("criterion_met"):
            blocks.append(Para("The mesh criterion of ISO 10211 is met: the result converged.",
                               "pass"))
        else:
            blocks.append(Para("The result did not converge: the mesh criterion of ISO 10211 "
                               "is not met, so the values above may still change with a finer "
                               "mesh. Refine the mesh before relying on them.", "fail"))
    else:
        blocks.append(Para(
            "No mesh refinement study was run for this result. ISO 10211 asks that doubling "
            "the number of subdivisions changes the computed heat flow by less than 1 %; "
            "that has not been shown here.", "warn"))

    # -- figures
    blocks.append(Heading(2, "Figures", "figures"))
    for k, name in enumerate(figures or {}):
        caption = FIGURE_CAPTIONS.get(name, name)
        if name in SECTION_FIGURES and detail_window(result) is not None:
            caption += CLOSE_VIEW_CAPTION
        if name == "surface_temperature" and "f_rsi" not in st:
            caption = caption.replace("; the right axis reads it as a temperature factor", "")
        elif name == "surface_temperature":
            caption += (f" The dash-dot line is the criterion fRsi = {_g(f_rsi_min)} given for "
                        f"this run." if f_rsi_min is not None else
                        " No criterion was given, so none is drawn.")
        blocks.append(Figure(name, Path(figures[name]), f"Figure {k + 1}. {caption}",
                             (figure_sizes or {}).get(name)))

    # -- validation stamp
    blocks.append(Heading(2, "Validation stamp", "validation"))
    if stamp is None:
        blocks.append(Para("The built-in validation cases (bridgecalc check) were not run for "
                           "this report.", "warn"))
    else:
        tone = "pass" if stamp.all_passed else "fail"
        blocks.append(Para(
            f"bridgecalc check with bridgecalc {stamp.version} (build fingerprint "
            f"{stamp.fingerprint}), run {stamp.checked_at}: {stamp.passed} compared quantities "
            f"passed, {stamp.failed} failed"
            + (" (results kept from that run; they are rerun whenever the tool's code or "
               "solver libraries change)" if stamp.from_cache else "") + ".", tone))
        blocks.append(Table(["case", "reference", "passed", "failed"],
                            [[c.case, c.source, str(c.passed), str(c.failed)]
                             for c in stamp.cases], "", (2, 3), (2.2, 6.0, 1, 1)))

    # -- cautions and files
    blocks.append(Heading(2, "Cautions", "cautions"))
    blocks.append(Para(CAUTION, "caution"))
    for text in EXTRA_CAUTIONS:
        blocks.append(Para(text, "normal"))
    if files:
        blocks.append(Heading(2, "Files of this run", "files"))
        blocks.append(Para(", ".join(files) + ".", "normal"))
    return Report(title, subtitle, blocks, date)
