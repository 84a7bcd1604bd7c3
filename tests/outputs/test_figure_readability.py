"""Rendered figures carry what a reviewer must read.

Checks on the figures as drawn: isotherm labels upright (a text turned by
more than a quarter turn reads upside down: "6" as "9"), a close view of the
junction where it is small in a large section and none where the section is
compact, every material's colour present in the raster at the rendered size
(thin parts included), and the θsi,min marker inside the close view. The
references are the drawings' own geometry: the model's coordinates, its
materials' colours, and where the demo's coldest point lies (a corner of the
slab at the wall's interior face, checked against the model in
tests/outputs/test_report.py).
"""

import io

import numpy as np
import pytest
from PIL import Image

from bridgecalc.api import load, run
from bridgecalc.outputs import figures
from bridgecalc.outputs.figures import files, isotherms
from bridgecalc.readers.modelfile import loads

from conftest import thin_layer_models


def _labels(fig):
    """The isotherm labels of a temperature figure."""
    ax = fig.axes[0]
    return [t for c in ax.collections for t in getattr(c, "labelTexts", [])]


def _pixels(fig):
    with Image.open(io.BytesIO(files._render_png(fig, figures.PNG_DPI))) as im:
        return np.asarray(im.convert("RGB"), dtype=int)


def test_upright_turns_every_direction_to_a_readable_one():
    # a line direction and its reverse are the same line: 180° apart
    for degrees in np.arange(-720, 721, 0.5):
        r = isotherms.upright(degrees)
        assert -90 < r <= 90
        off = (r - degrees) % 180
        if abs(r) < 90 - isotherms.VERTICAL_SNAP:
            assert off == pytest.approx(0, abs=1e-9) or off == pytest.approx(180)
        else:           # near vertical: set vertical, read from bottom to top
            assert r == 90 and min(off, 180 - off) <= isotherms.VERTICAL_SNAP


def test_isotherm_labels_are_upright_in_the_whole_and_the_close_view(demo):
    for name in ("temperature", "temperature_detail"):
        fig = figures.build_figure(name, demo)
        try:
            labels = _labels(fig)
            assert len(labels) >= 5, name
            for text in labels:
                turn = (text.get_rotation() + 180.0) % 360.0 - 180.0
                assert -90.0 <= turn <= 90.0, (name, text.get_text(), text.get_rotation())
                # near-vertical labels all read one way, bottom to top
                assert turn > -90.0 + isotherms.VERTICAL_SNAP, (name, text.get_text(), turn)
        finally:
            figures.plt.close(fig)


def test_a_small_junction_gets_close_views_and_a_compact_section_none(demo, geometries):
    """The demo's slab crosses a wall 2.6 m high and runs 1.9 m out: its
    junction (the slab in the wall, some 0.4 × 0.22 m) is small against the
    section. The timber stud's 0.6 m section is the stud bay itself."""
    window = figures.detail_window(demo)
    assert window is not None
    (x0, y0), (x1, y1) = window
    # the slab's passage through the wall: x 0 to 400 mm, y 0 to 220 mm
    assert x0 <= 0 and x1 >= 400 and y0 <= 0 and y1 >= 220
    assert max(x1 - x0, y1 - y0) <= 0.5 * 2900          # a close view, not the whole
    # each figure of the section shows the close view beside the whole, in
    # the same figure: a second plot whose limits are the window, grown
    # about its centre where the plot's box is taller than the window (the
    # mesh figure's colour bar and legend beside it need the height)
    for whole in ("materials", "mesh", "temperature", "heat_flux"):
        fig = figures.build_figure(whole, demo)
        try:
            close = [a for a in fig.axes if a.get_gid() == "close-view"]
            assert len(close) == 1, whole
            assert close[0].get_xlim() == pytest.approx((x0, x1))
            (c0, c1) = close[0].get_ylim()
            assert c0 <= y0 + 1e-9 and c1 >= y1 - 1e-9
            assert (c0 + c1) / 2 == pytest.approx((y0 + y1) / 2)
            if whole in ("temperature", "heat_flux"):
                assert (c0, c1) == pytest.approx((y0, y1))
            # the plot fills its box: no room left empty above or beside it
            box = close[0].get_position(original=True)
            close[0].apply_aspect()
            assert close[0].get_position().height == pytest.approx(box.height, rel=1e-3)
            assert close[0].get_position().width == pytest.approx(box.width, rel=1e-3)
        finally:
            figures.plt.close(fig)
    compact = run(load(geometries / "timber_stud.py"), refinement=None)
    assert figures.detail_window(compact) is None
    fig = figures.build_figure("temperature", compact)
    try:
        assert not [a for a in fig.axes if a.get_gid() == "close-view"]
    finally:
        figures.plt.close(fig)


