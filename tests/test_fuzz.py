"""Property-based tests: generated model files, mutated from a valid one and
made from scratch, through the reader and the command line.

Every file is either read (and then audited and written back to the same
model) or refused with a ModelError naming it; every command-line run either
exits 0 with complete outputs (valid JSON, every listed file there) or exits
2 with ``error: ...`` and nothing written. Never a traceback, a hang, a
partial folder or invalid JSON. The examples are derandomised, so CI runs the
same ones every time; together they make well over 1 000 per run.
"""

import contextlib
import copy
import io
import json
import math
import signal
import tempfile
from pathlib import Path

import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bridgecalc.audit import audit
from bridgecalc.cli import main
from bridgecalc.errors import ModelError
from bridgecalc.readers import modelfile

#: A small valid model, in millimetres: a two-layer wall 300 mm high.
BASE = {
    "format": 1,
    "name": "fuzz base",
    "length_unit": "mm",
    "materials": {"a": {"conductivity": 1.0}, "b": {"conductivity": 0.04, "source": "s"}},
    "regions": [{"material": "a", "rectangle": [0, 0, 100, 300]},
                {"material": "b", "polygon": [[100, 0], [160, 0], [160, 300], [100, 300]]}],
    "environments": [{"name": "in", "temperature": 20.0, "kind": "interior"},
                     {"name": "out", "temperature": 0.0, "kind": "exterior"}],
    "surfaces": [{"environment": "in", "resistance": 0.13,
                  "resistance_surface_temperature": 0.25, "path": [[0, 0], [0, 300]]},
                 {"environment": "out", "resistance": 0.04, "path": [[160, 0], [160, 300]]}],
    "flanking": [{"name": "wall", "length": 300,
                  "layers": [{"material": "a", "thickness": 100},
                             {"material": "b", "thickness": 60}]}],
    "probes": [{"name": "p", "at": [0, 150]}],
}

KEYS = sorted({"format", "name", "length_unit", "dimension_system", "materials", "regions",
               "environments", "surfaces", "flanking", "probes", "conductivity", "source",
               "air_layer", "thickness", "direction", "emissivities", "material", "rectangle",
               "polygon", "holes", "heat_source", "temperature", "kind", "environment",
               "resistance", "resistance_surface_temperature", "path", "between", "u_value",
               "length", "layers", "surface_resistances", "at", "a", "b", "in", "out"})

NUMBERS = st.one_of(
    st.sampled_from([0, -0.0, 1, -1, 0.5, 2, 100, 160, 300, 1e-9, 5e-324, 1e-308, 1e-300,
                     1e-30, 1e30, 1e300, 1.7e308, math.inf, -math.inf, math.nan, 2 ** 63 - 1,
                     -2 ** 63, 10 ** 6, 1e9, 1e10]),
    st.integers(-10 ** 4, 10 ** 4),
    st.floats(allow_nan=True, allow_infinity=True))
STRINGS = st.one_of(st.sampled_from(["", "a", "b", "in", "out", "mm", "m", "interior",
                                     "exterior", "unheated", "horizontal", "external"]),
                    st.text(max_size=8))
SCALARS = st.one_of(NUMBERS, STRINGS, st.booleans())
VALUES = st.recursive(SCALARS, lambda inner: st.one_of(
    st.lists(inner, max_size=5),
    st.dictionaries(st.one_of(st.sampled_from(KEYS), st.text(min_size=1, max_size=6)),
                    inner, max_size=5)), max_leaves=20)


def paths(tree, prefix=()):
    """Every place in a nested dict/list, as a tuple of keys and indices."""
    yield prefix
    if isinstance(tree, dict):
        for k, v in tree.items():
            yield from paths(v, prefix + (k,))
    elif isinstance(tree, list):
        for i, v in enumerate(tree):
            yield from paths(v, prefix + (i,))


@st.composite
def mutated(draw, base=BASE, at_most=3):
    """BASE with one to three mutations: a value replaced (by an extreme
    number, another type, a structure), a key or an item removed, an item
    repeated, numbers scaled, swapped or negated."""
    tree = copy.deepcopy(base)
    for _ in range(draw(st.integers(1, at_most))):
        places = [p for p in paths(tree) if p]
        if not places:
            break
        place = draw(st.sampled_from(places))
        parent = tree
        for key in place[:-1]:
            parent = parent[key]
        key = place[-1]
        op = draw(st.sampled_from(["replace", "number", "delete", "repeat", "scale",
                                   "negate", "swap"]))
        value = parent[key]
        if op == "replace":
            parent[key] = draw(VALUES)
        elif op == "number":
            parent[key] = draw(NUMBERS)
        elif op == "delete":
            del parent[key]
        elif op == "repeat" and isinstance(parent, list):
            parent.insert(key, copy.deepcopy(value))
        elif op in ("scale", "negate") and isinstance(value, (int, float)) \
                and not isinstance(value, bool):
            parent[key] = -value if op == "negate" else value * draw(
                st.sampled_from([1000, 0.001, 1e-6, 1e6]))
        elif op == "swap" and isinstance(parent, list) and len(parent) > 1:
            other = draw(st.integers(0, len(parent) - 1))
            parent[key], parent[other] = parent[other], parent[key]
    return tree


