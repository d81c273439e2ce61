"""The printed summary and the comparison report, checked with tools outside the project.

Sources named beside each check:

* poppler-utils (pdfinfo, pdftotext, pdffonts, pdftoppm) read the PDF the way
  any viewer would: page count, page size, text, embedded fonts, a raster of
  the first page;
* ISO 216 for the A4 sheet (210 mm x 297 mm) and ANSI/ASME Y14.1 for US Letter
  (8.5 in x 11 in); ISO 32000-1 sec. 8.3.2.3 for the PDF unit (1 pt = 1/72 in);
* lxml's XML parser for well-formedness (XML 1.0), and the WHATWG HTML
  standard for the rule that an element id is unique within a document;
* numpy-financial 1.0 for NPV and IRR of the ledger's net cash flows, the
  Fisher equation for the real rate, NIST Handbook 44 Appendix C for the acre
  (0.40468564224 ha);
* the engine's own figures, formatted by :mod:`tea.terminal` (the text the
  terminal prints), must appear unchanged on the page: the page only renders.

Demo cases are invented data: they are inputs here, never check values.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pytest
from lxml import etree

import tea
from tea.inputs import display
from tea.outputs import charts, report, terminal
from tea.core.errors import OutputError
from tea.core.texts import CAUTIONS

from conftest import CASES_DIR, DEMO_CASES, DEMO_IDS, run_cli, run_module, to_toml

POPPLER = all(shutil.which(t) for t in ("pdfinfo", "pdftotext", "pdffonts", "pdftoppm"))
pytestmark = pytest.mark.skipif(not POPPLER, reason="poppler-utils (pdfinfo, pdftotext, pdffonts, pdftoppm) "
                                "not installed")

MM_PER_IN = 25.4  # exact, by definition of the international inch
PT_PER_IN = 72.0  # ISO 32000-1 sec. 8.3.2.3: default user space unit 1/72 inch
A4_PT = (210 / MM_PER_IN * PT_PER_IN, 297 / MM_PER_IN * PT_PER_IN)  # ISO 216: 210 x 297 mm
LETTER_PT = (8.5 * PT_PER_IN, 11 * PT_PER_IN)  # ANSI/ASME Y14.1: 8.5 x 11 in
HA_PER_ACRE = 0.40468564224  # NIST Handbook 44 (2024), Appendix C

#: the figures shown on the grower's page as key figures (per ha / per acre)
KEY_FIGURES = ("npv", "npv_vs_current_use", "eav_vs_current_use", "irr", "payback_year", "peak_funding_need",
               "peak_funding_year", "breakeven_price", "breakeven_sold_t_dm_per_ha_per_year", "soc_gain_t_c",
               "ghg_net_t_co2e", "establishment_cost")
WHOLE_FIELD = ("npv", "npv_vs_current_use", "peak_funding_need", "soc_gain_t_c", "ghg_net_t_co2e")

XLINK = "{http://www.w3.org/1999/xlink}href"


# ----------------------------------------------------------------------------- helpers
def _run(*cmd: str) -> str:
    return subprocess.run(cmd, check=True, capture_output=True, text=True).stdout


def _pdfinfo(path: Path) -> dict[str, str]:
    out = {}
    for line in _run("pdfinfo", str(path)).splitlines():
        key, _, value = line.partition(":")
        out[key.strip()] = value.strip()
    return out


def _page_size_pt(info: dict[str, str]) -> tuple[float, float]:
    m = re.match(r"([\d.]+) x ([\d.]+) pts", info["Page size"])
    return float(m.group(1)), float(m.group(2))


def _text(path: Path, page: int | None = None) -> str:
    args = ["pdftotext", "-enc", "UTF-8"]
    if page is not None:
        args += ["-f", str(page), "-l", str(page)]
    return _run(*args, str(path), "-")


def _squash(text: str) -> str:
    """Text with all white space removed and the print minus sign read as a hyphen-minus.

    Line breaks fall wherever the layout puts them, so figures are compared
    without any white space; the page shows negatives with U+2212.
    """
    return re.sub(r"\s+", "", text.replace("\u2212", "-"))


def _load(path: Path):
    case = tea.load_case(path)
    frame = tea.build_ledger(case)
    return case, frame, tea.summarise(case, frame)


def _parse_html(path: Path) -> etree._Element:
    """Parse the HTML as XML (strict well-formedness), after its HTML5 DOCTYPE line."""
    raw = path.read_bytes()
    assert raw.startswith(b"<!DOCTYPE html>"), "expected an HTML5 document"
    parser = etree.XMLParser(resolve_entities=False, no_network=True, recover=False)
    return etree.fromstring(raw[len(b"<!DOCTYPE html>"):].lstrip(), parser)


def _local(tag) -> str:
    return etree.QName(tag).localname if isinstance(tag, str) else ""


def _svg_texts(root) -> list[str]:
    """The strings drawn as text in SVG charts (legends, axis labels, ticks)."""
    return ["".join(el.itertext()).strip() for el in root.iter() if _local(el.tag) == "text"]


# ----------------------------------------------------------------------------- fixtures
@pytest.fixture(scope="module")
def rendered(tmp_path_factory) -> dict[str, dict]:
    """Every demo case rendered once as PDF and HTML."""
    out = tmp_path_factory.mktemp("report")
    done = {}
    for path in DEMO_CASES:
        case, frame, res = _load(path)
        pdf, html = out / f"{path.stem}.pdf", out / f"{path.stem}.html"
        tea.render_summary(case, frame, res, pdf)
        report.render_summary(case, frame, res, html)
        done[path.stem] = {"case": case, "frame": frame, "res": res, "pdf": pdf, "html": html}
    return done


@pytest.fixture(scope="module")
def comparison(tmp_path_factory) -> dict:
    out = tmp_path_factory.mktemp("compare")
    loaded = [_load(p) for p in DEMO_CASES]
    cases, frames, results = (list(x) for x in zip(*loaded))
    pdf, html = out / "compare.pdf", out / "compare.html"
    report.render_comparison(cases, frames, results, pdf)
    report.render_comparison(cases, frames, results, html)
    return {"cases": cases, "frames": frames, "results": results, "pdf": pdf, "html": html}


@pytest.fixture(params=DEMO_IDS)
def demo(request, rendered) -> dict:
    return rendered[request.param]


# ----------------------------------------------------------------------------- the grower's page
def test_every_demo_case_is_one_page_of_its_paper_size(demo):
    info = _pdfinfo(demo["pdf"])  # poppler pdfinfo
    assert info["Pages"] == "1"
    want = LETTER_PT if demo["case"]["case.page_size"] == "Letter" else A4_PT
    got = _page_size_pt(info)
    assert got == pytest.approx(want, abs=0.01)  # pdfinfo prints 3 decimals


def test_us_customary_case_is_letter_per_acre_in_short_tons(rendered):
    d = rendered["sandy_slope_switchgrass"]
    assert _page_size_pt(_pdfinfo(d["pdf"])) == pytest.approx(LETTER_PT, abs=0.01)
    text = _squash(_text(d["pdf"]))
    assert "USD/acre" in text and "shortton" in text
    assert "EUR" not in text and "EUR/ha" not in text and "USD/ha" not in text


def test_page_size_flag_overrides_the_case(tmp_path):
    case, frame, res = _load(CASES_DIR / "clay_corner_miscanthus.toml")
    assert case["case.page_size"] == "A4"
    out = report.render_summary(case, frame, res, tmp_path / "letter.pdf", page_size="Letter")
    info = _pdfinfo(out)
    assert info["Pages"] == "1"
    assert _page_size_pt(info) == pytest.approx(LETTER_PT, abs=0.01)
    with pytest.raises(OutputError, match="A4 or Letter"):
        report.render_summary(case, frame, res, tmp_path / "x.pdf", page_size="A3")


def test_key_figures_on_the_page_are_the_engines_as_formatted(demo):
    """Every key figure, per area and for the whole field, as the terminal formats it."""
    case, res = demo["case"], demo["res"]
    text = _squash(_text(demo["pdf"]))
    html_text = _squash("".join(_parse_html(demo["html"]).itertext()))
    for name in KEY_FIGURES:
        if res[name] is None:
            continue
        want = _squash(terminal._fig(res, case, name))
        assert want in text, f"{name}: {want} not on the PDF page"
        assert want in html_text, f"{name}: {want} not in the HTML page"
    for name in WHOLE_FIELD:
        want = _squash(terminal._fig(res, case, name, whole=True))
        assert want in text, f"{name} (whole field): {want} not on the PDF page"
    assert _squash(terminal.decision_sentence(case, res)) in text
    for name, words in (("min_dscr", "lowest DSCR of the covenant test years "), ("llcr", "LLCR ")):  # the lender's two cover ratios
        if res[name] is not None:
            want = _squash(words + terminal._fig(res, case, name))
            assert want in text and want in html_text, f"{name}: {want} not on the page"
    if (res["carbon_credit_revenue"] or 0) > 0:
        assert _squash(terminal._fig(res, case, "carbon_credit_pv")) in text
    # the break-even yield in what is sold, then as the mature yield the case gives, each beside the case's own
    mature = display.convert(res["breakeven_mature_yield_t_dm_per_ha"], "t DM/ha/yr", case.unit_system)[0]
    given = display.convert(case["yield.mature_t_dm_per_ha"], "t DM/ha/yr", case.unit_system)[0]
    sold = display.convert(res["mean_sold_t_dm_per_year"], "t DM/ha/yr", case.unit_system)[0]
    factor = case["yield.site_factor"]
    hint = _squash(f"sold a year on average (case {sold:,.2f}); as mature yield"
                   + (f" before site factor {factor:g}" if factor != 1 else "") + f": {mature:,.2f} (case {given:,.2f})")
    assert hint in text and hint in html_text


def test_npv_irr_and_payback_on_the_page_match_numpy_financial(demo):
    """NPV and IRR of the ledger's net cash flow by numpy-financial, payback by a running sum."""
    case, frame, res = demo["case"], demo["frame"], demo["res"]
    net = frame["net_cash_flow"].to_numpy()
    rate = case["finance.discount_rate"]
    if case["finance.rate_basis"] == "nominal":  # Fisher equation: (1 + i) = (1 + r)(1 + pi)
        rate = (1 + rate) / (1 + case["finance.inflation"]) - 1
    per_area = HA_PER_ACRE if case.unit_system == "us_customary" else 1.0  # money/ha -> money/acre
    unit = f"{case.currency}/{'acre' if per_area != 1.0 else 'ha'}"
    text = _squash(_text(demo["pdf"]))
    npv = npf.npv(rate, net) * per_area  # numpy-financial: values[0] at t = 0, undiscounted
    assert _squash(display.money(npv, unit)) in text
    # IRR: only where the flows change sign once, so that the root is unique (Descartes' rule of signs)
    signs = np.sign(net[net != 0])
    if np.count_nonzero(np.diff(signs)) == 1:
        assert _squash(display.percent(npf.irr(net))) in text
    cumulative = np.cumsum(net)
    back = next(t for t in range(1, len(net)) if cumulative[t] >= 0 > cumulative[t - 1])
    assert f"paysbackinyear{back}." in text


