"""One page made by three processes: its charts drawn in one, the page laid out in another with a
placeholder of each chart's size, the drawn charts put in place before the PDF is written.

Sources named beside each check:

* matplotlib's own SVG output (the drawn chart) is what an outline must
  match: its title and alternative text, and the root's ``width``,
  ``height`` and ``viewBox`` the PDF engine lays the picture out by;
* poppler-utils' ``pdftoppm`` rasterises the PDFs as a viewer would: a page
  whose charts were drawn in after the layout must give the same pixels as
  the page laid out with the drawn charts, and a tidied chart the same
  pixels as matplotlib's untidied one;
* the operating system's process ids (:func:`os.getpid`) tell which process
  made a piece of work.

Demo cases are invented data: they are inputs here, never check values.
"""

from __future__ import annotations

import base64
import html
import io
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from PIL import Image, ImageChops

import tea
from tea.outputs import chart_markup, charts, compare, pdf, pdf_page, report, svg_text, workers
from tea.outputs.page import page_chart_specs
from tea.outputs.whatmoves import SensitivityViews

from conftest import CASES_DIR

PDFTOPPM = shutil.which("pdftoppm")
BASE = CASES_DIR / "clay_corner_miscanthus.toml"


@pytest.fixture(scope="module")
def computed():
    case = tea.load_case(BASE)
    ledger = tea.build_ledger(case)
    return case, ledger, tea.summarise(case, ledger)


@pytest.fixture(scope="module")
def specs(computed):
    """One spec of every kind a page draws: the case page's three, its tornado chart, a comparison's panel."""
    case, ledger, results = computed
    made = {spec.kind: spec for spec in page_chart_specs(case, ledger, results, "case-0")}
    made["tornado"] = SensitivityViews(case, True, "case-0").below_spec()
    other = tea.load_case(CASES_DIR / "flood_meadow_willow.toml")
    other_ledger = tea.build_ledger(other)
    panels = compare._panels([case, other], [ledger, other_ledger], [results, tea.summarise(other, other_ledger)])
    made["compare_cumulative"] = charts.Spec("compare_cumulative", dict(panels=panels, name="compare-cash",
                                                                         width_in=7.2, height_in=1.65))
    assert sorted(made) == sorted(charts.DRAWN_BY_SPEC)
    return made


def _root(svg: str) -> dict[str, str]:
    tag = re.search(r"<svg\b[^>]*>", svg).group(0)
    return dict(re.findall(r'\s(width|height|viewBox)="([^"]*)"', tag))


@pytest.mark.parametrize("kind", charts.DRAWN_BY_SPEC)
def test_an_outline_has_the_drawn_charts_words_and_size(specs, kind):
    """The page is laid out with the outline: its name, title, alternative text and size must be the drawn
    chart's (matplotlib's SVG root), else the drawn chart would not sit in the room laid out for it."""
    spec = specs[kind]
    outline, drawn = spec.outline(), spec.draw()
    assert (outline.name, outline.title, outline.alt) == (drawn.name, drawn.title, drawn.alt)
    assert outline.svg == "" and outline.src == f"{chart_markup.LATER}:{drawn.name}"
    assert _root(outline.placeholder) == _root(drawn.svg)
    assert set(_root(drawn.svg)) == {"width", "height", "viewBox"}


def test_only_an_outline_has_a_placeholder(specs):
    with pytest.raises(ValueError, match="outline"):
        _ = specs["tornado"].draw().placeholder


def _pixels(pdf_path: Path, tmp_path: Path) -> bytes:
    stem = tmp_path / pdf_path.stem
    subprocess.run([PDFTOPPM, "-r", "72", "-png", "-singlefile", str(pdf_path), str(stem)], check=True)
    return Path(f"{stem}.png").read_bytes()


