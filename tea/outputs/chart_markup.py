"""A chart as the page holds it: its SVG markup, made inline-ready, and its outline before it is drawn.

This module does not load the chart library: a process that only lays a page
out (:mod:`tea.outputs.pdf_page`) or names its charts by their outlines uses it
alone. The charts themselves are drawn by :mod:`tea.outputs.charts`, whose
SVG output :func:`inline` and :func:`titled` make ready for the page:

* no XML prolog, DOCTYPE or metadata block (nothing refers outside the page);
* every ``id`` prefixed with the chart's own name, so several charts can share
  one HTML document without their clip paths and glyphs colliding;
* no group or transform that draws nothing (:func:`tidy`);
* an accessible name inside the SVG itself.
"""

from __future__ import annotations

import base64
import itertools
import math
import re
from dataclasses import dataclass
from functools import cached_property
from xml.sax.saxutils import escape as xml_escape

#: the URL scheme of a chart drawn while the page is laid out (:attr:`Chart.src`)
LATER = "tea-chart"


@dataclass(frozen=True)
class Chart:
    """One chart ready for the page.

    Attributes
    ----------
    name : str
        Short identifier, also the prefix of every SVG ``id``.
    title : str
        Heading shown above the chart (plain text; the template escapes it).
    svg : str
        The SVG markup (trusted: produced by :func:`tea.outputs.charts.svg_of`); empty in a chart's outline
        (:meth:`tea.outputs.charts.Spec.outline`), which is drawn later.
    alt : str
        A sentence describing what the chart shows, for readers who cannot see it.
    ticks : tuple of (axis, value, label)
        Every tick drawn, with its value and its label as printed (``"x"`` or
        ``"y"`` of each axes in turn), read back from matplotlib after drawing.
    size_pt : (str, str), optional
        An outline's width and height [pt], written as the drawn SVG will give them.
    """

    name: str
    title: str
    svg: str
    alt: str
    ticks: tuple[tuple[str, float, str], ...] = ()
    size_pt: tuple[str, str] | None = None

    @property
    def placeholder(self) -> str:
        """An outline as an empty SVG picture of the size the drawn chart will have: the PDF engine can lay
        the page out with it, and draw the chart in its place once it is drawn (:func:`tea.outputs.pdf.draw_in`)."""
        if self.size_pt is None:
            raise ValueError(f"chart {self.name!r}: only an outline made from a chart's description has a placeholder")
        w, h = self.size_pt
        return f'<svg xmlns="http://www.w3.org/2000/svg" width="{w}pt" height="{h}pt" viewBox="0 0 {w} {h}"/>'

    @cached_property  # made once, where the chart is drawn (tea.outputs.charts.draw_for_engine), pickled with it
    def engine_svg(self) -> str:
        """The SVG as the PDF engine is given it: the same picture, drawn faster (:func:`for_engine`)."""
        return for_engine(self.svg)

    @cached_property  # a page is rendered at each density it is tried at: made once per chart
    def data_uri(self) -> str:
        """The SVG as a ``data:`` URL for the PDF engine, which draws it as an image (:attr:`engine_svg`)."""
        return "data:image/svg+xml;base64," + base64.b64encode(self.engine_svg.encode("utf-8")).decode("ascii")

    @property
    def src(self) -> str:
        """Where the PDF engine takes the chart from: its ``data:`` URL, or for an outline its name under
        :data:`LATER`, which the engine asks for when it reaches the image (:func:`tea.outputs.pdf.layout`)."""
        return self.data_uri if self.svg else f"{LATER}:{self.name}"



_ID = re.compile(r'\bid="([^"]+)"')
_REF = re.compile(r'(url\(#|href="#)([^)"]+)')
_NAME = re.compile(r"[A-Za-z][A-Za-z0-9-]*")


def check_name(name: str) -> None:
    """Raise ValueError unless ``name`` can prefix the ids of a chart's SVG: letters, digits and ``-``."""
    if not _NAME.fullmatch(name):
        raise ValueError(f"chart name {name!r}: expected letters, digits and '-'")


def inline(text: str, name: str) -> str:
    """matplotlib's SVG file ``text`` as markup to sit inside an HTML page, every id prefixed with ``name``
    (letters, digits and ``-``, unique on the page)."""
    check_name(name)
    text = text[text.index("<svg"):]
    text = re.sub(r"\s*<metadata>.*?</metadata>", "", text, flags=re.S)
    text = _ID.sub(lambda m: f'id="{name}-{m.group(1)}"', text)
    text = _REF.sub(lambda m: f"{m.group(1)}{name}-{m.group(2)}", text)
    text = text.replace("<svg ", f'<svg class="chart" role="img" aria-labelledby="{name}-title" ', 1)
    return tidy(text).strip() + "\n"


