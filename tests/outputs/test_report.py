"""report.html and report.pdf: content, rendering, and writing whole or not at all.

Renders with headless Chromium (Debian package chromium) and pdftoppm /
pdftotext (Debian package poppler-utils); those tests skip when the tools are
absent (.ci/run installs them). Criteria quoted in the report are common
practice (fRsi 0.75 UK dwellings, 0.70 Germany; no single source).
"""

import dataclasses
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from bridgecalc import outputs
from bridgecalc.validation import stamp as stamps
from bridgecalc.outputs import report
from bridgecalc.api import load, run

from hand_stamp import HAND_STAMP

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
PDFTOPPM = shutil.which("pdftoppm")
PDFTOTEXT = shutil.which("pdftotext")

@pytest.fixture(scope="module")
def written(demo, tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "demo"
    outputs.write_outputs(demo, out, f_rsi_min=0.75, dimension_system="external",
                          stamp=HAND_STAMP)
    return out


def _text(content):
    parts = []
    for b in content.blocks:
        if isinstance(b, report.blocks.Table):
            parts += b.header + [c for row in b.rows for c in row] + [b.caption]
        elif isinstance(b, report.blocks.KeyFigures):
            parts += [" ".join(item) for item in b.items]
        elif hasattr(b, "text"):
            parts.append(b.text)
        elif isinstance(b, report.blocks.Figure):
            parts.append(b.caption)
    return "\n".join(parts)


def test_a_ground_floor_report_carries_the_detail_views(geometries, tmp_path):
    """The ground block makes the junction small; its close views are drawn
    beside the whole views, in the same figures (as PNG, and with
    vector_figures as SVG and PDF too), and the captions say so."""
    result = run(load(geometries / "ground_floor.py"), refinement=None)
    out = outputs.write_outputs(result, tmp_path / "gf", stamp=False, workers=1,
                                vector_figures=True)
    for name in ("materials", "temperature"):
        for ext in ("png", "svg", "pdf"):
            assert (out / f"{name}.{ext}").stat().st_size > 0
        # the close view is a second plot in the figure: its own axis labels
        assert (out / f"{name}.svg").read_text(encoding="utf-8").count('id="close-view"') == 1
    assert not list(out.glob("*_detail.*"))
    page = (out / "report.html").read_text(encoding="utf-8")
    assert page.count("data:image/png;base64,") == 5
    assert page.count("close view of the junction") >= 4


def test_html_is_self_contained_and_carries_the_inputs_and_results(demo, written):
    page = (written / "report.html").read_text(encoding="utf-8")
    assert not re.search(r"""(src|href)=["'](?!data:|#)""", page)
    assert "http://" not in page and "https://" not in page
    assert page.count("data:image/png;base64,") == 5          # close views beside the whole
    for name, material in demo.model.materials.items():
        assert name in page and material.source in page
    assert "0.13" in page and "0.25" in page and "0.04" in page     # both resistances
    flank = demo.heat_flow_case.flanking[0]
    assert f"{flank.u_value:.4f}" in page and f"{flank.length:g}" in page
    assert "as stated by the model: external dimensions" in page
    assert f"{demo.coupling_coefficient:.4f}" in page
    assert f"{demo.psi:.4f}".replace("-", "−") in page
    assert f"{demo.theta_si_min:.2f}" in page and f"{demo.f_rsi:.3f}" in page
    assert "PASS against the criterion given for this run" in page
    assert "58 compared quantities passed, 0 failed" in page and "2024-01-02T03:04:05Z" in page
    assert "do not replace, the judgement of a qualified practitioner" in page
    if "convergence" in demo.to_dict():
        assert "Mesh refinement study." in page
        assert ("mesh criterion of ISO 10211 is met" in page) or ("did not converge" in page)
    else:
        assert "No mesh refinement study was run" in page


def test_verdicts_and_common_practice_wording(demo):
    failing = _text(report.content.report_content(demo, {}, f_rsi_min=0.99, stamp=HAND_STAMP))
    assert "FAIL against the criterion" in failing and "risk of mould growth" in failing
    none = _text(report.content.report_content(demo, {}, f_rsi_min=None, stamp=None))
    assert "Common practice, no single source" in none
    assert "0.75" in none and "0.70 in Germany" in none
    assert "were not run for this report" in none


def test_a_minimum_at_a_cut_off_plane_is_pointed_out(demo, geometries):
    """The slab edge's coldest interior point is where the wall meets its lower
    cut-off plane (the slab warms the wall near the junction); the demo balcony's
    (no thermal break) is at the junction itself, a corner of the slab at the
    wall's interior face (y = 0 or 220 mm)."""
    slab_edge = run(load(geometries / "slab_edge.py"))
    at = slab_edge.surface_temperature_case.theta_si_min_at
    assert at[0] == pytest.approx(0.0) and at[1] == pytest.approx(-1200.0)
    assert report.content.minimum_at_cut_off(slab_edge)
    text = _text(report.content.report_content(slab_edge, {}, stamp=None))
    assert "the coldest interior point is on a flanking element" in text
    at = demo.surface_temperature_case.theta_si_min_at
    assert at[0] == pytest.approx(0.0) and min(abs(at[1]), abs(at[1] - 220.0)) < 1e-6
    assert not report.content.minimum_at_cut_off(demo)
    text = _text(report.content.report_content(demo, {}, stamp=None))
    assert "the coldest interior point is on a flanking element" not in text


def test_regions_are_listed_as_drawn(demo):
    """The demo balcony's three rectangles, in drawing order, with two corners
    each (the defaults of geometries/balcony.py: 240 mm masonry, 160 mm EPS, a
    220 mm slab from the room's cut-off plane 1000 mm inside to the balcony's
    end 1500 mm beyond the insulation; the wall's cut-off planes 1200 mm, three
    wall thicknesses, from the slab)."""
    table = report.content.regions_table(demo.model)
    assert [row[1] for row in table.rows] == [r.material for r in demo.model.regions]
    assert table.rows[0][2] == "rectangle (0, −1200) – (240, 1420)"
    assert table.rows[2][2] == "rectangle (−1000, 0) – (1900, 220)"
    many = report.content.regions_table(dataclasses.replace(demo.model, regions=[
        dataclasses.replace(demo.model.regions[0], shape="polygon",
                            vertices=tuple((float(k), float(k * k % 7)) for k in range(20)))]))  # squares mod 7: 0, 1, 2, 4
    assert many.rows[0][2] == "polygon of 20 corners within (0, 0) – (19, 4)"


def test_dimension_system_from_the_model_or_not_stated(demo):
    """The model's dimension_system (model format 1, addition F); never guessed
    from its name."""
    system, note = report.content.stated_dimension_system(demo.model)
    assert system == "external" and "its dimension_system" in note
    import dataclasses
    unstated = dataclasses.replace(demo.model, dimension_system=None)
    assert "external dimensions" in unstated.name
    system, note = report.content.stated_dimension_system(unstated)
    assert system is None and note.startswith("not stated")


def test_convergence_table_and_plain_words_when_not_converged(demo):
    data = demo.to_dict()
    levels = [{"nodes": 1000 * k, "triangles": 2000 * k, "heat_flow": 10.2 + 0.01 / k,
               "coupling_coefficient": 0.51, "psi": -0.0048, "theta_si_min": 19.04}
              for k in (1, 2, 4)]
    data["convergence"] = {"levels": levels, "psi_extrapolated": -0.0047,
                           "psi_error_estimate": 0.0002, "iso_doubling_change": 0.021,
                           "criterion_met": False}
    text = _text(report.content.report_content(demo, {}, results_dict=data))
    assert "did not converge" in text
    assert "2.1 %" in text
    table = [b for b in report.content.report_content(demo, {}, results_dict=data).blocks
             if isinstance(b, report.blocks.Table) and "level" in b.header][0]
    assert len(table.rows) == 3 and table.rows[2][1] == "4000"
    data["convergence"]["criterion_met"] = True
    data["convergence"]["iso_doubling_change"] = 0.004
    text = _text(report.content.report_content(demo, {}, results_dict=data))
    assert "did not converge" not in text and "criterion of ISO 10211 is met" in text


def _chromium_shot(html: Path, png: Path, profile: Path):
    subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                    "--no-first-run", "--disable-background-networking",
                    "--disable-component-update", "--disable-sync",
                    f"--user-data-dir={profile}", "--hide-scrollbars",
                    "--window-size=1000,7000", f"--screenshot={png}", html.as_uri()],
                   check=True, capture_output=True, timeout=120)
    with Image.open(png) as im:
        return np.asarray(im.convert("RGB"), dtype=float)


