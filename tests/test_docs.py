"""Every example in README.md and docs/*.md runs.

Conventions in the Markdown: a ```toml block is a model file and must be
valid; ``<!-- file: NAME -->`` on the line before it saves it as NAME for the
examples that follow. In a ```console block every line starting with
``bridgecalc`` is run and must succeed (lines installing or testing the
package are CI's job and skipped). A ```python block is executed. Each
document runs in its own temporary folder, with geometries/ reachable.
"""

import os
import re
import shlex
from pathlib import Path

import pytest

from bridgecalc.readers import modelfile as model_io
from bridgecalc.schedule import read_project
from bridgecalc.cli import main

from conftest import GEOMETRIES, ROOT

DOCS = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
BLOCK = re.compile(r"(?:<!--\s*file:\s*(?P<file>\S+)\s*-->\s*\n)?```(?P<lang>\w+)\n(?P<body>.*?)```",
                   re.S)
SKIP_PREFIXES = ("python -m pip", "python -m pytest", "pip ")


def blocks(path: Path):
    for m in BLOCK.finditer(path.read_text(encoding="utf-8")):
        yield m.group("lang"), m.group("body"), m.group("file")


def test_readme_has_examples():
    langs = [lang for lang, _, _ in blocks(ROOT / "README.md")]
    assert "toml" in langs and "python" in langs and "console" in langs


def test_readme_quick_start_lines():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    quick = text.split("## Quick start", 1)[1].split("```console", 1)[1].split("```", 1)[0]
    lines = [line for line in quick.strip().splitlines() if line.strip()]
    assert lines == ['python -m pip install -e ".[test]" && bridgecalc demo',
                     'python -m pip install -e ".[test]" && python -m pytest']
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert lines[1] in ci


@pytest.mark.parametrize("doc", DOCS, ids=lambda p: p.name)
def test_examples_run(doc, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    os.symlink(GEOMETRIES, tmp_path / "geometries")
    ran = 0
    for lang, body, filename in blocks(doc):
        if lang == "toml" and "[[junctions]]" in body:      # a project file
            (tmp_path / (filename or "project.toml")).write_text(body, encoding="utf-8")
            read_project(tmp_path / (filename or "project.toml"))
            ran += 1
        elif lang == "toml" and re.search(r"^format\s*=", body, re.M):
            model_io.loads(body, f"{doc.name} example")
            if filename:
                (tmp_path / filename).write_text(body, encoding="utf-8")
            ran += 1
        elif lang == "console":
            for line in body.splitlines():
                line = line.strip().removeprefix("$ ")
                if not line.startswith("bridgecalc ") or line.startswith(SKIP_PREFIXES):
                    continue
                assert main(shlex.split(line)[1:]) == 0, line
                ran += 1
        elif lang == "python":
            exec(compile(body, f"{doc.name} example", "exec"), {"__name__": "__doc_example__"})
            ran += 1
    if doc.name == "README.md":
        assert ran >= 4