def titled(svg: str, name: str, alt: str) -> str:
    """The inline SVG with ``alt`` as its accessible name (the ``<title>`` its root is labelled by), escaped
    as matplotlib escapes its own text."""
    title_xml = f'\n <title id="{name}-title">{xml_escape(alt)}</title>'
    return re.sub(r"(<svg[^>]*>)", lambda m: m.group(1) + title_xml, svg, count=1)


_GROUP = re.compile(r"<g(?:\s[^>]*?)?/?>|</g>")
_NAMED_ONLY = re.compile(r'<g(?:\s+id="[^"]*")?\s*/?>')
_NO_ROTATION = re.compile(r' transform="rotate\(-?0 [^)"]*\)"')


def tidy(svg: str) -> str:
    """matplotlib's SVG without what draws nothing: groups that only name their content (``<g id="...">``
    around each artist, and bare ``<g>``; their content stays, in order) and rotations by 0 degrees.

    The picture is the same; the PDF engine draws it in half the time (it
    sets up and restores the graphics state for every group, and reads
    every transform).

    >>> tidy('<svg><g id="a"><g><path d="M 0 0"/></g><g id="b"/></g>'
    ...      '<g clip-path="url(#c)"><text transform="rotate(-0 1 2)">1</text></g></svg>')
    '<svg><path d="M 0 0"/><g clip-path="url(#c)"><text>1</text></g></svg>'
    """
    kept: list[bool] = []

    def group(m: re.Match) -> str:
        tag = m.group(0)
        if tag == "</g>":
            return tag if kept.pop() else ""
        only_named = _NAMED_ONLY.fullmatch(tag) is not None
        if not tag.endswith("/>"):
            kept.append(not only_named)
        return "" if only_named else tag

    return _NO_ROTATION.sub("", _GROUP.sub(group, svg))


_SHEET = re.compile(r'\s*<defs>\s*<style type="text/css">\*\{(?P<rules>[^}<]*)\}</style>\s*</defs>')
_STYLED = re.compile(r'<(?P<tag>[a-zA-Z]+)(?P<attrs>[^>]*?) style="(?P<style>[^"]*)"')
_ATTR_NAME = re.compile(r'\s([a-zA-Z:-]+)="')


def _declarations(text: str) -> list[tuple[str, str]]:
    return [(n.strip(), v.strip()) for n, _, v in (d.partition(":") for d in text.split(";")) if n.strip()]


def for_engine(svg: str) -> str:
    """A chart's SVG as the PDF engine draws it fastest, with the same picture: its styles as attributes
    (:func:`styles_as_attributes`), then its marks drawn as few paths (:func:`marks_joined`). The HTML page
    keeps matplotlib's markup."""
    return marks_joined(styles_as_attributes(svg))


def styles_as_attributes(svg: str) -> str:
    """A chart's SVG with the same picture and the same PDF from the engine, parsed faster: each element's ``style``
    declarations as its presentation attributes (the engine parses a style attribute as CSS for every
    element it draws), and matplotlib's one style sheet (``*{stroke-linejoin: round; stroke-linecap: butt}``)
    as attributes of the root, which every element inherits unless it sets its own. An element that has an
    attribute of the same name as one of its declarations keeps its style attribute.

    >>> styles_as_attributes('<svg x="1"><defs><style type="text/css">*{stroke-linecap: butt}</style></defs>'
    ...            '<path d="M 0 0" style="fill: none; stroke: #000"/></svg>')
    '<svg stroke-linecap="butt" x="1"><path d="M 0 0" fill="none" stroke="#000"/></svg>'
    """
    sheet = _SHEET.search(svg)
    if sheet is not None:
        root = "".join(f' {n}="{v}"' for n, v in _declarations(sheet["rules"]))
        svg = svg[:sheet.start()] + svg[sheet.end():]
        svg = svg.replace("<svg", "<svg" + root, 1)

    def attributes(m: re.Match) -> str:
        declared = _declarations(m["style"])
        if {n for n, _ in declared} & set(_ATTR_NAME.findall(m["attrs"])):
            return m.group(0)
        return f'<{m["tag"]}{m["attrs"]}' + "".join(f' {n}="{v}"' for n, v in declared)

    return _STYLED.sub(attributes, svg)