def test_fonts_are_embedded(demo):
    lines = _run("pdffonts", str(demo["pdf"])).splitlines()[2:]  # poppler pdffonts: two header lines
    assert lines, "no fonts listed"
    for line in lines:
        # columns: name type encoding emb sub uni object ID; the type may hold spaces
        emb = line.split()[-5]
        assert emb == "yes", line


def test_demo_label_version_hash_and_cautions(demo):
    case, res = demo["case"], demo["res"]
    text = _text(demo["pdf"])
    assert case["case.demo"] is True
    assert "DEMO DATA" in text
    flat = _squash(text)
    assert _squash(f"tea {tea.__version__}") in flat
    assert res.case_hash in flat and res.case_hash == case.hash
    for caution in CAUTIONS:
        assert _squash(caution) in flat


def test_non_demo_case_has_no_demo_label(tmp_path, demo_mappings):
    data = demo_mappings["clay_corner_miscanthus"]
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in data.items()}
    data["case"]["demo"] = False
    data["case"]["notes"] = "Prepared for the farm's own planning."
    case = tea.load_text(to_toml(data), source="own.toml")
    frame = tea.build_ledger(case)
    out = report.render_summary(case, frame, tea.summarise(case, frame), tmp_path / "own.html")
    assert "DEMO DATA" not in "".join(_parse_html(out).itertext())