@st.composite
def from_scratch(draw):
    """A table of known and unknown keys with values of any type, often
    with format and length_unit right so that the reader goes deeper."""
    tree = draw(st.dictionaries(st.sampled_from(KEYS), VALUES, max_size=8))
    if draw(st.booleans()):
        tree.update({"format": 1, "length_unit": draw(st.sampled_from(["mm", "m"]))})
    return tree


def as_toml(tree) -> str | None:
    try:
        return tomli_w.dumps(tree)
    except (TypeError, ValueError):          # not representable in TOML: no file
        return None


@st.composite
def edited_text(draw):
    """The base file's text with characters deleted, repeated or inserted."""
    text = tomli_w.dumps(BASE)
    for _ in range(draw(st.integers(1, 4))):
        k = draw(st.integers(0, len(text)))
        op = draw(st.sampled_from(["delete", "insert", "repeat"]))
        if op == "delete":
            text = text[:k] + text[k + draw(st.integers(1, 8)):]
        elif op == "insert":
            text = text[:k] + draw(st.text(max_size=4)) + text[k:]
        else:
            text = text[:k] + text[k:k + 12] + text[k:]
    return text


def read_or_refuse(text: str) -> None:
    """The reader's property: a model (audited, and written back to the same
    model) or a ModelError naming the file."""
    try:
        model = modelfile.loads(text, "fuzz.toml")
    except ModelError as exc:
        assert str(exc).startswith("fuzz.toml"), str(exc)
        return
    audit(model)
    assert modelfile.loads(modelfile.dumps(model), "again.toml") == model


READER = settings(max_examples=500, derandomize=True, deadline=None, database=None,
                  suppress_health_check=list(HealthCheck))


@settings(READER, max_examples=700)
@given(mutated())
def test_mutated_files_are_read_or_refused(tree):
    text = as_toml(tree)
    if text is not None:
        read_or_refuse(text)


@READER
@given(from_scratch())
def test_files_from_scratch_are_read_or_refused(tree):
    text = as_toml(tree)
    if text is not None:
        read_or_refuse(text)


@settings(max_examples=300, derandomize=True, deadline=None, database=None,
          suppress_health_check=list(HealthCheck))
@given(edited_text())
def test_edited_text_is_read_or_refused(text):
    read_or_refuse(text)


def strict_json(text: str):
    """JSON as the standard has it: NaN and Infinity are not numbers."""
    def refuse(name):
        raise ValueError(f"{name} in results.json")
    return json.loads(text, parse_constant=refuse)


@contextlib.contextmanager
def time_limit(seconds: int):
    """A hang becomes a failure instead of a stuck test run."""
    def expire(signum, frame):
        raise TimeoutError(f"no answer within {seconds} s")
    previous = signal.signal(signal.SIGALRM, expire)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def run_cli(text: str) -> None:
    """The command line's property on one model file."""
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        source = folder / "fuzz.toml"
        source.write_text(text, encoding="utf-8")
        out = folder / "out"
        err = io.StringIO()
        with time_limit(120), contextlib.redirect_stdout(io.StringIO()), \
                contextlib.redirect_stderr(err):
            code = main(["run", str(source), "--out", str(out), "--tolerance", "0.05",
                         "--max-nodes", "4000"])
        left = sorted(p.name for p in folder.iterdir())
        if code == 2:
            assert err.getvalue().startswith("error: "), err.getvalue()
            assert left == ["fuzz.toml"], left
            return
        assert code == 0, (code, err.getvalue())
        assert left == ["fuzz.toml", "out"], left        # no staging folder left
        data = strict_json((out / "results.json").read_text(encoding="utf-8"))
        assert data["format"] == 1 and "heat_flow_case" in data
        listed = strict_json((out / ".bridgecalc-run").read_text(encoding="utf-8"))["files"]
        for name in ("results.json", "results.csv", "report.html", "report.pdf",
                     "temperature.png"):
            assert name in listed and (out / name).stat().st_size > 0, name


@settings(max_examples=20, derandomize=True, deadline=None, database=None,
          suppress_health_check=list(HealthCheck))
@given(mutated(at_most=1))
def test_the_command_line_computes_or_refuses_mutated_files(tree):
    text = as_toml(tree)
    if text is not None:
        run_cli(text)