# ----------------------------------------------------------------------------- marks drawn as few paths
_SVG_NS = "http://www.w3.org/2000/svg"
_HREFS = ("{http://www.w3.org/1999/xlink}href", "href")
#: path data of absolute commands whose arguments are all points (what matplotlib writes), and their numbers
_NUMBER = re.compile(r"-?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
_POINTS_ONLY = re.compile(rf"(?:\s*[MLCQZz]|\s*,?\s*{_NUMBER.pattern})*\s*")
_LENGTH = re.compile(rf"\s*({_NUMBER.pattern})(?:px|pt)?\s*")
#: an id an attribute refers to (``#id`` in ``href``, ``url(#id)`` in ``clip-path``)
_REFERRED = re.compile(r"#([^)\s\"']+)")
#: opacity attributes: a mark painted with any of them below 1 is never joined (overlaps would show)
_OPACITIES = ("opacity", "fill-opacity", "stroke-opacity")
#: the least gap [pt] between a joined mark and anything it is moved past or joined to: more than the reach
#: of anti-aliasing at any resolution a viewer draws at (one pixel at 72 dpi)
GAP_PT = 1.0
#: a line of text is taken to be at most this wide per character [em] and to reach this far above and below
#: its baseline [em]: more than any glyph of DejaVu Sans, the charts' font, so a box is never too small
TEXT_EM_PER_CHARACTER, TEXT_EM_UP, TEXT_EM_DOWN = 1.3, 1.2, 0.5

Box = tuple[float, float, float, float]


def _points(d: str) -> list[float] | None:
    """The numbers of path data made of absolute point commands only (x, y, x, y, ...), or None."""
    if not _POINTS_ONLY.fullmatch(d):
        return None
    numbers = [float(n) for n in _NUMBER.findall(d)]
    return numbers if len(numbers) % 2 == 0 else None


def _moved(d: str, dx: float, dy: float) -> str:
    """Path data of point commands moved by (dx, dy)."""
    count = itertools.count()

    def one(m: re.Match) -> str:
        value = float(m.group(0)) + (dx if next(count) % 2 == 0 else dy)
        return f"{value:.6f}".rstrip("0").rstrip(".")

    return _NUMBER.sub(one, d)


def _number(text: str | None) -> float | None:
    """An attribute's number (a length in px or pt is its number), or None."""
    m = _LENGTH.fullmatch(text) if text is not None else None
    return float(m.group(1)) if m else None


def _box(el, widest: float) -> Box | None:
    """A box [pt] that holds everything an element paints, or None if it cannot be told (then nothing is
    moved past it). A path: its points and the reach of its stroke (half its width; twice its width at
    mitred corners); a line of text: its length at :data:`TEXT_EM_PER_CHARACTER` from its anchor."""
    tag = el.tag
    if tag in ("defs", "clipPath", "title", "desc"):
        return (math.inf, math.inf, -math.inf, -math.inf)  # paints nothing
    if "transform" in el.attrib:
        return None
    if tag == "path":
        points = _points(el.get("d", ""))
        if not points:
            return None
        width = _number(el.get("stroke-width"))
        width = widest if width is None else width
        reach = 0.0 if el.get("stroke") == "none" else width * (2.0 if el.get("stroke-linejoin") == "miter" else 0.5)
        xs, ys = points[0::2], points[1::2]
        return (min(xs) - reach, min(ys) - reach, max(xs) + reach, max(ys) + reach)
    if tag == "text":
        x, y, size = _number(el.get("x")), _number(el.get("y")), _number(el.get("font-size"))
        if x is None or y is None or size is None or len(el) or not el.text:
            return None
        wide = TEXT_EM_PER_CHARACTER * size * len(el.text)
        left = {"middle": x - wide / 2, "end": x - wide}.get(el.get("text-anchor", "start"), x)
        return (left, y - TEXT_EM_UP * size, left + wide, y + TEXT_EM_DOWN * size)
    return None


def _apart(a: Box, b: Box) -> bool:
    return (a[2] + GAP_PT <= b[0] or b[2] + GAP_PT <= a[0]
            or a[3] + GAP_PT <= b[1] or b[3] + GAP_PT <= a[1])


_SUBPATH = re.compile(r"M[^M]*")


def _joinable(el) -> bool:
    """A path that can be drawn as part of another with the same attributes: no id, no transform, point
    commands only, painted opaque, and lines only (no fill, or straight lines that enclose nothing). A
    filled shape is left alone: a viewer may align a lone rectangle's edges to its pixels, and not a
    path of several."""
    if el.tag != "path" or "id" in el.attrib or "transform" in el.attrib \
            or any(_number(el.get(a, "1")) != 1.0 for a in _OPACITIES):
        return False
    d = el.get("d", "")
    return el.get("fill") == "none" or ("z" not in d.lower() and all(
        len(_NUMBER.findall(sub)) == 4 for sub in _SUBPATH.findall(d)))


def marks_joined(svg: str) -> str:
    """A chart's SVG drawn as fewer elements, with the same picture: the engine sets up each element it
    draws on its own, and a chart's marks are many small ones.

    * A mark placed by reference (``<use>`` of a path in ``<defs>``: matplotlib's tick marks and markers)
      becomes that path, moved to its place; a definition no longer referred to is dropped.
    * Paths with the same attributes, side by side in one group, become one path with all their outlines
      (e.g. an axis's tick marks, its gridlines): a path joins the first of its kind only if it is opaque,
      lies :data:`GAP_PT` apart from the outlines already joined, and lies as far apart from every element
      drawn between the two (text by a box larger than its letters); else it starts a path of its own.
      Nothing changes in what covers what.

    Anything else, or SVG that cannot be read, is left as it is.
    """
    from xml.etree import ElementTree

    try:
        root = ElementTree.fromstring(svg)
    except ElementTree.ParseError:
        return svg
    for el in root.iter():  # local names: the markup is written back with SVG as its default namespace
        if isinstance(el.tag, str) and el.tag.startswith("{" + _SVG_NS + "}"):
            el.tag = el.tag[len(_SVG_NS) + 2:]
    placed = _placed_marks_drawn(root)
    joined = _like_paths_joined(root)
    if not (placed or joined):
        return svg
    root.set("xmlns", _SVG_NS)
    return ElementTree.tostring(root, encoding="unicode")


def _placed_marks_drawn(root) -> bool:
    """Each ``<use>`` of a path in ``<defs>`` made that path, moved to its place (the path's own attributes win
    over the use's, as inherited ones do), and the definitions no longer referred to dropped; whether any."""
    from xml.etree import ElementTree

    defined = {el.get("id"): el for defs in root.iter("defs") for el in defs if el.tag == "path" and el.get("id")}
    changed = False
    for parent in list(root.iter()):
        for i, el in enumerate(list(parent)):
            if el.tag != "use":
                continue
            href = next((el.get(h) for h in _HREFS if el.get(h)), "")
            mark = defined.get(href[1:]) if href.startswith("#") else None
            if mark is None or "transform" in el.attrib or "transform" in mark.attrib \
                    or _points(mark.get("d", "")) is None:
                continue
            dx, dy = _number(el.get("x", "0")), _number(el.get("y", "0"))
            if dx is None or dy is None:
                continue
            attrs = {k: v for k, v in el.attrib.items() if k not in (*_HREFS, "x", "y")}
            attrs.update({k: v for k, v in mark.attrib.items() if k not in ("id", "d")})
            attrs["d"] = _moved(mark.get("d"), dx, dy)
            path = ElementTree.Element("path", attrs)
            path.tail = el.tail
            parent[i] = path
            changed = True
    if changed:
        referred = {m.group(1) for el in root.iter() for v in el.attrib.values() for m in _REFERRED.finditer(v)}
        for defs in list(root.iter("defs")):
            for mark in [m for m in defs if m.get("id") in defined and m.get("id") not in referred]:
                defs.remove(mark)
        for parent in list(root.iter()):
            for el in [e for e in parent if e.tag == "defs" and len(e) == 0]:
                parent.remove(el)
    return changed


def _like_paths_joined(root) -> bool:
    """Paths with the same attributes in one group joined into the first of their kind where nothing changes
    in what covers what (see :func:`marks_joined`); whether any."""
    widest = max((w for w in (_number(el.get("stroke-width")) for el in root.iter()) if w is not None), default=1.0)
    changed = False
    for parent in list(root.iter()):
        drawn: list[tuple[object, Box | None]] = []  # the elements kept, in order, with their boxes
        heads: dict[tuple, tuple[int, list[Box]]] = {}  # attributes -> (index in drawn, outlines joined)
        for el in list(parent):
            box = _box(el, widest)
            if box is not None and _joinable(el):
                key = tuple(sorted((k, v) for k, v in el.attrib.items() if k != "d"))
                head = heads.get(key)
                if head is not None and all(_apart(box, b) for b in head[1]) and all(
                        b is not None and _apart(box, b) for _, b in drawn[head[0] + 1:]):
                    first = drawn[head[0]][0]
                    first.set("d", first.get("d").rstrip() + " " + el.get("d").strip())
                    head[1].append(box)
                    parent.remove(el)
                    changed = True
                    continue
                heads[key] = (len(drawn), [box])
            drawn.append((el, box))
    return changed
