"""Exports for other programs: the fields as VTU, the headline numbers as CSV.

``field.vtu`` (VTK unstructured grid, written with meshio; ParaView opens it)
    points: the mesh nodes [length_unit, z = 0]; cells: the triangles.
    point data: ``temperature_heat_flow_case`` and
    ``temperature_surface_temperature_case`` [°C] at the nodes (for P2, the
    vertex values); cell data: ``material_index`` (index into the material
    names sorted alphabetically; the report lists each with its index),
    ``region_index`` (index into the model's regions),
    ``conductivity`` [W/(m·K)] and ``heat_flux_density`` (qx, qy, 0) [W/m²]
    of the heat-flow case; and per environment ``g_<name>`` [-], its unit
    solution of the surface-temperature case (the temperature weighting
    factor field: θ = Σ g_j θ_j).
``results.csv``
    one header line and one row of the headline numbers; with more than two
    temperatures the two-temperature columns (θi, θe, L2D, Ψ, fRsi) are empty;
    with an ISO 13788 check, its criterion, critical month, required fRsi and
    verdict (empty without one).
``couplings.csv``
    one row per pair of environments: L_ij, its estimated error, Σ U·l and
    Ψ_ij where flanking elements name the pair.
"""

from __future__ import annotations

import csv
import io

import numpy as np

from ..assessments import f_rsi_verdict
from ..results import heat_flux_density

VTU_FILE = "field.vtu"
CSV_FILE = "results.csv"
COUPLINGS_FILE = "couplings.csv"

CSV_COLUMNS = (
    "name", "length_unit", "dimension_system", "element", "nodes", "triangles",
    "theta_i_C", "theta_e_C", "coupling_coefficient_W_per_mK", "sum_ul_W_per_mK",
    "psi_W_per_mK", "theta_si_min_C", "theta_si_min_x", "theta_si_min_y", "f_rsi",
    "f_rsi_min", "f_rsi_verdict", "heat_flow_balance", "converged", "version",
    "moisture_criterion", "critical_month", "f_rsi_required", "moisture_verdict",
)


def material_names(model) -> list[str]:
    """Material names in sorted order: the meaning of ``material_index``."""
    return sorted(model.materials)


def vtu_mesh(result):
    """The result as a :class:`meshio.Mesh` (see the module docstring).

    Parameters
    ----------
    result : bridgecalc.results.Result
    """
    import meshio
    model, mesh = result.model, result.mesh
    names = material_names(model)
    region_material = np.array([names.index(r.material) for r in model.regions],
                               dtype=np.int32)
    conductivity = np.array([model.materials[r.material].conductivity for r in model.regions])
    q = heat_flux_density(model, result.heat_flow_case.field)
    points = np.column_stack([mesh.nodes / model.metres_per_unit,
                              np.zeros(mesh.node_count)])
    return meshio.Mesh(
        points=points,
        cells=[("triangle", mesh.triangles.astype(np.int64))],
        point_data={
            "temperature_heat_flow_case": np.asarray(result.heat_flow_case.field.nodal,
                                                     dtype=float),
            "temperature_surface_temperature_case": np.asarray(
                result.surface_temperature_case.field.nodal, dtype=float),
            **weighting_factor_fields(result),
        },
        cell_data={
            "material_index": [region_material[mesh.region]],
            "region_index": [mesh.region.astype(np.int32)],
            "conductivity": [conductivity[mesh.region]],
            "heat_flux_density": [np.column_stack([q, np.zeros(len(q))])],
        },
    )


def weighting_factor_fields(result) -> dict:
    """``g_<environment>`` [-] at the nodes: each environment's unit solution of
    the surface-temperature case (none when the result carries no unit cases)."""
    cases = getattr(result, "cases", None)
    if cases is None:
        return {}
    return {f"g_{e.name}": np.asarray(u.nodal, dtype=float)
            for e, u in zip(result.model.environments, cases.surface.unit)}


def write_vtu(result, path) -> None:
    """Write ``field.vtu`` (binary, zlib-compressed XML VTK)."""
    import meshio
    meshio.write(path, vtu_mesh(result), file_format="vtu", binary=True,
                 compression="zlib")