@pytest.mark.skipif(PDFTOPPM is None, reason="poppler-utils (pdftoppm) not installed")
def test_charts_drawn_in_after_the_layout_give_the_page_laid_out_with_them(computed, tmp_path):
    """pdftoppm (poppler) rasterises three PDFs of one page: laid out with placeholders and the drawn charts
    put in (:func:`tea.outputs.pdf.draw_in`), laid out with the drawn charts from the start, and laid out with
    placeholders only. The first two are the same picture; the third differs (the charts are really in)."""
    case, ledger, results = computed
    views = SensitivityViews(case, False, "case-0")
    chart_specs = page_chart_specs(case, ledger, results, "case-0")
    outlines = [spec.outline() for spec in chart_specs]
    drawn = {chart.name: chart.engine_svg for chart in charts.draw_all(chart_specs)}
    page = report.CasePage(case, ledger, results, "case-0", views, outlines)
    meta = report._meta([case], [results])
    html = report._summary_page(page, "A4", meta, page.start_density("A4"), True)
    placeholders = {chart.name: chart.placeholder for chart in outlines}

    images: dict = {}
    doc = pdf.layout(html, pdf_page.stylesheets(), images, placeholders.get)
    assert pdf.draw_in(images, drawn)
    pdf.write_pdf(doc, tmp_path / "drawn_in.pdf")
    pdf.write_pdf(pdf.layout(html, pdf_page.stylesheets(), {}, drawn.get), tmp_path / "laid_out_with.pdf")
    pdf.write_pdf(pdf.layout(html, pdf_page.stylesheets(), {}, placeholders.get), tmp_path / "empty.pdf")

    pictures = {p: _pixels(tmp_path / f"{p}.pdf", tmp_path) for p in ("drawn_in", "laid_out_with", "empty")}
    assert pictures["drawn_in"] == pictures["laid_out_with"]
    assert pictures["drawn_in"] != pictures["empty"]


def test_a_chart_the_layout_cannot_get_stops_it():
    """A page naming a chart that was not drawn is an error, never a page with a hole in it."""
    with pytest.raises(BaseException, match="not drawn"):  # the engine's fatal error is no Exception
        pdf.layout(f'<img src="{chart_markup.LATER}:case-0-cash">', (), {}, {}.get)


@pytest.mark.skipif(PDFTOPPM is None, reason="poppler-utils (pdftoppm) not installed")
def test_a_tidied_chart_is_the_same_picture(specs, tmp_path, monkeypatch):
    """The groups and rotations :func:`tidy` drops draw nothing: pdftoppm gives the same pixels at 150 dpi
    for matplotlib's SVG as written and as tidied."""
    tidied = specs["yield_by_age"].draw().svg
    monkeypatch.setattr(chart_markup, "tidy", lambda svg: svg)
    untidied = specs["yield_by_age"].draw().svg
    assert len(tidied) < 0.9 * len(untidied)
    for name, svg in (("tidied", tidied), ("untidied", untidied)):
        chart = charts.Chart(name="c", title="", svg=svg, alt="")
        pdf.write_pdf(pdf.layout(f'<img src="{chart.data_uri}">'), tmp_path / f"{name}.pdf")
    assert _pixels(tmp_path / "tidied.pdf", tmp_path) == _pixels(tmp_path / "untidied.pdf", tmp_path)


def test_charts_with_their_styles_as_attributes_give_the_same_pdf(computed, tmp_path, monkeypatch):
    """The PDF engine is handed each chart with its style declarations as presentation attributes
    (:func:`chart_markup.styles_as_attributes`), which it draws faster: the page's PDF is the same, byte for
    byte, as with matplotlib's markup as written (both laid out and written by the same engine, fonts and all;
    the marks joined as paths in neither, see the next test)."""
    case, ledger, results = computed
    monkeypatch.setattr(chart_markup, "marks_joined", lambda svg: svg)
    report.render_summary(case, ledger, results, tmp_path / "attributes.pdf", sensitivity=True)
    chart = page_chart_specs(case, ledger, results, "case-0")[0].draw()
    assert ' style="' in chart.svg and ' style="' not in chart_markup.for_engine(chart.svg)
    assert "<style" not in chart_markup.for_engine(chart.svg)
    monkeypatch.setattr(chart_markup, "for_engine", lambda svg: svg)
    report.render_summary(case, ledger, results, tmp_path / "styles.pdf", sensitivity=True)
    assert (tmp_path / "attributes.pdf").read_bytes() == (tmp_path / "styles.pdf").read_bytes()