def _coloured(pixels):
    """Share of strongly coloured pixels (channel spread > 60)."""
    return float(((pixels.max(axis=2) - pixels.min(axis=2)) > 60).mean())


@pytest.mark.skipif(CHROMIUM is None, reason="chromium not installed (Debian package chromium)")
def test_html_renders_in_chromium_with_its_figures(written, tmp_path):
    shot = _chromium_shot(written / "report.html", tmp_path / "page.png", tmp_path / "p1")
    assert shot.std() > 20                        # not blank
    # the same page without its images: the figures are what colours the page
    page = (written / "report.html").read_text(encoding="utf-8")
    bare = tmp_path / "bare.html"
    bare.write_text(re.sub(r'<img [^>]*>', "", page), encoding="utf-8")
    plain = _chromium_shot(bare, tmp_path / "bare.png", tmp_path / "p2")
    assert _coloured(shot) > 0.01
    assert _coloured(shot) > 5 * _coloured(plain)


@pytest.mark.skipif(PDFTOPPM is None or PDFTOTEXT is None,
                    reason="pdftoppm/pdftotext not installed (Debian package poppler-utils)")
def test_pdf_pages_render_with_text_and_figures(demo, written, tmp_path):
    subprocess.run([PDFTOPPM, "-r", "40", "-png", str(written / "report.pdf"),
                    str(tmp_path / "page")], check=True, timeout=120)
    pages = sorted(tmp_path.glob("page-*.png"))
    assert len(pages) >= 4
    coloured = []
    for p in pages:
        with Image.open(p) as im:
            pixels = np.asarray(im.convert("RGB"), dtype=float)
        assert pixels.std() > 5, p.name
        coloured.append(_coloured(pixels))
    # materials, temperature and heat-flux figures colour their pages (the demo's
    # cross-shaped section leaves much of each figure background); text pages
    # stay near-grey (below 1 % coloured pixels)
    assert sum(c > 0.012 for c in coloured) >= 2
    assert sum(c < 0.01 for c in coloured) >= 2
    text = subprocess.run([PDFTOTEXT, str(written / "report.pdf"), "-"], check=True,
                          capture_output=True, text=True, timeout=60).stdout
    assert "Ψ" in text and "fRsi" in text and "PASS" in text
    for name in demo.model.materials:
        assert name in text
    assert "qualified practitioner" in text
    assert "58 compared quantities passed" in text
    # pdftotext separates pages by form feeds: no heading is left alone at the
    # foot of a page, away from the figure it introduces
    page_of = {}
    for k, page in enumerate(text.split("\f")):
        for line in page.splitlines():
            page_of.setdefault(line.strip(), k)
    assert page_of["Figures"] == min(k for line, k in page_of.items()
                                     if line.startswith("Figure 1."))