def test_first_page_as_png_is_not_blank(demo, tmp_path):
    import matplotlib.image as mpimg

    _run("pdftoppm", "-png", "-r", "40", "-f", "1", "-l", "1", "-singlefile", str(demo["pdf"]), str(tmp_path / "p"))
    img = mpimg.imread(tmp_path / "p.png")[..., :3]  # floats 0..1
    ink = img.min(axis=2) < 0.85
    share = ink.mean()
    assert 0.03 < share < 0.6, f"share of inked pixels {share:.3f}"
    coloured = (img.max(axis=2) - img.min(axis=2)) > 0.15  # the charts and the decision box are in colour
    assert coloured.mean() > 0.005
    rows = ink.mean(axis=1)
    h = len(rows)
    for quarter in range(3):  # the head, the key figures and charts, the tables: all inked
        assert rows[quarter * h // 4: (quarter + 1) * h // 4].mean() > 0.01, quarter


# ----------------------------------------------------------------------------- HTML
def test_html_is_well_formed_and_self_contained(demo):
    root = _parse_html(demo["html"])  # strict XML parse: raises on any well-formedness error
    tags = [_local(el.tag) for el in root.iter()]
    assert tags[0] == "html"
    for banned in ("script", "link", "iframe", "object", "embed", "img", "base", "frame"):
        assert banned not in tags, banned
    # the three charts, inline, and the tornado chart where the case has a [sensitivity] section
    assert tags.count("svg") == 3 + ("sensitivity" in demo["case"].values)
    assert "style" in tags  # the stylesheet, inline
    for el in root.iter():
        for attr, value in el.attrib.items():
            name = etree.QName(attr).localname
            if name in ("href", "src", "action", "data", "poster", "srcset") or attr == XLINK:
                assert value.startswith("#"), f"external reference {attr}={value}"
            assert not name.startswith("on"), f"event handler {attr}"
    css = "".join(el.text or "" for el in root.iter() if _local(el.tag) == "style")
    assert "@import" not in css
    assert all(u.startswith("#") for u in re.findall(r"url\(\s*['\"]?([^)'\"]*)", css))
    assert "@page" in css and "@media print" in css
    ids = [el.get("id") for el in root.iter() if el.get("id")]
    assert len(ids) == len(set(ids)), "duplicate element ids"  # WHATWG HTML: ids are unique


INJECTION = '<script>alert("x")</script><img src=x onerror="alert(1)"> & $\\frac{1}{2}$'


def _injected_case(demo_mappings, where: str = "field"):
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in demo_mappings["clay_corner_miscanthus"].items()}
    data["field"]["name"] = "Field " + INJECTION
    data["case"]["name"] = "Case " + INJECTION
    data["case"]["notes"] = "Notes " + INJECTION
    case = tea.load_text(to_toml(data), source="injected.toml")
    frame = tea.build_ledger(case)
    return case, frame, tea.summarise(case, frame)


