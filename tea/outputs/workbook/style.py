"""Cell formats of the workbook: a palette of our own, number formats by unit, units as shown.

The unit of a row is shown once, in its unit column; number formats carry no
unit (a money cell reads ``2,789.19``, its unit column ``EUR/ha``), so no unit
is ever shown twice. Shares are shown as percentages, their unit column left empty.
"""

from __future__ import annotations

from typing import Any

#: sand for what people type, moss for headings, slate for formulas
PALETTE = {
    "input_fill": "#F3E6C4", "input_font": "#5A3E0B", "input_border": "#B8893A",
    "head_fill": "#2F4F3A", "head_font": "#FFFFFF", "sub_font": "#5B6B61", "computed_font": "#1F2933",
    "key_fill": "#EAF2EC", "flag_font": "#B3261E", "flag_fill": "#F9DEDC",
    "group_line": "#2F4F3A", "series": ("#2F4F3A", "#B8893A", "#6B8F71"),
}

_ROLES: dict[str, dict[str, Any]] = {
    "title": {"bold": True, "font_size": 14, "font_color": PALETTE["head_fill"]},
    "subtitle": {"italic": True, "font_color": PALETTE["sub_font"], "text_wrap": False},
    "wrap": {"text_wrap": True, "valign": "top"},
    "head": {"bold": True, "font_color": PALETTE["head_font"], "bg_color": PALETTE["head_fill"], "text_wrap": True,
             "valign": "top"},
    "year": {"bold": True, "font_color": PALETTE["head_font"], "bg_color": PALETTE["head_fill"], "align": "right"},
    "group": {"bold": True, "font_size": 11, "font_color": PALETTE["head_fill"], "bottom": 1,
              "bottom_color": PALETTE["group_line"]},
    "label": {},
    "keyname": {"font_size": 8, "font_color": PALETTE["sub_font"]},
    "input": {"bold": True, "font_color": PALETTE["input_font"], "bg_color": PALETTE["input_fill"], "border": 3,
              "border_color": PALETTE["input_border"], "locked": False},
    "computed": {"font_color": PALETTE["computed_font"]},
    "key": {"bold": True, "font_color": PALETTE["computed_font"], "bg_color": PALETTE["key_fill"]},
    "flag": {"bold": True, "font_color": PALETTE["flag_font"]},
    "flag_wrap": {"bold": True, "font_color": PALETTE["flag_font"], "text_wrap": True, "valign": "top"},
    "value": {"italic": True, "font_color": PALETTE["sub_font"]},  # a value tea computed when it wrote the file
}

_BASE = {"font_name": "Calibri", "font_size": 10}


class Styles:
    """XlsxWriter formats by (role, number format), made once per workbook."""

    def __init__(self, workbook):
        self.wb = workbook
        self._made: dict[tuple[str, str], Any] = {}
        self.flag_fmt = workbook.add_format({"bold": True, "font_color": PALETTE["flag_font"],
                                             "bg_color": PALETTE["flag_fill"]})

    def __call__(self, role: str, num: str = "General"):
        key = (role, num)
        if key not in self._made:
            props = {**_BASE, **_ROLES[role]}
            if num != "General":
                props["num_format"] = num
            self._made[key] = self.wb.add_format(props)
        return self._made[key]


def number_format(unit: str) -> str:
    """Number format of a value in a canonical unit string (no unit inside: the unit column says it)."""
    if unit in ("fraction", "fraction/yr"):
        return "0.00%"
    if unit in ("yr", "flag", "count", "sign"):
        return "0"
    if unit == "ratio":
        return "0.00"
    if unit.startswith("money"):
        return "#,##0.00;[Red]-#,##0.00"
    return "#,##0.000"


def unit_shown(unit: str, currency: str, price_unit: str = "t DM") -> str:
    """A canonical unit as its column shows it: the currency for money; nothing for shares (their cells show
    %) and flags."""
    if unit == "fraction":
        return ""  # the cell's format shows the %
    if unit == "fraction/yr":
        return "per year"
    if unit in ("flag", "label", "text"):
        return ""
    return unit.replace("money", currency).replace("price unit", price_unit)


def whole_field_unit(unit: str) -> str:
    """The unit of a per-ha quantity multiplied by the area."""
    return unit.replace("/ha", "", 1)


__all__ = ["PALETTE", "Styles", "number_format", "unit_shown", "whole_field_unit"]
