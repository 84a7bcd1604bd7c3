"""Figures carry what a reviewer looks for; files are written whole and repeatably.

References: luminance from sRGB by the ITU-R BT.709 weights (0.2126, 0.7152,
0.0722) for the greyscale check; the criterion line at θe + fRsi (θi − θe)
from the definition fRsi = (θsi − θe)/(θi − θe) (ISO 10211 / ISO 13788).
"""

import numpy as np
import pytest
from PIL import Image

from bridgecalc.outputs import figures
from bridgecalc.outputs.figures import files, raster
from bridgecalc.api import load, run


def _luminance(rgb):
    rgb = np.asarray(rgb)[..., :3]
    return rgb @ np.array([0.2126, 0.7152, 0.0722])


def _texts(fig):
    from matplotlib.text import Text
    return [a.get_text() for a in fig.findobj(Text)]


def _by_gid(fig, gid):
    return [a for a in fig.findobj() if a.get_gid() == gid]


def test_colour_maps_stay_ordered_in_grey():
    import matplotlib
    for name in (figures.TEMPERATURE_CMAP, figures.HEAT_FLUX_CMAP):
        lum = _luminance(matplotlib.colormaps[name](np.linspace(0, 1, 64)))
        assert np.all(np.diff(lum) > 0), name


def test_material_map_legend_names_every_material_with_lambda(demo):
    fig = figures.materials_figure(demo)
    try:
        legend = _by_gid(fig, "legend")[0]
        labels = [t.get_text() for t in legend.get_texts()]
        for name, material in demo.model.materials.items():
            assert any(name in lab and f"λ = {material.conductivity:g}" in lab for lab in labels)
        assert _by_gid(fig, "scale-bar")
    finally:
        figures.plt.close(fig)
    # lighter fill for lower λ, so the map reads in grey
    colours = figures.material_colours(demo.model)
    order = sorted(colours, key=lambda n: demo.model.materials[n].conductivity)
    lum = [_luminance(colours[n]["fill"]) for n in order]
    assert all(a >= b for a, b in zip(lum, lum[1:]))


def test_temperature_figure_marks_the_minimum_and_has_a_colour_bar(demo):
    fig = figures.temperature_figure(demo, isotherm_step=2.5)
    try:
        marker = _by_gid(fig, "theta-si-min-marker")[0]
        x, y = marker.get_xdata()[0], marker.get_ydata()[0]
        assert (x, y) == pytest.approx(demo.surface_temperature_case.theta_si_min_at)
        bar_axes = _by_gid(fig, "colour-bar")
        assert bar_axes
        lo, hi = sorted(bar_axes[0].get_ylim())
        assert lo <= 0.0 and hi >= 20.0        # θe and θi of the demo
        assert any("every 2.5 K" in t for t in _texts(fig))
        assert any(f"{demo.theta_si_min:.2f}" in t for t in _texts(fig))
        ax = fig.axes[0]
        assert ax.get_aspect() == 1.0
        assert ax.get_xlabel() == "x [mm]"
    finally:
        figures.plt.close(fig)


def test_heat_flux_figure_is_log_scaled_and_arrows_point_outwards(demo):
    import matplotlib.colors as mcolors
    fig = figures.heat_flux_figure(demo)
    try:
        fill = _by_gid(fig, "heat-flux-fill")[0]
        assert isinstance(fill.norm, mcolors.LogNorm)
        arrows = _by_gid(fig, "flow-arrows")[0]
        xy = arrows.get_offsets()
        u = arrows.U
        wall = (xy[:, 1] > 1300) | (xy[:, 1] < -1000)       # far from the slab
        assert wall.sum() > 5
        assert np.all(u[wall] > 0)       # heat flows from inside (x < 0) to outside (+x)
    finally:
        figures.plt.close(fig)