@pytest.mark.skipif(PDFTOPPM is None, reason="poppler-utils (pdftoppm) not installed")
@pytest.mark.parametrize("kind", charts.DRAWN_BY_SPEC)
def test_a_chart_with_its_marks_joined_is_the_same_picture(specs, kind, tmp_path):
    """:func:`chart_markup.marks_joined` draws a chart's tick marks, gridlines and other marks as fewer
    paths: pdftoppm (poppler) gives the same pixels at 72, 150 and 300 dpi for every kind of chart as with
    matplotlib's marks as written, and the engine is given no mark placed by reference and fewer paths."""
    styled = chart_markup.styles_as_attributes(specs[kind].draw().svg)
    joined = chart_markup.marks_joined(styled)
    assert "<use" in styled and "<use" not in joined
    assert joined.count("<path") < styled.count("<path") + styled.count("<use")
    for name, svg in (("styled", styled), ("joined", joined)):
        uri = "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")
        pdf.write_pdf(pdf.layout(f'<img src="{uri}">'), tmp_path / f"{name}.pdf")
    for dpi in (72, 150, 300):
        pictures = []
        for name in ("styled", "joined"):
            stem = tmp_path / f"{name}-{dpi}"
            subprocess.run([PDFTOPPM, "-r", str(dpi), "-png", "-singlefile", str(tmp_path / f"{name}.pdf"),
                            str(stem)], check=True)
            pictures.append(Image.open(f"{stem}.png").convert("RGB"))
        assert ImageChops.difference(*pictures).getbbox() is None, f"{kind} differs at {dpi} dpi"


_SVG = '<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" viewBox="0 0 100 100">'


def _joined(body: str) -> str:
    return chart_markup.marks_joined(_SVG + body + "</svg>")


def test_marks_placed_by_reference_become_paths_where_they_are_put():
    """A ``<use>`` of a path moves the path by its x and y (SVG 1.1, sec. 5.6: x and y are a translation);
    the path's own attributes win over the use's, as inherited ones do; the definition no longer used goes."""
    out = _joined('<defs><path id="m" d="M 0 0 L 0 2.5" stroke="#444"/></defs>'
                  '<use xlink:href="#m" x="10" y="20" fill="#000" stroke="#999"/>')
    assert re.search(r'<path fill="#000" stroke="#444" d="M 10 20 L 10 22.5" ?/>', out), out
    assert "<use" not in out and 'id="m"' not in out and "<defs" not in out


def test_a_mark_with_a_transform_or_an_unknown_path_is_left_placed_by_reference():
    for use, d in (('<use xlink:href="#m" x="1" y="2" transform="rotate(5)"/>', "M 0 0 L 1 1"),
                   ('<use xlink:href="#m" x="1" y="2"/>', "m 0 0 l 1 1")):
        out = _joined(f'<defs><path id="m" d="{d}"/></defs>{use}')
        assert "<use" in out and 'id="m"' in out


def test_lines_alike_become_one_path_unless_something_drawn_between_comes_near():
    """Two lines with the same attributes join (the second moved back to the first's place in the order)
    only when everything drawn between them stays clear of the second; a text box larger than its letters."""
    line = '<path d="M {x} 0 L {x} 10" fill="none" stroke="#000" stroke-width="0.5"/>'
    far = '<text x="50" y="90" font-size="6px">far</text>'
    near = '<text x="18" y="8" font-size="6px">near</text>'  # 3 letters from x=18: reaches x=41.4 (box)
    assert _joined(line.format(x=10) + far + line.format(x=30)).count("<path") == 1
    assert _joined(line.format(x=10) + near + line.format(x=30)).count("<path") == 2
    rotated = '<text x="50" y="90" font-size="6px" transform="rotate(90)">far</text>'
    assert _joined(line.format(x=10) + rotated + line.format(x=30)).count("<path") == 2  # cannot be told