def headline_row(result, f_rsi_min=None, dimension_system=None, version="") -> dict:
    """The CSV row: headline numbers, in the units named by the columns.

    Parameters
    ----------
    result : bridgecalc.results.Result
    f_rsi_min : float, optional
        The user's criterion [-].
    dimension_system : str, optional
        As stated by the model, or None.
    version : str
        bridgecalc version.
    """
    data = result.to_dict()
    hf, st = data["heat_flow_case"], data["surface_temperature_case"]
    convergence = data.get("convergence")
    verdict = f_rsi_verdict(st.get("f_rsi"), f_rsi_min, data.get("warnings")) or ""
    temperatures = data.get("temperatures", {})
    two = "coupling_coefficient" in hf
    row = {
        "name": data["name"] or "",
        "length_unit": data["length_unit"],
        "dimension_system": dimension_system or "not stated",
        "element": data["mesh"]["element"],
        "nodes": data["mesh"]["nodes"],
        "triangles": data["mesh"]["triangles"],
        "theta_i_C": temperatures.get("interior", ""),
        "theta_e_C": temperatures.get("exterior", ""),
        "coupling_coefficient_W_per_mK": hf.get("coupling_coefficient", ""),
        "sum_ul_W_per_mK": (sum(f["ul"] for f in hf["flanking"])
                            if hf["flanking"] and two else ""),
        "psi_W_per_mK": hf.get("psi", ""),
        "theta_si_min_C": st["theta_si_min"],
        "theta_si_min_x": st["theta_si_min_at"][0],
        "theta_si_min_y": st["theta_si_min_at"][1],
        "f_rsi": st.get("f_rsi", ""),
        "f_rsi_min": "" if f_rsi_min is None else f_rsi_min,
        "f_rsi_verdict": verdict,
        "heat_flow_balance": hf["balance"],
        "converged": "" if not convergence else ("yes" if convergence.get("criterion_met")
                                                 else "no"),
        "version": version,
    }
    moisture = data.get("moisture") or {}
    row.update({
        "moisture_criterion": moisture.get("criterion", ""),
        "critical_month": "" if moisture.get("critical_month") is None
        else moisture["critical_month"],
        "f_rsi_required": "" if moisture.get("f_rsi_required") is None
        else moisture["f_rsi_required"],
        "moisture_verdict": moisture.get("verdict", ""),
    })
    return row


COUPLING_COLUMNS = (
    "environment_i", "environment_j", "coupling_coefficient_W_per_mK",
    "error_estimate_W_per_mK", "sum_ul_W_per_mK", "psi_W_per_mK", "dimension_system",
)


def coupling_entries(data: dict) -> list[dict]:
    """Per pair of environments, from results.json's content: ``between``,
    ``value`` (L_ij), ``error`` (the study's estimate, or None), ``ul`` (Σ U·l)
    and ``psi`` (None without flanking elements naming the pair), ``flanking``
    (their names) [W/(m·K)]."""
    convergence = data.get("convergence") or {}
    errors = {tuple(c["between"]): c.get("error_estimate")
              for c in convergence.get("coupling_coefficients", [])}
    return [{"between": tuple(c["between"]), "value": c["value"],
             "error": errors.get(tuple(c["between"])),
             "ul": sum(f["ul"] for f in c["flanking"]) if "psi" in c else None,
             "psi": c.get("psi"), "flanking": [f["name"] for f in c.get("flanking", [])]}
            for c in data["heat_flow_case"]["coupling_coefficients"]]


def several_pairs(data: dict) -> bool:
    """Whether results.json's content has more than one pair of environments
    (then couplings.csv and the report's coupling tables are written)."""
    return len(data["heat_flow_case"]["coupling_coefficients"]) > 1


def coupling_rows(data: dict, dimension_system=None) -> list[dict]:
    """couplings.csv: one row per pair of environments (see the module docstring),
    from results.json's content."""
    return [{"environment_i": e["between"][0], "environment_j": e["between"][1],
             "coupling_coefficient_W_per_mK": e["value"],
             "error_estimate_W_per_mK": "" if e["error"] is None else e["error"],
             "sum_ul_W_per_mK": "" if e["ul"] is None else e["ul"],
             "psi_W_per_mK": "" if e["psi"] is None else e["psi"],
             "dimension_system": dimension_system or "not stated"}
            for e in coupling_entries(data)]


def csv_text(rows, columns=CSV_COLUMNS) -> str:
    """Header and the rows (one dict, or a list of them); floats in full
    precision (repr), so the text is deterministic."""
    rows = [rows] if isinstance(rows, dict) else rows
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([repr(row[c]) if isinstance(row[c], float) else row[c]
                         for c in columns])
    return buffer.getvalue()