def test_surface_temperature_figure_draws_the_users_criterion(demo):
    fig = figures.surface_temperature_figure(demo, f_rsi_min=0.75)
    try:
        line = _by_gid(fig, "f-rsi-criterion")[0]
        assert line.get_ydata()[0] == pytest.approx(0.0 + 0.75 * 20.0)
        assert _by_gid(fig, "theta-si-min-marker")
    finally:
        figures.plt.close(fig)
    fig = figures.surface_temperature_figure(demo, f_rsi_min=None)
    try:
        assert not _by_gid(fig, "f-rsi-criterion")
    finally:
        figures.plt.close(fig)


def test_mesh_figure_shows_each_boundary_condition_and_surface(demo):
    fig = figures.mesh_figure(demo)
    try:
        labels = [t.get_text() for t in _by_gid(fig, "legend")[0].get_texts()]
        assert any("interior" in t for t in labels)
        assert any("exterior" in t for t in labels)
        assert any("adiabatic" in t for t in labels)
        for j in range(len(demo.model.surfaces)):
            assert _by_gid(fig, f"surface-label-S{j + 1}")
    finally:
        figures.plt.close(fig)


def test_files_are_at_png_dpi_non_blank_and_repeatable(demo, tmp_path):
    fig = figures.build_figure("surface_temperature", demo, f_rsi_min=0.7)
    try:
        first = figures.save(fig, tmp_path / "a", figures.FORMATS)
        second = figures.save(fig, tmp_path / "b", figures.FORMATS)
    finally:
        figures.plt.close(fig)
    assert [p.suffix for p in first] == [".png", ".svg", ".pdf"]
    for p, q in zip(first, second):
        assert p.read_bytes() == q.read_bytes(), p.name
    with Image.open(first[0]) as im:
        assert im.info["dpi"][0] == pytest.approx(figures.PNG_DPI, abs=0.5)
        pixels = np.asarray(im.convert("RGB"), dtype=float)
    assert pixels.std() > 10
    assert len(np.unique(pixels.reshape(-1, 3)[::50], axis=0)) > 20
    svg = first[1].read_text(encoding="utf-8")
    assert "θsi,min" in svg and "fRsi = 0.7" in svg
    assert first[2].read_bytes().startswith(b"%PDF")


def _png_chunks(data: bytes):
    """(type, payload) of each chunk, checking the signature and every CRC
    (PNG specification, ISO/IEC 15948: 5.2 signature, 5.3 chunk layout, CRC-32
    over type and data; zlib.crc32 is the same CRC)."""
    import struct
    import zlib
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    chunks, at = [], 8
    while at < len(data):
        length, kind = struct.unpack(">I4s", data[at:at + 8])
        payload = data[at + 8:at + 8 + length]
        (crc,) = struct.unpack(">I", data[at + 8 + length:at + 12 + length])
        assert crc == zlib.crc32(kind + payload) & 0xFFFFFFFF, kind
        chunks.append((kind.decode("ascii"), payload))
        at += 12 + length
    return chunks


def _png_pixels(chunks, rows, columns, channels):
    """The image data unfiltered as the PNG specification defines it (ISO/IEC
    15948, 9.2: filter types None, Sub, Up, Average, Paeth), independent of
    Pillow; 8-bit samples, no interlacing."""
    import zlib
    raw = zlib.decompress(b"".join(p for kind, p in chunks if kind == "IDAT"))
    stride = columns * channels
    rows_in = np.frombuffer(raw, dtype=np.uint8).reshape(rows, stride + 1).astype(int)
    out = np.zeros((rows, stride), dtype=int)
    previous = np.zeros(stride, dtype=int)
    for r in range(rows):
        kind, line = rows_in[r, 0], rows_in[r, 1:]
        current = np.zeros(stride, dtype=int)
        for i in range(stride):
            a = current[i - channels] if i >= channels else 0
            b = previous[i]
            c = previous[i - channels] if i >= channels else 0
            if kind == 0:
                predictor = 0
            elif kind == 1:
                predictor = a
            elif kind == 2:
                predictor = b
            elif kind == 3:
                predictor = (a + b) // 2
            else:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                predictor = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
            current[i] = (line[i] + predictor) % 256
        out[r], previous = current, current
    return out.reshape(rows, columns, channels).astype(np.uint8)