_LINE = '<path d="M {x} 0 L {x} 10" fill="none" stroke="{colour}" stroke-width="0.5"{more}/>'


def _line(x: float, colour: str = "#000", more: str = "") -> str:
    return _LINE.format(x=x, colour=colour, more=more)


@pytest.mark.parametrize("first, second", [
    (_line(10, more=' stroke-opacity="0.5"'), _line(30, more=' stroke-opacity="0.5"')),  # see-through
    (_line(10), _line(10.5)),  # within reach of the first's anti-aliasing
    (_line(10), _line(30, colour="#111")),  # another colour
    ('<path d="M 0 0 L 5 0 L 5 5 z" fill="#000"/>', '<path d="M 30 0 L 35 0 L 35 5 z" fill="#000"/>'),  # shapes
])
def test_marks_that_could_look_different_joined_stay_apart(first, second):
    """Pairs that would join but for what the comment beside each says: overlaps, anti-aliasing and a
    viewer's pixel alignment of a lone shape could show in the picture. The same line 20 pt apart joins."""
    assert _joined(first + second).count("<path") == 2
    assert _joined(_line(10) + _line(30)).count("<path") == 1


# ----------------------------------------------------------------------------- work handed over
def _conversation(start: int) -> tuple[int, list, int]:
    """Work that asks the process that handed it over, then takes what it is sent."""
    asked = workers.ask(start + 1)
    first, second = workers.received(), workers.received()
    return asked, [first, second], os.getpid()


def _twice(value: int) -> int:
    return 2 * value


def _conversation_then_end(here: int) -> tuple[int, list, int]:
    workers.ask(1)
    if os.getpid() != here:
        os._exit(9)  # stands in for a worker killed without an answer (out of memory)
    return _conversation(1)