def test_markup_in_a_case_is_shown_as_text(tmp_path, demo_mappings):
    case, frame, res = _injected_case(demo_mappings)
    html = report.render_summary(case, frame, res, tmp_path / "inj.html")
    raw = html.read_text(encoding="utf-8")
    assert "<script" not in raw and "<img" not in raw
    root = _parse_html(html)
    assert not [el for el in root.iter() if _local(el.tag) in ("script", "img")]
    assert not [a for el in root.iter() for a in el.attrib if etree.QName(a).localname.startswith("on")]
    text = "".join(root.itertext())
    assert "Field " + INJECTION in text  # shown literally, as the grower typed it
    assert "Case " + INJECTION in text and "Notes " + INJECTION in text
    pdf = report.render_summary(case, frame, res, tmp_path / "inj.pdf")
    assert _pdfinfo(pdf)["Pages"] == "1"
    assert _squash("Field " + INJECTION) in _squash(_text(pdf))


def test_markup_in_a_case_name_is_escaped_in_the_comparison_and_its_chart(tmp_path, demo_mappings):
    case, frame, res = _injected_case(demo_mappings)
    other = _load(CASES_DIR / "flood_meadow_willow.toml")
    out = report.render_comparison([case, other[0]], [frame, other[1]], [res, other[2]], tmp_path / "c.html")
    raw = out.read_text(encoding="utf-8")
    assert "<script" not in raw and "<img" not in raw
    root = _parse_html(out)
    # the legend of the comparison chart shows the name as text, its markup included (cut to the legend's length)
    shown = ("Case " + INJECTION)[:charts.LEGEND_CHARS - 4]
    assert any(shown in t for t in _svg_texts(root))


# ----------------------------------------------------------------------------- the comparison
def test_comparison_pdf_is_overview_then_one_page_per_case(comparison):
    info = _pdfinfo(comparison["pdf"])
    n = len(comparison["cases"])
    assert info["Pages"] == str(1 + n)
    pages = [_squash(_text(comparison["pdf"], page=k)) for k in range(1, n + 2)]
    overview = pages[0]
    # each footer says what its page is: the overview and what follows it, then each case's place among the cases
    assert _squash(f"overview of {n} cases; one page per case follows") in overview and "pageof" not in overview
    for k in range(1, n + 1):
        assert _squash(f"case {k} of {n}") in pages[k] and "pageof" not in pages[k]
    for case, res in zip(comparison["cases"], comparison["results"]):
        assert _squash(terminal.decision_sentence(case, res)) in overview
        for name in ("npv", "npv_vs_current_use", "eav_vs_current_use", "payback_year", "peak_funding_need"):
            assert _squash(terminal._fig(res, case, name)) in overview, name
        # the overview's table and the case's own page carry its hash; no other case page does
        assert res.case_hash in overview
        carrying = [k for k in range(1, n + 1) if res.case_hash in pages[k]]
        assert len(carrying) == 1
        page = pages[carrying[0]]
        assert _squash(case.name) in page
        assert _squash(terminal._fig(res, case, "npv")) in page
        # the tornado chart on the page of a case with a [sensitivity] section, and only there
        assert (_squash(TORNADO_TITLE) in page) == ("sensitivity" in case.values)


def test_comparison_html_is_well_formed_with_one_chart_for_all_cases(comparison):
    root = _parse_html(comparison["html"])
    n = len(comparison["cases"])
    svgs = [el for el in root.iter() if _local(el.tag) == "svg"]
    with_section = sum("sensitivity" in c.values for c in comparison["cases"])  # their pages show a tornado
    assert len(svgs) == 1 + 3 * n + with_section
    ids = [el.get("id") for el in root.iter() if el.get("id")]
    assert len(ids) == len(set(ids))
    texts = _svg_texts(svgs[0])
    for case in comparison["cases"]:
        assert any(case.name in t for t in texts), case.name
    # mixed currencies: EUR and USD cases on separate panels (two y-axis labels)
    assert "EUR per ha" in texts and "USD per acre" in texts