@pytest.mark.parametrize("channels", [3, 4])
def test_png_writer_round_trips_through_an_independent_decoder(tmp_path, channels):
    # reference: Pillow's own PNG decoder reads back every pixel and the pHYs density
    rng = np.random.default_rng(7)
    pixels = rng.integers(0, 256, size=(37, 53, channels), dtype=np.uint8)
    pixels[10:20, 5:40] = 200                       # a flat patch, as figures have
    path = tmp_path / "x.png"
    path.write_bytes(files.png_bytes(pixels, 300))
    with Image.open(path) as im:
        assert im.mode == ("RGB" if channels == 3 else "RGBA")
        assert im.info["dpi"][0] == pytest.approx(300, abs=0.5)
        assert np.array_equal(np.asarray(im), pixels)
    # Pillow writes the file, so it is read back a second time by the PNG
    # specification itself (ISO/IEC 15948): chunk order and CRCs, IHDR (11.2.2:
    # 8-bit, colour type 2 for RGB, 6 for RGBA), pHYs (11.3.5.3: pixels per
    # metre, unit 1 = metre; 300 / 0.0254 = 11811), no text or time chunks
    # (11.3.4, 11.3.6.1) so that the same pixels give the same bytes, and the
    # pixels unfiltered from the zlib stream (section numbers from memory)
    import struct
    chunks = _png_chunks(path.read_bytes())
    kinds = [kind for kind, _ in chunks]
    assert kinds[0] == "IHDR" and kinds[-1] == "IEND" and "IDAT" in kinds
    assert not {"tEXt", "zTXt", "iTXt", "tIME"} & set(kinds)
    width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", chunks[0][1])
    assert (width, height, depth, interlace) == (53, 37, 8, 0)
    assert colour == (2 if channels == 3 else 6)
    assert struct.unpack(">IIB", dict(chunks)["pHYs"]) == (11811, 11811, 1)
    assert np.array_equal(_png_pixels(chunks, 37, 53, channels), pixels)
    assert files.png_bytes(pixels, 300) == path.read_bytes()


def test_field_sampling_reproduces_a_linear_field_exactly(demo):
    # reference: P1 interpolation is exact for a field linear in x and y
    xy = demo.mesh.nodes / demo.model.metres_per_unit
    nodal = 0.03 * xy[:, 0] - 0.02 * xy[:, 1] + 5.0
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    gx = np.linspace(lo[0] - 50, hi[0] + 50, 97)
    gy = np.linspace(lo[1] - 50, hi[1] + 50, 131)
    cells = raster.cells_on_grid(xy, demo.mesh.triangles, gx, gy)
    px, py = np.meshgrid(gx, gy)
    inside = cells >= 0
    assert 0.1 < inside.mean() < 0.9
    # points beyond the bounding box of the section lie in no triangle
    outside_box = (px < lo[0]) | (px > hi[0]) | (py < lo[1]) | (py > hi[1])
    assert not inside[outside_box].any()
    values = raster.linear_in_cells(xy, demo.mesh.triangles, nodal, cells[inside],
                                    px[inside], py[inside])
    exact = 0.03 * px[inside] - 0.02 * py[inside] + 5.0
    assert np.max(np.abs(values - exact)) < 1e-9
    # each found triangle really contains its point (barycentric coordinates in [0, 1])
    maps = raster.barycentric_maps(xy, demo.mesh.triangles)[cells[inside]]
    lam1 = maps[:, 0, 0] * px[inside] + maps[:, 0, 1] * py[inside] + maps[:, 0, 2]
    lam2 = maps[:, 1, 0] * px[inside] + maps[:, 1, 1] * py[inside] + maps[:, 1, 2]
    assert lam1.min() > -1e-8 and lam2.min() > -1e-8 and (lam1 + lam2).max() < 1 + 1e-8


