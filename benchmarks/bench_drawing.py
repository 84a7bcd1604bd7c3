"""Issue-12 speed target: reading a drawing of 5 000 entities in under 1 s.

The drawing is the kind a practitioner sends: a plan of a masonry wall with 400
blocks (each a closed polyline under its hatch, 800 entities), its insulation,
boundary lines, and 4 196 entities of clutter on layers the model file does not
list (dimension lines, text, hatch-pattern lines, a grid of construction lines,
a title block reference). Timed: `bridgecalc.load` of the model file that reads
it (open the DXF, walk the model space, flatten, snap, deduplicate, nest,
validate), best and median of several repeats, split into its stages; the
baseline in the same run is `load` of the self-contained model file of the same
model (`bridgecalc export --to .toml`), which skips only the drawing.

Usage: python benchmarks/bench_drawing.py [--repeats N]
"""

from __future__ import annotations

import argparse
import platform
import statistics
import tempfile
import time
from pathlib import Path

import ezdxf

import bridgecalc
from bridgecalc.readers import drawing, shapes

TARGET_SECONDS = 1.0
ENTITIES = 5000
COURSES, PER_COURSE = 20, 20          # 400 blocks [-]
BLOCK, JOINT = 240.0, 10.0           # block length, joint [mm]

MODEL = """format = 1
name = "Benchmark: masonry wall in plan, 400 blocks"
length_unit = "mm"
[materials.block]
conductivity = 0.7
[materials.mortar]
conductivity = 0.9
[materials.eps]
conductivity = 0.035
[drawing]
file = "wall.dxf"
layers = [{ layer = "MORTAR", material = "mortar" }, { layer = "BLOCKS", material = "block" },
          { layer = "EPS", material = "eps" }]
[[environments]]
name = "inside"
temperature = 20.0
kind = "interior"
[[environments]]
name = "outside"
temperature = 0.0
kind = "exterior"
[[surfaces]]
environment = "inside"
resistance = 0.13
layer = "BC-IN"
[[surfaces]]
environment = "outside"
resistance = 0.04
layer = "BC-OUT"
"""


def make_drawing(path: Path) -> int:
    """Write the benchmark drawing; returns its number of model-space entities."""
    doc = ezdxf.new("R2010", units=4)
    msp = doc.modelspace()
    height = COURSES * (BLOCK / 2 + JOINT)
    width = PER_COURSE * (BLOCK + JOINT)
    msp.add_lwpolyline([(0, 0), (width, 0), (width, height), (0, height)], close=True,
                       dxfattribs={"layer": "MORTAR"})
    for row in range(COURSES):
        y0 = row * (BLOCK / 2 + JOINT) + JOINT / 2
        shift = 0.0 if row % 2 == 0 else (BLOCK + JOINT) / 2
        for k in range(PER_COURSE):
            x0 = (k * (BLOCK + JOINT) + shift) % width + JOINT / 2
            x1 = min(x0 + BLOCK, width - JOINT / 2)
            ring = [(x0, y0), (x1, y0), (x1, y0 + BLOCK / 2), (x0, y0 + BLOCK / 2)]
            msp.add_lwpolyline(ring, close=True, dxfattribs={"layer": "BLOCKS"})
            hatch = msp.add_hatch(dxfattribs={"layer": "BLOCKS"})
            hatch.paths.add_polyline_path(ring, is_closed=True)
    eps = [(0, height), (width, height), (width, height + 160), (0, height + 160)]
    msp.add_lwpolyline(eps, close=True, dxfattribs={"layer": "EPS"})
    msp.add_line((0, 0), (width, 0), dxfattribs={"layer": "BC-IN"})
    msp.add_line((0, height + 160), (width, height + 160), dxfattribs={"layer": "BC-OUT"})
    title = doc.blocks.new("TITLE")
    for k in range(20):
        title.add_text(f"line {k}", dxfattribs={"layer": "TITLE"})
    msp.add_blockref("TITLE", (0, -2000), dxfattribs={"layer": "TITLE"})
    k = 0
    while len(msp) < ENTITIES:
        kind = k % 4
        if kind == 0:
            msp.add_line((k, -100), (k, -200), dxfattribs={"layer": "DIMS"})
        elif kind == 1:
            msp.add_text(f"note {k}", dxfattribs={"layer": "TEXT"})
        elif kind == 2:
            msp.add_line((-500, k), (width + 500, k), dxfattribs={"layer": "GRID"})
        else:
            msp.add_circle((k, -300), 5, dxfattribs={"layer": "HIDDEN"})
        k += 1
    doc.saveas(path)
    return len(msp)


def timed(fn, repeats):
    times, value = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        value = fn()
        times.append(time.perf_counter() - t0)
    return min(times), statistics.median(times), value


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        count = make_drawing(folder / "wall.dxf")
        (folder / "wall.toml").write_text(MODEL, encoding="utf-8")
        model = bridgecalc.load(folder / "wall.toml")            # warm imports
        bridgecalc.export(model, folder / "polygons.toml")
        best, median, model = timed(lambda: bridgecalc.load(folder / "wall.toml"), args.repeats)
        base_best, base_median, _ = timed(lambda: bridgecalc.load(folder / "polygons.toml"),
                                          args.repeats)
        open_best, _, doc = timed(lambda: drawing.open_drawing(folder / "wall.dxf", "wall"),
                                  args.repeats)

        def read():
            return drawing.read_drawing(folder / "wall.dxf", ["MORTAR", "BLOCKS", "EPS"],
                                        ["BC-IN", "BC-OUT"], None, "mm", "wall")
        read_best, _, content = timed(read, args.repeats)

        def build():
            content = read()
            t0 = time.perf_counter()
            shapes.build(["MORTAR", "BLOCKS", "EPS"], ["BC-IN", "BC-OUT"], content.pieces,
                         1.0, shapes.SNAP_MM, "wall")
            return time.perf_counter() - t0
        shape_best = min(build() for _ in range(args.repeats))
    print(f"machine: {platform.machine()} {platform.processor() or ''}, "
          f"python {platform.python_version()}, ezdxf {ezdxf.__version__}")
    print(f"drawing: {count} entities in model space, {len(model.regions)} regions read, "
          f"{len(model.surfaces)} surface paths")
    print(f"load(drawing + model file)   best {best:.3f} s   median {median:.3f} s   "
          f"(target < {TARGET_SECONDS:.1f} s: {'met' if best < TARGET_SECONDS else 'NOT met'})")
    print(f"  of which ezdxf opens the DXF        {open_best:.3f} s")
    print(f"  entities on listed layers to points {max(read_best - open_best, 0):.3f} s")
    print(f"  snapping, duplicates, holes         {shape_best:.3f} s")
    print(f"baseline: load(self-contained model file of the same model)   best "
          f"{base_best:.3f} s   median {base_median:.3f} s")
    print(f"ratio drawing / model file: {best / base_best:.2f}")


if __name__ == "__main__":
    main()