# ----------------------------------------------------------------------------- files
def test_existing_file_is_kept_without_force(tmp_path):
    case, frame, res = _load(CASES_DIR / "clay_corner_miscanthus.toml")
    for suffix in ("pdf", "html"):
        target = tmp_path / f"out.{suffix}"
        target.write_text("keep me")
        with pytest.raises(OutputError, match="exists"):
            report.render_summary(case, frame, res, target)
        assert target.read_text() == "keep me"
        report.render_summary(case, frame, res, target, force=True)
        assert target.read_bytes() != b"keep me"
    with pytest.raises(OutputError, match="exists"):
        report.render_comparison([case], [frame], [res], tmp_path / "out.pdf")
    assert not list(tmp_path.glob("*.part")) and not list(tmp_path.glob(".*"))


def test_a_render_failing_while_writing_leaves_no_file(tmp_path, monkeypatch):
    case, frame, res = _load(CASES_DIR / "clay_corner_miscanthus.toml")
    target = tmp_path / "out.pdf"
    target.write_bytes(b"the earlier summary")

    def broken(doc, path=None):
        Path(path).write_bytes(b"%PDF-1.7 half a file")
        raise RuntimeError("engine failed half way")

    monkeypatch.setattr(report.pdf, "write_pdf", broken)
    with pytest.raises(RuntimeError):
        report.render_summary(case, frame, res, target, force=True)
    assert target.read_bytes() == b"the earlier summary"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.pdf"]


def test_output_must_be_pdf_or_html(tmp_path):
    case, frame, res = _load(CASES_DIR / "clay_corner_miscanthus.toml")
    with pytest.raises(OutputError, match=r"\.pdf or \.html"):
        report.render_summary(case, frame, res, tmp_path / "out.docx")
    with pytest.raises(OutputError, match="does not exist"):
        report.render_summary(case, frame, res, tmp_path / "missing" / "out.pdf")


def test_same_case_same_bytes_and_no_dates(tmp_path, rendered):
    d = rendered["flood_meadow_willow"]
    again_pdf = report.render_summary(d["case"], d["frame"], d["res"], tmp_path / "again.pdf")
    again_html = report.render_summary(d["case"], d["frame"], d["res"], tmp_path / "again.html")
    assert again_pdf.read_bytes() == d["pdf"].read_bytes()
    assert again_html.read_bytes() == d["html"].read_bytes()
    info = _pdfinfo(d["pdf"])
    assert "CreationDate" not in info and "ModDate" not in info
    assert info["Title"] == d["case"].name
    assert d["res"].case_hash in info["Subject"]


def test_command_line_writes_both_formats_and_refuses_to_overwrite(tmp_path):
    path = CASES_DIR / "sandy_slope_switchgrass.toml"
    pdf, html = tmp_path / "s.pdf", tmp_path / "s.html"
    res = run_cli(["run", path, "--brief", "--pdf", pdf, "--html", html])
    assert res.code == 0, res.text
    assert _pdfinfo(pdf)["Pages"] == "1"
    _parse_html(html)
    assert _squash(TORNADO_TITLE) not in _squash(_text(pdf))  # no [sensitivity] section and no --sensitivity
    before = pdf.read_bytes()
    res = run_cli(["run", path, "--brief", "--pdf", pdf])
    assert res.code == 2 and "exists" in res.err and "Traceback" not in res.text
    assert pdf.read_bytes() == before


def test_command_line_in_a_new_process_gives_the_same_bytes(tmp_path, rendered):
    d = rendered["clay_corner_miscanthus"]
    out = tmp_path / "cli.pdf"
    res = run_module(["run", str(CASES_DIR / "clay_corner_miscanthus.toml"), "--brief", "--pdf", str(out)])
    assert res.code == 0, res.text
    assert out.read_bytes() == d["pdf"].read_bytes()


def test_command_line_comparison(tmp_path):
    out = tmp_path / "compare.pdf"
    two = DEMO_CASES[:2]
    res = run_cli(["run", *two, "--brief", "--pdf", out, "--page-size", "Letter"])
    assert res.code == 0, res.text
    info = _pdfinfo(out)
    assert info["Pages"] == str(1 + len(two))
    assert _page_size_pt(info) == pytest.approx(LETTER_PT, abs=0.01)


# ----------------------------------------------------------------------------- layout limits
def test_a_sixty_year_stand_still_fits_one_page(tmp_path, demo_mappings):
    """The longest stand life the schema allows (60 years) and long notes: still one sheet."""
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in demo_mappings["flood_meadow_willow"].items()}
    data["finance"]["stand_life_years"] = 60
    data["case"]["notes"] = "Prepared with the grower and the farm's advisor for the spring planning meeting. " * 4
    case = tea.load_text(to_toml(data), source="long.toml")
    frame = tea.build_ledger(case)
    assert len(frame) == 61
    out = report.render_summary(case, frame, tea.summarise(case, frame), tmp_path / "long.pdf")
    assert _pdfinfo(out)["Pages"] == "1"
    text = _squash(_text(out))
    assert "60" in text and _squash(display.money(float(frame["cumulative_cash_flow"].iloc[-1]), digits=0)) in text