def test_the_close_view_frame_is_marked_on_the_whole(demo):
    for name in ("heat_flux", "mesh"):
        fig = figures.build_figure(name, demo)
        try:
            frames = [a for a in fig.axes[0].get_children() if a.get_gid() == "detail-window"]
            assert len(frames) == 1
            (near,) = [a for a in fig.axes if a.get_gid() == "close-view"]
            (x0, x1), (y0, y1) = near.get_xlim(), near.get_ylim()
            corners = frames[0].get_xy()
            assert corners[:, 0].min() == pytest.approx(x0) and corners[:, 0].max() == \
                pytest.approx(x1) and corners[:, 1].max() == \
                pytest.approx(y1) and corners[:, 1].min() == pytest.approx(y0)
        finally:
            figures.plt.close(fig)


def test_the_coldest_point_is_marked_inside_the_close_view(demo):
    """In the close view beside the whole (the run's temperature figure) and
    in the close view alone."""
    for name in ("temperature", "temperature_detail"):
        fig = figures.build_figure(name, demo)
        try:
            (ax,) = ([a for a in fig.axes if a.get_gid() == "close-view"]
                     if name == "temperature" else fig.axes[:1])
            markers = [line for line in ax.lines if line.get_gid() == "theta-si-min-marker"]
            assert len(markers) == 1
            x, y = markers[0].get_xydata()[0]
            assert (x, y) == pytest.approx(demo.surface_temperature_case.theta_si_min_at)
            (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
            assert x0 < x < x1 and y0 < y < y1
        finally:
            figures.plt.close(fig)


def test_every_material_shows_its_colour_even_a_thin_membrane():
    """A 2 mm membrane in a 2 m wall is 0.3 pt on the page: outlined in its
    own colour, it still shows, as every other material does."""
    bench = thin_layer_models()
    model = loads(bench.wall_text("membrane 2 mm", [("concrete", 198), ("membrane", 2),
                                                    ("insulation", 160)]))
    result = run(model, tolerance=0.05)
    fig = figures.build_figure("materials", result)
    try:
        pixels = _pixels(fig)
        colours = figures.material_colours(model)
        for name, style in colours.items():
            rgb = np.round(np.asarray(style["fill"][:3]) * 255).astype(int)
            present = (np.abs(pixels - rgb).max(axis=2) <= 2).sum()
            assert present >= 50, (name, present)
        # read as one line: labels are wrapped to the panel's width
        legend = [" ".join(t.get_text().split()) for t in fig.legends[0].get_texts()]
        assert any(t.startswith("membrane (thin: outlined)") for t in legend)
        assert not any(t.startswith("concrete (thin") for t in legend)
    finally:
        figures.plt.close(fig)


def test_the_profiles_distance_axis_is_marked_on_the_section(demo):
    """The interior surface profile's distances, marked along the surface on
    the temperature figure: "s = 0" at the start of the first run (the first
    point of the model's first surface path), and every mark on the outline at
    the distance it names (a wall face at x = 0 or the slab's faces)."""
    fig = figures.build_figure("temperature", demo)
    try:
        marks = [a for a in fig.axes[0].texts if a.get_gid() == "profile-distance"]
        assert len(marks) >= 4
        start = [a for a in marks if a.get_text() == "s = 0"]
        assert len(start) == 1
        assert tuple(start[0].xy) == pytest.approx(demo.model.surfaces[0].path[0])
        for mark in marks:
            x, y = mark.xy
            assert x == pytest.approx(0) or y == pytest.approx(0) or y == pytest.approx(220)
        # the first run goes down the wall from y = 1420: 1000 along it is at y = 420
        thousand = [a for a in marks if a.get_text() == "1000"]
        assert thousand and tuple(thousand[0].xy) == pytest.approx((0.0, 420.0))
    finally:
        figures.plt.close(fig)


def test_distances_keep_clear_of_the_coldest_points_label(demo):
    """No distance along the interior surface is printed under the θsi,min
    label, in the whole view or the close view (the demo's "1000" fell under
    it, at the wall's face just above the slab), nor over an isotherm label."""
    fig = figures.build_figure("temperature", demo)
    try:
        fig.canvas.draw()
        renderer = fig.canvas.get_renderer()
        checked = 0
        for ax in fig.axes:
            labels = [t for t in ax.texts if t.get_gid() == "theta-si-min-label"]
            marks = [t for t in ax.texts if t.get_gid() == "profile-distance"]
            labels += [t for c in ax.collections for t in getattr(c, "labelTexts", [])]
            for label in labels:
                box = label.get_window_extent(renderer)
                for mark in marks:
                    assert not mark.get_window_extent(renderer).overlaps(box), \
                        (mark.get_text(), label.get_text())
                    checked += 1
        assert checked >= 4
    finally:
        figures.plt.close(fig)


def _label_boxes(fig):
    """Each isotherm label's box as drawn: a (turned) quadrilateral [display px]."""
    fig.canvas.draw()
    boxes = []
    for text in _labels(fig):
        patch = text.get_bbox_patch()
        corners = patch.get_path().transformed(patch.get_transform()).vertices
        boxes.append((text.get_text(), np.unique(corners.round(6), axis=0)))
    return boxes


def _separated(a, b) -> bool:
    """True when the convex point sets ``a`` and ``b`` (polygons or segments) do
    not overlap: some edge normal of either separates them (separating-axis
    theorem)."""
    for poly in (a, b):
        hull = poly[_convex_order(poly)]
        for p, q in zip(hull, np.roll(hull, -1, axis=0)):
            normal = np.array([q[1] - p[1], p[0] - q[0]])
            if not normal.any():
                continue
            pa, pb = a @ normal, b @ normal
            if pa.max() < pb.min() or pb.max() < pa.min():
                return True
    return False


def _convex_order(points):
    centre = points.mean(axis=0)
    return np.argsort(np.arctan2(points[:, 1] - centre[1], points[:, 0] - centre[0]))


def test_isotherm_labels_clear_of_each_other_and_of_the_outline(demo):
    # geometry of the drawn figure: each label's box against every other label's
    # and against every outline edge of the model (as the plot maps it)
    xy = demo.mesh.nodes / demo.model.metres_per_unit
    for name in ("temperature", "temperature_detail"):
        fig = figures.build_figure(name, demo)
        try:
            boxes = _label_boxes(fig)
            assert len(boxes) >= 5, name
            ax = fig.axes[0]
            plot = ax.get_window_extent()
            edges = ax.transData.transform(xy[demo.mesh.boundary_edges].reshape(-1, 2))
            edges = edges.reshape(-1, 2, 2)
            inside = ((edges.max(axis=1) >= (plot.x0, plot.y0)).all(axis=1)
                      & (edges.min(axis=1) <= (plot.x1, plot.y1)).all(axis=1))
            for k, (text, box) in enumerate(boxes):
                for other, box2 in boxes[k + 1:]:
                    assert _separated(box, box2), (name, text, other)
                for edge in edges[inside]:
                    assert _separated(box, edge), (name, text, edge.tolist())
        finally:
            figures.plt.close(fig)


def test_the_separation_check_sees_overlaps():
    square = np.array([[0, 0], [2, 0], [2, 2], [0, 2]], float)
    turned = np.array([[1, -0.5], [2.5, 1], [1, 2.5], [-0.5, 1]], float)
    assert not _separated(square, turned)
    assert _separated(square, square + 3)
    assert not _separated(square, np.array([[-1, 1], [3, 1]], float))     # a segment across
    assert _separated(square, np.array([[-1, 3], [3, 2.5]], float))       # one above it


def test_label_spacing_distances_match_a_kd_tree():
    """The grid that keeps labels apart (isotherms.PointsNear) finds the same
    nearest distances, capped at its reach, as SciPy's k-d tree (an
    independent nearest-neighbour search), with and without excluding the
    query's own isotherm."""
    from scipy.spatial import cKDTree
    rng = np.random.default_rng(7)
    points = rng.random((3000, 2)) * 100
    labels = rng.integers(0, 4, len(points))
    queries = rng.random((800, 2)) * 120 - 10        # some beyond the points' box
    own = rng.integers(0, 4, len(queries))
    near = isotherms.PointsNear(points, 4.0, labels)
    found = near.distance(queries)
    expected = np.minimum(cKDTree(points).query(queries)[0], 4.0)
    assert np.allclose(found, expected, rtol=0, atol=1e-12)
    found = near.distance(queries, exclude=own)
    for label in range(4):
        tree = cKDTree(points[labels != label])
        mine = own == label
        assert np.allclose(found[mine], np.minimum(tree.query(queries[mine])[0], 4.0),
                           rtol=0, atol=1e-12)
    assert (found < 4.0).any() and (found == 4.0).any()     # both cases occur


@pytest.mark.parametrize("name", ["temperature", "heat_flux", "mesh"])
def test_field_images_are_drawn_the_right_way_up(name):
    """The colour under a point of the rendered figure is the colour of the
    field at that point. The section is an L whose arm runs along the top
    only, so a field image turned upside down (or mirrored) puts the arm's
    colours where the figure shows background, and the background where
    the arm is. Reference: the model's own geometry and the field's values
    at the sampled points, through the figure's colour map."""
    model = loads('''
format = 1
name = "L, asymmetric"
length_unit = "mm"
[materials.a]
conductivity = 1.0
[materials.b]
conductivity = 0.05
[[regions]]
material = "a"
polygon = [[0, 0], [200, 0], [200, 1500], [1500, 1500], [1500, 1700], [0, 1700]]
[[regions]]
material = "b"
polygon = [[200, 0], [400, 0], [400, 1300], [1500, 1300], [1500, 1500], [200, 1500]]
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
resistance_surface_temperature = 0.25
path = [[0, 0], [0, 1700], [1500, 1700]]
[[surfaces]]
environment = "outside"
resistance = 0.04
path = [[400, 0], [400, 1300], [1500, 1300]]
''')
    result = run(model, refinement=None)
    from bridgecalc.outputs.write import assessed
    result, _ = assessed(result)
    fig = figures.build_figure(name, result)
    try:
        pixels = _pixels(fig)
        ax = fig.axes[0]
        scale = figures.PNG_DPI / fig.dpi
        background = np.asarray(matplotlib_colour(ax.get_facecolor()))
        def colour_at(x, y):
            px, py = ax.transData.transform((x, y)) * scale
            row, col = int(round(pixels.shape[0] - py)), int(round(px))
            patch = pixels[row - 2:row + 3, col - 2:col + 3].reshape(-1, 3)
            return np.median(patch, axis=0)
        # in the arm (solid) and mirrored about the view's middle (no solid)
        y0, y1 = ax.get_ylim()
        arm = (1200.0, 1600.0)
        mirrored = (arm[0], y0 + y1 - arm[1])
        assert not np.allclose(colour_at(*arm), background, atol=6), "arm shows background"
        assert np.allclose(colour_at(*mirrored), background, atol=6), "field where no solid is"
        if name == "temperature":
            image = [a for a in ax.get_images()][0]
            theta = float(result.surface_temperature_case.field.at(
                [(arm[0] / 1000, arm[1] / 1000)])[0])
            expected = np.asarray(image.cmap(image.norm(theta))[:3]) * 255
            assert np.allclose(colour_at(*arm), expected, atol=12), (colour_at(*arm), expected)
    finally:
        figures.plt.close(fig)


def matplotlib_colour(colour):
    """An RGB(A) colour in 0..1 as 0..255 RGB."""
    return [round(255 * c) for c in colour[:3]]


def test_legend_labels_stay_inside_the_figure(geometries):
    """The ground floor's materials legend sits in a side panel at the page's
    right edge; its longest label ("cement_screed (thin: outlined)") ran past
    the figure's edge. Every legend text, as drawn, lies inside the figure,
    and reads the same once its line breaks are taken out."""
    result = run(load(geometries / "ground_floor.py"))
    fig = figures.build_figure("materials", result)
    try:
        renderer = fig.canvas.get_renderer()
        right = fig.bbox.x1
        texts = fig.legends[0].get_texts()
        for text in texts:
            box = text.get_window_extent(renderer)
            assert box.x1 <= right, (text.get_text(), box.x1, right)
        words = " ".join(" ".join(t.get_text().split()) for t in texts)
        assert "cement_screed (thin: outlined)" in words
        assert any("\n" in t.get_text().split("\nλ")[0] for t in texts)   # one was wrapped
    finally:
        figures.plt.close(fig)


def test_wrapping_breaks_at_spaces_then_inside_words():
    """Lines wider than the room break at spaces, then after "_" or "-", then
    anywhere; no line comes out wider than the room unless it is one
    character; the text reads the same without its breaks."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import text_to_path
    from bridgecalc.outputs.figures.layout import wrap_to_width
    font = FontProperties(size=7.0)

    def wide(line):
        return text_to_path.get_text_width_height_descent(line, font, ismath=False)[0] / 72.0
    for text in ("short", "two words that will not fit on one line at all",
                 "a_long_material_name_without_spaces_anywhere_in_it",
                 "x" * 80, "first line fits\nsecond line is much too long to fit the room"):
        wrapped = wrap_to_width(text, 1.0, 7.0)
        assert all(wide(line) <= 1.0 or len(line) == 1 for line in wrapped.split("\n"))
        # nothing but white space added or taken away
        assert "".join(wrapped.split()) == "".join(text.split())
    assert wrap_to_width("short", 1.0, 7.0) == "short"
    assert wrap_to_width("ab_cd", wide("ab_c"), 7.0).split("\n")[0] == "ab_"


def test_distances_keep_clear_of_the_scale_bar(geometries):
    """The window jamb's interior surface starts at the top of a tall narrow
    section, in the corner where the scale bar goes: its "s = 0" was printed
    over the bar. Every distance text now lies clear of the scale bar."""
    result = run(load(geometries / "window_jamb.py"))
    fig = figures.build_figure("temperature", result)
    try:
        renderer = fig.canvas.get_renderer()
        for ax in fig.axes:
            bars = [a.get_window_extent(renderer) for a in ax.artists
                    if a.get_gid() == "scale-bar"]
            marks = [t.get_window_extent(renderer) for t in ax.texts
                     if t.get_gid() == "profile-distance"]
            for bar in bars:
                assert not any(m.overlaps(bar) for m in marks)
        assert any(t.get_gid() == "profile-distance" for ax in fig.axes for t in ax.texts)
    finally:
        figures.plt.close(fig)


def test_the_coldest_points_label_stays_on_the_page(geometries):
    """The steel column's whole view is a narrow strip at the page's left
    edge, with the coldest point on its left side: no place for the θsi,min
    label fits inside it, and the one over the least solid lay past the
    page's left edge ("θsi," cut off). The label now stays on the page and
    off the close view beside it."""
    result = run(load(geometries / "steel_beam.py"))
    fig = figures.build_figure("temperature", result)
    try:
        renderer = fig.canvas.get_renderer()
        page = fig.bbox
        for ax in fig.axes:
            for text in ax.texts:
                if text.get_gid() != "theta-si-min-label":
                    continue
                box = text.get_window_extent(renderer)
                assert page.x0 <= box.x0 and box.x1 <= page.x1, (box, page)
                assert page.y0 <= box.y0 and box.y1 <= page.y1, (box, page)
                for other in fig.axes:
                    if other is not ax:
                        assert not box.overlaps(other.get_window_extent()), text.get_text()
    finally:
        figures.plt.close(fig)
