"""The package's layout: folders along the data path, imports one way.

inputs (physics, model, readers) → mesh → solve → study → results →
assessments → validation → outputs → sweep → schedule → api → cli. A module may import, at module
level, only from its own stage or earlier ones; functions on top (api's
facade, a worker starting the pipeline) may import later stages where they
run them. These are the project's own rules (DEVELOPERS.md), checked on the
source itself.
"""

from __future__ import annotations

import ast
import tomllib

import pytest

from conftest import ROOT

PACKAGE = ROOT / "bridgecalc"

#: Stages in data-path order; a module's stage is its first path part.
STAGES = ["__init__", "errors", "physics", "model", "readers", "audit", "mesh", "solve", "study",
          "results", "assessments", "validation", "outputs", "sweep", "schedule", "api", "cli",
          "__main__"]


def stage_of(parts: tuple[str, ...]) -> int:
    return STAGES.index(parts[0].removesuffix(".py"))


def modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        yield path, path.relative_to(PACKAGE).parts


def module_level_imports(path):
    """(line, target parts) of the package's own imports made at module level."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    here = path.relative_to(PACKAGE).parts[:-1]
    for node in tree.body:
        if isinstance(node, ast.ImportFrom) and node.level > 0:
            base = here[:len(here) - (node.level - 1)] if node.level > 1 else here
            target = base + tuple(node.module.split(".")) if node.module else base
            if not node.module:                 # "from . import x": x a module, or a name
                name = node.names[0].name
                folder = PACKAGE.joinpath(*target)
                is_module = (folder / f"{name}.py").exists() or (folder / name).is_dir()
                target = target + (name,) if is_module else target
            yield node.lineno, target or ("__init__",)
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("bridgecalc."):
            yield node.lineno, tuple(node.module.split(".")[1:])


@pytest.mark.parametrize("path, parts", list(modules()), ids=lambda x: str(x)[-40:])
def test_imports_flow_one_way(path, parts):
    if parts[0] in ("__init__.py", "__main__.py"):
        return
    mine = stage_of(parts)
    for line, target in module_level_imports(path):
        assert stage_of(target) <= mine, (
            f"{path.relative_to(ROOT)}:{line} imports {'.'.join(target)}, a later stage")


def test_only_the_mesh_imports_gmsh():
    users = [path.relative_to(PACKAGE).as_posix() for path, _ in modules()
             if "import gmsh" in path.read_text(encoding="utf-8")]
    assert users and all(u.startswith("mesh/") for u in users), users


def test_every_subpackage_ships():
    """pyproject lists the packages explicitly (geometries/ maps to
    bridgecalc.geometries): none may be left out of the wheel."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(config["tool"]["setuptools"]["packages"])
    found = {"bridgecalc." + ".".join(p.relative_to(PACKAGE).parts[:-1])
             for p in PACKAGE.rglob("__init__.py")}
    found = {f.rstrip(".") for f in found} | {"bridgecalc.geometries"}
    assert listed == found
    assert config["tool"]["setuptools"]["package-dir"] == {"bridgecalc.geometries": "geometries"}


def test_geometry_scripts_are_package_data():
    """The demo and the junction library are found through the package, not
    the source tree, so they work after a plain `pip install .`."""
    from bridgecalc import api
    folder = api.geometries_folder()
    assert (folder / api.DEMO_SCRIPT).is_file()
    assert sorted(p.name for p in folder.glob("*.py") if p.name != "__init__.py") == sorted(
        p.name for p in (ROOT / "geometries").glob("*.py") if p.name != "__init__.py")


def test_a_built_wheel_carries_the_package_and_its_junction_library(tmp_path):
    """What `pip install .` installs (not editable): every subpackage and the
    geometry scripts, so the demo loads from the installed package alone."""
    import subprocess
    import sys
    import zipfile
    built = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w",
                            str(tmp_path / "dist"), str(ROOT)], capture_output=True, text=True)
    assert built.returncode == 0, built.stderr
    (wheel,) = (tmp_path / "dist").glob("bridgecalc-*.whl")
    names = zipfile.ZipFile(wheel).namelist()
    assert "bridgecalc/geometries/slab_edge.py" in names
    assert "bridgecalc/outputs/figures/temperature.py" in names
    assert all(n.startswith(("bridgecalc/", "bridgecalc-")) for n in names), names
    unpacked = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(unpacked)
    probe = ("import sys; sys.path.insert(0, sys.argv[1]); import bridgecalc; "
             "from bridgecalc import api; "
             "assert bridgecalc.__file__.startswith(sys.argv[1]), bridgecalc.__file__; "
             "folder = api.geometries_folder(); "
             "assert str(folder).startswith(sys.argv[1]), folder; "
             "print(api.demo_model().name)")
    ran = subprocess.run([sys.executable, "-c", probe, str(unpacked)], capture_output=True,
                         text=True, cwd=tmp_path)
    assert ran.returncode == 0, ran.stderr
    assert "Balcony slab, no thermal break" in ran.stdout