@pytest.mark.parametrize("size", ["A4", "Letter"])
@pytest.mark.parametrize("tornado", [False, True], ids=["plain", "tornado"])
def test_each_demo_page_is_laid_out_once_at_the_least_dense_layout_that_fits(size, tornado, monkeypatch):
    """WeasyPrint's own layout is the judge: the density the fit returns gives one sheet and the next less
    dense one (laid out here) does not, and the expected start was right, so the fit laid the page out once."""
    from tea.outputs import pdf
    from tea.outputs.page import CHART_SCALE, TYPE_PT, CasePage
    from tea.outputs.whatmoves import SensitivityViews

    sheets = report._stylesheets()
    for path in DEMO_CASES:
        case, frame, res = _load(path)
        page = CasePage(case, frame, res, "case-0", SensitivityViews(case, tornado, "case-0"))
        meta = report._meta([case], [res])

        def html_at(d: int) -> str:
            return report._render("summary.html.j2", page_size=size, page=page.at(d), meta=meta, embed=True,
                                  page_label="", generator="test")

        made = []
        layout = pdf.layout
        monkeypatch.setattr(pdf, "layout", lambda *a, **k: made.append(1) or layout(*a, **k))
        density, doc = pdf.fit(html_at, page.anchor, page.start_density(size), page.last_density, TYPE_PT,
                               CHART_SCALE, sheets, floor=page.first_density)
        monkeypatch.setattr(pdf, "layout", layout)
        assert len(doc.pages) == 1, (path, density)
        if density > page.first_density:
            assert len(pdf.layout(html_at(density - 1), sheets).pages) > 1, (path, density)
        assert len(made) == 1, (path, size, tornado, density)


def test_the_fit_tries_a_less_dense_layout_the_measure_allows(monkeypatch):
    """A page that fits where the search starts, but whose measure says a less dense layout might too: that one
    is laid out, and where it runs over, the search goes up again no further than the layout known to fit."""
    from types import SimpleNamespace

    from tea.outputs import pdf
    from tea.outputs.page import CHART_SCALE, TYPE_PT

    pages = {0: 2, 1: 2, 2: 1, 3: 1}  # sheets each density takes
    heights = {0: 1100.0, 1: 1040.0, 2: 990.0, 3: 880.0}
    monkeypatch.setattr(pdf, "layout", lambda html, *a, **k: SimpleNamespace(pages=[None] * pages[int(html)],
                                                                           density=int(html)))
    monkeypatch.setattr(pdf, "measure", lambda doc, anchor: pdf.Measure(pages[doc.density], heights[doc.density],
                                                                        150.0, 1032.0))
    made = []
    density, _ = pdf.fit(lambda d: made.append(d) or str(d), "a", 3, 4, TYPE_PT, CHART_SCALE, floor=0)
    assert density == 2
    assert made == [3, 1, 2]  # from 880 px at 3, the page might fit at 1 (not at 0); 1 runs over
    made.clear()
    assert pdf.fit(lambda d: made.append(d) or str(d), "a", 0, 4, TYPE_PT, CHART_SCALE)[0] == 2
    assert made[0] == 0 and made[-1] == 2


def test_sensitivity_block_is_shown_only_when_given(tmp_path):
    from matplotlib.figure import Figure

    case, frame, res = _load(CASES_DIR / "clay_corner_miscanthus.toml")
    fig = Figure(figsize=(2.4, 1.5))
    ax = fig.add_subplot()
    ax.barh(["price", "yield"], [-400.0, 650.0])
    chart = charts.from_figure(fig, "case-0-tornado", "What moves the result", "Two bars, a test chart.")
    with_it = report.render_summary(case, frame, res, tmp_path / "with.html", sensitivity=chart)
    without = report.render_summary(case, frame, res, tmp_path / "without.html", sensitivity=False)
    root_with, root_without = _parse_html(with_it), _parse_html(without)
    fig_classes = lambda root: [el.get("class") for el in root.iter() if _local(el.tag) == "figure"]  # noqa: E731
    assert "sensitivity" in fig_classes(root_with) and "sensitivity" not in fig_classes(root_without)
    assert "What moves the result" in "".join(root_with.itertext())
    pdf = report.render_summary(case, frame, res, tmp_path / "with.pdf", sensitivity=chart)
    assert _pdfinfo(pdf)["Pages"] == "1"
    with pytest.raises(TypeError):
        report.render_summary(case, frame, res, tmp_path / "bad.html", sensitivity="<svg onload=alert(1)>")