def test_pdf_and_html_are_repeatable(demo, written, tmp_path):
    figs = {n: written / f"{n}.png" for n in ("materials", "temperature")}
    texts, pdfs = [], []
    for k in range(2):
        content = report.content.report_content(demo, figs, 0.75, HAND_STAMP, "external")
        texts.append(report.html.render_html(content))
        path = tmp_path / f"r{k}.pdf"
        report.pdf.write_pdf(content, path)
        pdfs.append(path.read_bytes())
    assert texts[0] == texts[1]
    assert pdfs[0] == pdfs[1]


def test_very_long_names_still_give_a_pdf(geometries, tmp_path):
    """A 5000-character flanking name made a table row taller than a page
    (ReportLab's LayoutError); the PDF shortens such a cell, the HTML keeps it
    whole, with break opportunities (<wbr>) so it cannot widen the page."""
    model = load(geometries / "slab_edge.py")
    long_name = "external wall " + "w" * 5000
    model = dataclasses.replace(model, flanking=[dataclasses.replace(model.flanking[0],
                                                                      name=long_name)])
    result = run(model, refinement=None)
    out = outputs.write_outputs(result, tmp_path / "long", stamp=False, workers=1)
    assert (out / "report.pdf").stat().st_size > 0
    page = (out / "report.html").read_text(encoding="utf-8")
    assert long_name not in page and long_name in page.replace("<wbr>", "")
    assert "<wbr>" not in page.replace("w<wbr>w", "")       # only inside the long run