def test_work_handed_over_asks_and_is_sent_more_in_a_worker(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    assert workers.stand_by("colorsys", role="page")
    later = workers.handed_over(_conversation, 20, role="page", answer=_twice)
    assert later.in_worker
    later.send("a")
    later.send(["b"])
    asked, sent, pid = later()
    assert (asked, sent) == (42, ["a", ["b"]]) and pid != os.getpid()  # os.getpid: made in the other process


def test_work_handed_over_with_no_worker_standing_by_is_made_here(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "1")
    assert not workers.stand_by("colorsys", role="page")
    later = workers.handed_over(_conversation, 20, role="page", answer=_twice)
    assert not later.in_worker
    later.send("a")
    later.send("b")
    assert later() == (42, ["a", "b"], os.getpid())


def test_work_whose_worker_dies_after_asking_is_made_here_with_all_it_was_sent(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    here = os.getpid()
    assert workers.stand_by("colorsys", role="page")
    later = workers.handed_over(_conversation_then_end, here, role="page", answer=_twice)
    later.send("a")
    later.send("b")
    assert later() == (4, ["a", "b"], here)


def test_received_and_ask_outside_work_handed_over_are_errors():
    with pytest.raises(RuntimeError, match="handed_over"):
        workers.received()
    with pytest.raises(RuntimeError, match="handed_over"):
        workers.ask(1)


def test_a_worker_per_role(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    try:
        assert workers.stand_by("colorsys", role="one")
        assert not workers.stand_by("colorsys", role="one")  # one stands by for the role already
        assert workers.stand_by("colorsys", role="two")
        one = workers.handed_over(_conversation, 0, role="one", answer=_twice)
        two = workers.handed_over(_conversation, 1, role="two", answer=_twice)
        for later, tag in ((one, "x"), (two, "y")):
            later.send(tag)
            later.send(tag)
        (a1, s1, p1), (a2, s2, p2) = one(), two()
        assert (a1, s1, a2, s2) == (2, ["x", "x"], 4, ["y", "y"]) and len({p1, p2, os.getpid()}) == 3
    finally:
        workers.stand_down()


def _words(pdf_path: Path) -> list[tuple[str, float, float, float, float]]:
    """The words of a PDF with their boxes [pt], as poppler's ``pdftotext -bbox`` reads them."""
    out = subprocess.run([shutil.which("pdftotext"), "-bbox", str(pdf_path), "-"], check=True,
                         capture_output=True, text=True).stdout
    return [(html.unescape(w), *map(float, box)) for *box, w in re.findall(
        r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)</word>', out)]


@pytest.mark.skipif(PDFTOPPM is None or shutil.which("pdftotext") is None, reason="poppler-utils not installed")
def test_chart_labels_drawn_a_line_at_a_time_read_as_the_engines_own(specs, tmp_path, monkeypatch):
    """Every kind of chart written to PDF twice, its labels drawn by the PDF engine letter by letter (its own
    way) and a line at a time (:mod:`tea.outputs.svg_text`): poppler's ``pdftotext -bbox`` reads the same
    words from both, on the same baselines (to 0.05 pt) and across to within 1.5 pt: a line laid out whole is
    kerned as the font says and letters laid out one by one are not, which makes the legends' longest labels
    (some 120 pt) about 1 pt narrower, as matplotlib measured them (it kerns too); ``pdftoppm`` gives
    pictures that differ in under 1 % of their pixels."""
    assert pdf._engine() and svg_text._installed  # the engine installed here is one it applies to
    for kind, spec in specs.items():
        chart = spec.draw()
        made = {}
        for way, line in (("letters", False), ("lines", True)):
            monkeypatch.setattr(svg_text, "LINE_AT_A_TIME", line)
            made[way] = tmp_path / f"{kind}-{way}.pdf"
            pdf.write_pdf(pdf.layout(f'<img src="{chart.data_uri}">'), made[way])
        assert made["lines"].stat().st_size < made["letters"].stat().st_size, kind  # one text object a label
        letters, lines = _words(made["letters"]), _words(made["lines"])
        assert [w[0] for w in letters] == [w[0] for w in lines] and len(letters) > 5, kind
        across = max(abs(a[i] - b[i]) for a, b in zip(letters, lines) for i in (1, 3))
        down = max(abs(a[i] - b[i]) for a, b in zip(letters, lines) for i in (2, 4))
        assert across < 1.5 and down < 0.05, (kind, across, down)
        pa, pb = (Image.open(io.BytesIO(_pixels(made[w], tmp_path))).convert("L") for w in ("letters", "lines"))
        differ = int((np.asarray(ImageChops.difference(pa, pb)) > 64).sum())
        assert differ < 0.01 * pa.size[0] * pa.size[1], (kind, differ)


@pytest.mark.parametrize("text", [
    '<text x="20,200" y="30">AB</text>',  # positions for each letter, split by a comma
    '<text x="20-5" y="30">AB</text>',  # and by a sign
    '<text x="20" y="30" letter-spacing="3">spaced</text>',
    '<text x="20" y="30">one <tspan font-weight="bold">two</tspan></text>',
    '<text x="20" y="30">Line one\u2028Line two</text>',  # a line separator: two lines
    '<text x="200" y="30" direction="rtl">\u05e9\u05dc\u05d5\u05dd abc</text>',
    '<text x="20" y="30">\u0633\u0644\u0627\u0645</text>',  # right-to-left letters without the attribute
])
def test_text_the_engine_sets_letter_by_letter_is_left_to_it(text, tmp_path, monkeypatch):
    """Text with per-letter placement, child runs, more than one line or right-to-left letters is drawn as
    the PDF engine draws it (the same PDF, byte for byte, with and without :mod:`tea.outputs.svg_text`)."""
    assert pdf._engine() and svg_text._installed
    svg = f'<svg xmlns="http://www.w3.org/2000/svg" width="300" height="60" font-family="DejaVu Sans">{text}</svg>'
    chart = charts.Chart(name="t", title="", svg=svg, alt="")
    made = []
    for line in (False, True):
        monkeypatch.setattr(svg_text, "LINE_AT_A_TIME", line)
        made.append(pdf.write_pdf(pdf.layout(f'<img src="{chart.data_uri}">')))
    assert made[0] == made[1]
    monkeypatch.setattr(svg_text, "LINE_AT_A_TIME", True)  # and one plain label is drawn as one line
    plain = charts.Chart(name="p", title="", svg=svg.replace(text, '<text x="20" y="30">AVAWAY plain</text>'), alt="")
    monkeypatch.setattr(svg_text, "LINE_AT_A_TIME", False)
    letters = pdf.write_pdf(pdf.layout(f'<img src="{plain.data_uri}">'))
    monkeypatch.setattr(svg_text, "LINE_AT_A_TIME", True)
    assert pdf.write_pdf(pdf.layout(f'<img src="{plain.data_uri}">')) != letters


# ----------------------------------------------------------------------------- compiled templates kept
def test_templates_compiled_in_one_run_are_taken_from_jinjas_cache_in_the_next(computed, tmp_path, monkeypatch):
    """jinja2's own bytecode cache keeps the compiled page templates between runs: a fresh environment (the
    next run) loads them from it instead of compiling, and the page is the same HTML either way."""
    import jinja2

    case, ledger, results = computed
    monkeypatch.setattr(jinja2.FileSystemBytecodeCache, "_get_default_cache_dir", lambda self: str(tmp_path))
    report._environment.cache_clear()
    first = report.summary_html(case, ledger, results)
    kept = sorted(tmp_path.glob("__jinja2_*.cache"))
    assert len(kept) >= 2  # the page's template and those it extends and includes
    report._environment.cache_clear()
    compiled, compile = [], jinja2.Environment.compile

    def counted(self, source, name=None, *args, **kwargs):
        compiled.append(name)
        return compile(self, source, name, *args, **kwargs)

    monkeypatch.setattr(jinja2.Environment, "compile", counted)
    assert report.summary_html(case, ledger, results) == first
    assert compiled == []  # nothing compiled: every template came from the cache
    for cached in kept:
        cached.unlink()
    report._environment.cache_clear()
    assert report.summary_html(case, ledger, results) == first
    assert "summary.html.j2" in compiled  # the check can fail: without the cache the template is compiled
    report._environment.cache_clear()


@pytest.mark.parametrize("trouble", ["unsafe folder", "cannot write"])
def test_a_template_cache_that_cannot_be_used_is_no_error(computed, tmp_path, monkeypatch, trouble):
    """jinja2 refuses a cache folder someone else could write to (RuntimeError); a full or read-only disk
    cannot store a compiled template (OSError). Either way the page is made, the same as with the cache."""
    import tempfile

    import jinja2

    case, ledger, results = computed
    report._environment.cache_clear()
    expected = report.summary_html(case, ledger, results)
    if trouble == "unsafe folder":
        def unsafe(self):
            raise RuntimeError("The cache directory is not safe")
        monkeypatch.setattr(jinja2.FileSystemBytecodeCache, "_get_default_cache_dir", unsafe)
    else:
        monkeypatch.setattr(jinja2.FileSystemBytecodeCache, "_get_default_cache_dir", lambda self: str(tmp_path))

        def full(*args, **kwargs):
            raise OSError(28, "No space left on device")
        monkeypatch.setattr(tempfile, "NamedTemporaryFile", full)
    report._environment.cache_clear()
    assert (report._environment().bytecode_cache is None) == (trouble == "unsafe folder")
    assert report.summary_html(case, ledger, results) == expected
    report._environment.cache_clear()