def test_print_minus_marks_only_negative_numbers():
    # the true minus sign U+2212 (Unicode Standard, Mathematical Operators block) before digits only
    assert report.print_minus("-1,957 EUR/ha") == "\u22121,957 EUR/ha"
    assert report.print_minus("year-0 cost; 5-year loan") == "year-0 cost; 5-year loan"
    assert report.print_minus("(-0.36)") == "(\u22120.36)"


# ----------------------------------------------------------------------------- what moves the NPV
#: the heading of the tornado chart on the page
TORNADO_TITLE = "What moves the NPV"


def _npv_per_area(case, **changes) -> float:
    """NPV of the case with some inputs changed, per area unit of the case, by numpy-financial.

    numpy-financial's ``npv`` on the ledger's net cash flows (values[0] at t = 0,
    undiscounted), at the real rate of the Fisher equation for a nominal rate;
    per acre through NIST Handbook 44 Appendix C (1 acre = 0.40468564224 ha).
    """
    changed = case.replace(**changes) if changes else case
    net = tea.build_ledger(changed)["net_cash_flow"].to_numpy()
    rate = changed["finance.discount_rate"]
    if changed["finance.rate_basis"] == "nominal":  # Fisher equation: (1 + i) = (1 + r)(1 + pi)
        rate = (1 + rate) / (1 + changed["finance.inflation"]) - 1
    return npf.npv(rate, net) * (HA_PER_ACRE if case.unit_system == "us_customary" else 1.0)


def _shown(value: float) -> str:
    """A chart's whole-number label: thousands separators (the page's minus sign is squashed to '-')."""
    return f"{value:,.0f}"


def _price_key(case) -> str:
    return "revenue.price_per_gj" if case.values.get("revenue.price_per_gj") is not None else "revenue.price_per_t_dm"


def test_the_page_of_a_case_with_a_sensitivity_section_shows_its_tornado(rendered):
    d = rendered["clay_corner_miscanthus"]
    case = d["case"]
    ranges = case.values["sensitivity"]["ranges"]  # declared in the demo case file
    assert _pdfinfo(d["pdf"])["Pages"] == "1"  # poppler pdfinfo: still one sheet
    text = _squash(_text(d["pdf"]))
    assert _squash(TORNADO_TITLE) in text
    assert _squash("declared in the case's [sensitivity] section") in text  # where the low/high values come from
    assert "EURperha" in text  # NPV in the case's currency, per hectare
    # the bar ends: NPV with the price at its declared low and high value, by numpy-financial
    for side in ("low", "high"):
        assert _shown(_npv_per_area(case, **{"revenue.price_per_t_dm": ranges["revenue.price_per_t_dm"][side]})) \
            in text, side
    # ranked by swing: the declared inputs, top to bottom, in the order of their NPV swing by numpy-financial
    root = _parse_html(d["html"])
    svg = next(el for el in root.iter() if _local(el.tag) == "svg" and "tornado" in (el.get("aria-labelledby") or ""))
    tops = {}
    for el in svg.iter():
        if _local(el.tag) == "text" and el.get("y") is not None:
            tops.setdefault("".join(el.itertext()).split("*")[0].strip(), float(el.get("y")))
    swing = {path: abs(_npv_per_area(case, **{path: r["high"]}) - _npv_per_area(case, **{path: r["low"]}))
             for path, r in ranges.items()}
    from tea.inputs import riskspec

    by_position = sorted(ranges, key=lambda path: tops[riskspec.label(path)])
    assert by_position == sorted(ranges, key=lambda path: -swing[path])


@pytest.mark.parametrize("name", DEMO_IDS)
def test_asking_for_the_tornado_shows_it_on_one_page(tmp_path, name):
    case, frame, res = _load(CASES_DIR / f"{name}.toml")
    pdf = report.render_summary(case, frame, res, tmp_path / "t.pdf", sensitivity=True)
    assert _pdfinfo(pdf)["Pages"] == "1"
    text = _squash(_text(pdf))
    assert _squash(TORNADO_TITLE) in text
    unit = f"{case.currency}per{'acre' if case.unit_system == 'us_customary' else 'ha'}"
    assert unit in text
    declared = (case.values.get("sensitivity") or {}).get("ranges", {})
    key = _price_key(case)
    if key in declared:
        low, high = declared[key]["low"], declared[key]["high"]
        assert _squash("declared in the case's [sensitivity] section") in text
    else:  # the default range: the base value -/+ 20 % (the project's stated default share)
        low, high = case[key] * 0.8, case[key] * 1.2
        assert _squash("base \u2212/+ 20 %") in text
    for value in (low, high):
        assert _shown(_npv_per_area(case, **{key: value})) in text, value


def test_the_tornado_can_be_left_out(tmp_path):
    case, frame, res = _load(CASES_DIR / "clay_corner_miscanthus.toml")
    out = report.render_summary(case, frame, res, tmp_path / "plain.html", sensitivity=False)
    root = _parse_html(out)
    assert [_local(el.tag) for el in root.iter()].count("svg") == 3
    assert TORNADO_TITLE not in "".join(root.itertext())
    with pytest.raises(TypeError):
        report.render_comparison([case], [frame], [res], tmp_path / "c.html", sensitivity="yes")