def test_stamp_is_cached_per_build(tmp_path, monkeypatch):
    monkeypatch.setenv("BRIDGECALC_CACHE_DIR", str(tmp_path))
    from bridgecalc.validation.cases import CheckRow
    calls = []

    def checks():
        calls.append(1)
        return [CheckRow("c", "a source", "x", 1.0, 1.0, 0.1),
                CheckRow("c", "a source", "y", 2.0, 1.0, 0.1)]
    first = stamps.current_stamp(checks)
    second = stamps.current_stamp(checks)
    assert len(calls) == 1
    assert (first.passed, first.failed) == (1, 1) and not first.all_passed
    assert second.from_cache and second.checked_at == first.checked_at
    assert (second.passed, second.failed) == (1, 1)
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", first.checked_at)
    assert os.listdir(tmp_path)


@pytest.mark.skipif(PDFTOTEXT is None, reason="pdftotext not installed (poppler-utils)")
def test_no_page_of_the_pdf_ends_with_a_lone_heading(written):
    """Every heading of the report is followed, on its own page, by what it heads."""
    headings = ["Result", "Inputs", "Results in detail", "Mesh refinement", "Figures",
                "Validation stamp", "Cautions", "Files of this run"]
    text = subprocess.run([PDFTOTEXT, "-layout", str(written / "report.pdf"), "-"], check=True,
                          capture_output=True, text=True, timeout=60).stdout
    for page in text.split("\f"):
        lines = [line.strip() for line in page.splitlines() if line.strip()]
        body = [line for line in lines if not line.startswith("page ")
                and "· bridgecalc" not in line]
        if body:
            assert body[-1] not in headings, body[-3:]


def test_pdf_figures_are_the_pngs_pixels_placed_in_their_room(demo, written):
    """report.pdf carries each figure's PNG pixels as they are (no resampling,
    no re-encoding), decoded here by pypdf, an independent reader of PDF's
    FlateDecode with PNG predictors (ISO 32000-1, 7.4.4.4); each image fills
    the width or the height of its room on the page, at the PNG's aspect."""
    from pypdf import PdfReader
    from bridgecalc.outputs import figures
    reader = PdfReader(written / "report.pdf")
    images = [image for page in reader.pages for image in page.images]
    names = list(figures.figure_names(demo))
    assert len(images) == len(names)
    for name, image in zip(names, images):
        with Image.open(written / f"{name}.png") as png:
            expected = np.asarray(png.convert("RGB"))
        assert np.array_equal(np.asarray(image.image.convert("RGB")), expected), name
    # the drawing of figure 1: the form on its page, the image scaled in it
    page = next(p for p in reader.pages if p.images)
    forms = page["/Resources"]["/XObject"]
    form = next(forms[k].get_object() for k in sorted(forms) if "BridgecalcFigure" in k)
    x0, y0, x1, y1 = [float(v) for v in form["/BBox"]]
    ops = form.get_data().decode("ascii").split()
    a, d = float(ops[1]), float(ops[4])
    with Image.open(written / f"{names[0]}.png") as png:
        width, height = png.size
    assert a / d == pytest.approx(width / height, rel=1e-4)        # the PNG's aspect
    assert a == pytest.approx(x1 - x0, abs=1e-3) or d == pytest.approx(y1 - y0, abs=1e-3)
    assert a <= x1 - x0 + 1e-3 and d <= y1 - y0 + 1e-3


def test_both_figure_paths_name_bridgecalc_as_the_pdfs_producer(demo, written, tmp_path):
    """PNG figures (ReportLab alone) and vector figures (stamped with pypdf)
    give report.pdf the same producer."""
    from pypdf import PdfReader
    out = outputs.write_outputs(demo, tmp_path / "vector", stamp=HAND_STAMP, workers=1,
                                vector_figures=True)
    for folder in (written, out):
        assert PdfReader(folder / "report.pdf").metadata["/Producer"].startswith("bridgecalc")