def test_figure_size_is_known_before_drawing(demo):
    for name in figures.FIGURES:
        fig = figures.build_figure(name, demo, f_rsi_min=0.75)
        try:
            assert tuple(fig.get_size_inches()) == pytest.approx(figures.figure_size(name, demo))
        finally:
            figures.plt.close(fig)


def test_isotherm_labels_sit_on_their_own_isotherm_and_apart(demo):
    """Each label's value is the computed temperature where it stands, and no two
    labels or a label and the plot's edge overlap once drawn.

    Reference: the surface-temperature case's own field, interpolated at the
    label's place (``TemperatureField.at``), independent of the contouring.
    """
    fig = figures.temperature_figure(demo)
    try:
        ax = fig.axes[0]
        contours = [c for c in ax.collections if hasattr(c, "labelTexts")][0]
        labels = contours.labelTexts
        step = figures.default_isotherm_step(demo.model)
        assert len(labels) >= 7            # the demo's insulation crowds 8 isotherms
        places = np.array([t.get_position() for t in labels]) * demo.model.metres_per_unit
        at = demo.surface_temperature_case.field.at(places)
        values = np.array([float(t.get_text()) for t in labels])
        assert np.all(np.abs(at - values) < 0.05 * step)
        assert len(set(values)) == len(values)          # one label per isotherm
        renderer = fig.canvas.get_renderer()
        fig.draw(renderer)
        boxes = [t.get_window_extent(renderer) for t in labels]
        plot = ax.get_window_extent(renderer)
        for k, a in enumerate(boxes):
            assert plot.x0 <= a.x0 and a.x1 <= plot.x1 and plot.y0 <= a.y0 and a.y1 <= plot.y1
            for b in boxes[k + 1:]:
                assert not a.overlaps(b), (a, b)
    finally:
        figures.plt.close(fig)


def test_the_temperature_figure_coarsens_a_step_finer_than_its_line_limit():
    levels, step = figures.isotherm_levels(0.0, 3e28, 2.0)     # a 1e30 W/m³ heat source
    assert step == pytest.approx(2e26) and len(levels) <= figures.MAX_ISOTHERMS
    levels, step = figures.isotherm_levels(0.3, 19.6, 2.0)
    assert step == 2.0 and list(levels) == pytest.approx([2, 4, 6, 8, 10, 12, 14, 16, 18])


def test_long_titles_are_fitted_to_the_figure(demo):
    """A title longer than the page is set smaller, then shortened, never cut off."""
    import dataclasses
    long_name = "Balcony slab of the north-east stair core, with thermal break, " * 3
    result = dataclasses.replace(demo, model=dataclasses.replace(demo.model, name=long_name))
    fig = figures.materials_figure(result)
    try:
        fig.savefig(__import__("io").BytesIO(), format="raw", dpi=figures.PNG_DPI)
        renderer = fig.canvas.get_renderer()
        width = fig.bbox.width
        titles = [t for t in fig.texts if t.get_text().startswith("Balcony slab")]
        assert titles and titles[0].get_text().endswith("…")
        for t in fig.texts:
            box = t.get_window_extent(renderer)
            assert box.x0 >= 0 and box.x1 <= width, t.get_text()
    finally:
        figures.plt.close(fig)


def test_theta_si_min_label_stays_off_the_colour_bar(geometries):
    """In the window jamb's narrow plot the θsi,min label still finds room: inside
    the figure and clear of the colour bar."""
    result = run(load(geometries / "window_jamb.py"))
    fig = figures.temperature_figure(result)
    try:
        renderer = fig.canvas.get_renderer()
        fig.draw(renderer)
        label = _by_gid(fig, "theta-si-min-label")[0]
        box = label.get_bbox_patch().get_window_extent(renderer)
        bar = _by_gid(fig, "colour-bar")[0].get_window_extent(renderer)
        assert not box.overlaps(bar)
        assert box.x0 >= 0 and box.x1 <= fig.bbox.width
        assert box.y0 >= 0 and box.y1 <= fig.bbox.height
    finally:
        figures.plt.close(fig)