def test_a_sixty_year_stand_with_its_tornado_still_fits_one_page(tmp_path, demo_mappings):
    """The longest stand life, long notes and the tornado: the chart moves beside the yearly table."""
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in demo_mappings["flood_meadow_willow"].items()}
    data["finance"]["stand_life_years"] = 60
    data["case"]["notes"] = "Prepared with the grower and the farm's advisor for the spring planning meeting. " * 4
    case = tea.load_text(to_toml(data), source="long.toml")
    frame = tea.build_ledger(case)
    out = report.render_summary(case, frame, tea.summarise(case, frame), tmp_path / "long.pdf", sensitivity=True)
    assert _pdfinfo(out)["Pages"] == "1"
    text = _squash(_text(out))
    assert _squash(TORNADO_TITLE) in text
    assert _squash(display.money(float(frame["cumulative_cash_flow"].iloc[-1]), digits=0)) in text


def test_a_page_too_long_for_its_tornado_leaves_it_off_and_says_so_in_one_line(tmp_path, demo_mappings):
    """The longest stand life on a case whose [sensitivity] section asks for the tornado, with the warnings
    its ranges then raise: even the densest layout ran over onto a second sheet (pdfinfo: 2 pages) with a
    Python warning and its source line on stderr. The chart the case asked for by default is left off, the
    page is one sheet, and the command says so in one line (the terminal's warning form)."""
    import subprocess
    import sys

    data = {k: dict(v) if isinstance(v, dict) else v for k, v in demo_mappings["clay_corner_miscanthus"].items()}
    data["finance"]["stand_life_years"] = 60
    case_file = tmp_path / "long.toml"
    case_file.write_text(to_toml(data), encoding="utf-8")
    out = tmp_path / "long.pdf"
    run = subprocess.run([sys.executable, "-m", "tea", "run", str(case_file), "--brief", "--pdf", str(out),
                          "--html", str(tmp_path / "long.html")], capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stderr
    assert _pdfinfo(out)["Pages"] == "1"
    assert _squash(TORNADO_TITLE) not in _squash(_text(out))
    said = [line for line in run.stderr.splitlines() if "left off the printed summary" in line]
    assert len(said) == 1 and said[0].startswith(f"warning: {case_file}: the chart of what moves the NPV")
    assert "Warning:" not in run.stderr and "Traceback" not in run.stderr
    # asked for in so many words, the tornado stays, and a page that runs over is said so, in one line
    case = tea.load_case(case_file)
    frame = tea.build_ledger(case)
    with pytest.warns(UserWarning, match="takes 2 pages even at its densest layout"):
        kept = report.render_summary(case, frame, tea.summarise(case, frame), tmp_path / "kept.pdf",
                                     sensitivity=True)
    assert _pdfinfo(kept)["Pages"] == "2" and _squash(TORNADO_TITLE) in _squash(_text(kept))


def test_command_line_sensitivity_flag(tmp_path):
    pdf = tmp_path / "s.pdf"
    res = run_cli(["run", CASES_DIR / "sandy_slope_switchgrass.toml", "--brief", "--pdf", pdf, "--sensitivity"])
    assert res.code == 0, res.text
    assert _pdfinfo(pdf)["Pages"] == "1"
    assert _squash(TORNADO_TITLE) in _squash(_text(pdf))
    # a comparison: the tornado on each case's page, each case page still one sheet
    out = tmp_path / "compare.pdf"
    two = [CASES_DIR / "flood_meadow_willow.toml", CASES_DIR / "sandy_slope_switchgrass.toml"]
    res = run_cli(["run", *two, "--brief", "--pdf", out, "--sensitivity"])
    assert res.code == 0, res.text
    assert _pdfinfo(out)["Pages"] == str(1 + len(two))
    for page in (2, 3):
        assert _squash(TORNADO_TITLE) in _squash(_text(out, page=page))


def test_a_name_and_notes_without_spaces_stay_on_the_sheet(tmp_path, demo_mappings):
    """A 400-character name and a long address in the notes: pdftotext's word boxes (poppler) all lie inside
    the sheet's width (ISO 216 A4: 210 mm)."""
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in demo_mappings["sandy_slope_switchgrass"].items()}
    data["case"]["name"] = "N" * 400
    data["case"]["notes"] = "see https://example.org/" + "a" * 300
    case = tea.load_text(to_toml(data), source="long.toml")
    frame = tea.build_ledger(case)
    out = report.render_summary(case, frame, tea.summarise(case, frame), tmp_path / "long.pdf", page_size="A4")
    boxes = _run("pdftotext", "-bbox", str(out), "-")
    right = [float(x) for x in re.findall(r'xMax="([0-9.]+)"', boxes)]
    assert right and max(right) <= A4_PT[0] + 0.5, max(right)