def test_a_large_ground_block_gets_a_detail_view(geometries):
    """ISO 10211's ground block around a ground-floor edge is metres wide (20 m
    outside and below for an unknown building width, from memory); the junction
    then gets a close view (a compact section gets none:
    test_figure_readability.py)."""
    result = run(load(geometries / "ground_floor.py"))
    window = figures.detail_window(result)
    assert window is not None
    (x0, y0), (x1, y1) = window
    # every region corner within 1 m of the wall's inner face at ground level is in it
    # (floor build-up, slab edge, wall base, perimeter insulation, foundation head)
    corners = np.concatenate([np.asarray(r.vertices) for r in result.model.regions])
    near = corners[np.hypot(corners[:, 0], corners[:, 1]) < 1000]
    assert len(near) >= 10
    assert np.all((near[:, 0] >= x0) & (near[:, 0] <= x1)
                  & (near[:, 1] >= y0) & (near[:, 1] <= y1))
    tx, ty = result.surface_temperature_case.theta_si_min_at
    assert x0 <= tx <= x1 and y0 <= ty <= y1
    for name in ("materials", "temperature"):
        # the close view beside the whole, in the figure the report shows
        fig = figures.build_figure(name, result)
        try:
            close = [a for a in fig.axes if a.get_gid() == "close-view"]
            assert len(close) == 1
            assert close[0].get_xlim() == pytest.approx((x0, x1))
            assert close[0].get_ylim() == pytest.approx((y0, y1))
            assert tuple(fig.get_size_inches()) == pytest.approx(figures.figure_size(name, result))
        finally:
            figures.plt.close(fig)
    for name in figures.DETAIL_FIGURES:
        fig = figures.build_figure(name, result)
        try:
            ax = fig.axes[0]
            assert ax.get_xlim() == pytest.approx((x0, x1))
            assert ax.get_ylim() == pytest.approx((y0, y1))
            assert tuple(fig.get_size_inches()) == pytest.approx(figures.figure_size(name, result))
        finally:
            figures.plt.close(fig)
    overview = figures.temperature_figure(result)
    try:
        assert _by_gid(overview, "detail-window")
    finally:
        figures.plt.close(overview)


def test_user_text_with_dollar_signs_is_drawn_as_written(tmp_path):
    """Names are the user's: "$\\x$" must not go to matplotlib's mathtext parser,
    which raises on an unknown symbol. The model is the CLI tests' plate."""
    from test_cli import GOOD
    model_file = tmp_path / "dollar.toml"
    model_file.write_text(
        GOOD.replace('name = "Plate"', "name = 'Wall $\\frac{ $ test'")
            .replace("[materials.concrete]", '[materials."conc$\\\\x$rete"]')
            .replace('material = "concrete"', 'material = "conc$\\\\x$rete"'),
        encoding="utf-8")
    result = run(load(model_file), refinement=None)
    for name in figures.FIGURES:
        fig = figures.build_figure(name, result)
        try:
            figures.save(fig, tmp_path / name, ("png",))
            texts = _texts(fig)
            assert "Wall $\\frac{ $ test" in texts
            if name == "materials":
                assert any(t.startswith("conc$\\x$rete") for t in texts)
        finally:
            figures.plt.close(fig)


def test_log_colour_bar_labels_are_plain_numbers(geometries):
    """The timber stud's flux spans about one decade, so matplotlib labels minor
    ticks too; every label must read as a number, not a mathtext power."""
    result = run(load(geometries / "timber_stud.py"), refinement=None)
    fig = figures.heat_flux_figure(result)
    try:
        fig.canvas.draw()
        bar = _by_gid(fig, "colour-bar")[0]
        labels = [t.get_text() for t in bar.yaxis.get_ticklabels(which="both")
                  + bar.xaxis.get_ticklabels(which="both") if t.get_text()]
        assert len(labels) >= 3
        for text in labels:
            float(text)                     # raises on "$\\mathdefault{6\\times10^{0}}$"
    finally:
        figures.plt.close(fig)
