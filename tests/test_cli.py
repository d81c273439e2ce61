"""The command line: bad input of every class, the demo runs, JSON, starter cases, presets.

Bad input must give exit status 2, one ``error:`` line per problem on stderr
naming the file, the key path and what was expected, every problem at once, and
never a traceback. Legal but unusual values give a ``warning:`` line and exit 0.
"""

from __future__ import annotations

import json
import math
import re
import tomllib
from pathlib import Path

import pytest

import tea
from tea.inputs.case import load_case, preset_names
from tea.model.ledger import LINE_NAMES
from tea.model.results import FIGURE_BY_NAME, FIGURE_NAMES
from tea.core.texts import CAUTIONS

from conftest import CASES_DIR, DEMO_CASES, DEMO_IDS, copy_case, run_cli, to_toml

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"


def _assert_clean(res) -> None:
    assert "Traceback" not in res.text
    assert "internal error" not in res.text


def _assert_bad_input(res, path: str | Path, expected: list[tuple[str, str]]) -> None:
    """Exit 2; exactly one ``error: FILE: KEY: ...`` line per expected (key, fragment), in any order."""
    _assert_clean(res)
    assert res.code == 2, res.text
    lines = res.err_lines
    assert len(lines) == len(expected), "\n".join(lines)
    unmatched = list(lines)
    for key, fragment in expected:
        head = f"error: {path}: {key}: " if key else f"error: {path}: "
        hits = [line for line in unmatched if line.startswith(head) and fragment in line]
        assert hits, f"no line {head!r}...{fragment!r} in:\n" + "\n".join(lines)
        unmatched.remove(hits[0])


def _clay(demo_mappings) -> dict:
    return copy_case(demo_mappings["clay_corner_miscanthus"])


# --------------------------------------------------------------------------------------
# every class of bad input
# --------------------------------------------------------------------------------------
def _rename(section, old, new):
    def edit(d):
        d[section][new] = d[section].pop(old)
    return edit


def _set(section, **values):
    def edit(d):
        d.setdefault(section, {}).update(values)
    return edit


def _pop(section, key):
    def edit(d):
        d[section].pop(key)
    return edit


def _move(key, src, dst):
    def edit(d):
        d[dst][key] = d[src].pop(key)
    return edit


BAD_MAPPINGS = {
    # unknown key, with the nearest valid key (in both unit systems) suggested
    "unknown_key": (_set("yield", site_factr=0.9), [("yield.site_factr", "unknown key; did you mean 'site_factor'")]),
    # a wrong unit in the key name: an unknown key, the right spellings suggested; the real key is then missing
    "wrong_unit_area": (_rename("field", "area_ha", "area_hectares"), [
        ("field.area_hectares", "did you mean 'area_ha' or 'area_acre'?"),
        ("field.area_ha", "missing value: expected a number [ha]")]),
    "wrong_unit_distance": (_rename("costs", "haul_distance_km", "haul_distance_furlongs"), [
        ("costs.haul_distance_furlongs", "did you mean 'haul_distance_km' or 'haul_distance_mile'?"),
        ("costs.haul_distance_km", "missing value: expected a number [km]")]),
    "unknown_section": (_set("finanse", discount_rate=0.05), [("finanse", "unknown section; did you mean 'finance'?")]),
    # a key in the wrong section: said once, where it was found
    "wrong_section": (_move("discount_rate", "finance", "field"), [("field.discount_rate", "belongs in [finance]")]),
    "missing_required": (_pop("costs", "removal_per_ha"), [("costs.removal_per_ha", "missing value: expected a number [EUR/ha]")]),
    # an unknown key with no near match: the keys the section takes
    "unknown_key_far": (_set("yield", qqq=1), [("yield.qqq", "unknown key; [yield] takes mature_t_dm_per_ha, fresh_moisture")]),
    "wrong_type_text": (_set("field", area_ha="six"), [("field.area_ha", "expected a number [ha], got \"six\"")]),
    "wrong_type_bool": (_set("yield", site_factor=True), [("yield.site_factor", "expected a number")]),
    "wrong_type_int": (_set("finance", stand_life_years=20.5), [("finance.stand_life_years", "expected a whole number")]),
    "wrong_type_enum": (_set("harvest", timing="spring"), [("harvest.timing", "expected one of autumn, late_winter")]),
    "wrong_type_list": (_set("yield", ramp_up_fractions="0, 0.4"), [("yield.ramp_up_fractions", "list of numbers")]),
    "not_a_table": (lambda d: d.update(loan=0.6), [("loan", "expected a [loan] table of keys")]),
    "nan": (_set("costs", haul_per_t_km=math.nan), [("costs.haul_per_t_km", "expected a finite number")]),
    "inf": (_set("costs", haul_per_t_km=math.inf), [("costs.haul_per_t_km", "expected a finite number")]),
    "huge": (_set("costs", removal_per_ha=1e300), [("costs.removal_per_ha", "of size at most")]),
    # physical ranges: moisture is a wet-basis fraction below 1 (100 % water has no dry matter)
    "moisture_100_percent": (_set("harvest", moisture_late_winter=1.0), [("harvest.moisture_late_winter", "must be < 1")]),
    "fresh_moisture_over_1": (_set("yield", mature_fresh_t_per_ha=30.0, fresh_moisture=1.3),
                              [("yield.fresh_moisture", "must be < 1")]),
    "negative_area": (_set("field", area_ha=-6.4), [("field.area_ha", "must be > 0, got -6.4")]),
    "zero_area": (_set("field", area_ha=0.0), [("field.area_ha", "must be > 0")]),
    "fraction_above_1": (_set("harvest", field_loss=1.5), [("harvest.field_loss", "must be <= 1")]),
    "fraction_below_0": (_set("harvest", storage_loss=-0.1), [("harvest.storage_loss", "must be >= 0")]),
    "share_above_1": (_set("loan", share_of_establishment=1.2), [("loan.share_of_establishment", "must be <= 1")]),
    # Zub & Brancourt-Hulmel 2010: at most ~49 t DM/ha (the preset's record); 150 is an input error
    "yield_far_above_record": (_set("yield", mature_t_dm_per_ha=150.0),
                               [("yield.mature_t_dm_per_ha", "far above the highest recorded")]),
    "yield_far_above_record_us": (_set("yield", mature_short_ton_dm_per_acre=60.0),
                                  [("yield.mature_short_ton_dm_per_acre", "far above the highest recorded")]),
    "stand_life_1": (_set("finance", stand_life_years=1), [("finance.stand_life_years", "must be >= 2, got 1")]),
    "unknown_preset": (_set("crop", preset="bamboo"),
                       [("crop.preset", "unknown crop preset \"bamboo\"; expected one of coppice, poplar_coppice, rhizome_grass")]),
    "missing_preset": (_pop("crop", "preset"), [("crop.preset", "missing value")]),
    "same_key_two_spellings": (_set("field", area_acre=15.8), [("field.area_acre", "given twice (also as field.area_ha)")]),
    "both_prices": (_set("revenue", price_per_gj=5.5), [("revenue.price_per_gj", "give one price")]),
    "bad_currency": (_set("case", currency="euro"), [("case.currency", "three-letter ISO 4217 code")]),
    "loan_without_rate": (_pop("loan", "rate"), [("loan.rate", "needs its interest rate")]),
}


@pytest.mark.parametrize("command", ["check", "run"])
@pytest.mark.parametrize("name", sorted(BAD_MAPPINGS))
def test_bad_case(name, command, tmp_path, demo_mappings):
    edit, expected = BAD_MAPPINGS[name]
    data = _clay(demo_mappings)
    edit(data)
    path = tmp_path / f"{name}.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    res = run_cli([command, path])
    _assert_bad_input(res, path, expected)
    assert res.out == ""


@pytest.mark.parametrize("edit, expected", [
    (_pop("costs", "removal_per_acre"), [("costs.removal_per_acre", "missing value: expected a number [USD/acre]")]),
    (_rename("field", "area_acre", "area_acres"), [("field.area_acres", "did you mean 'area_ha' or 'area_acre'?"),
                                                   ("field.area_acre", "missing value: expected a number [acre]")]),
    (_set("field", area_acre=-38.0), [("field.area_acre", "must be > 0, got -38")]),  # shown in the unit given
])
def test_bad_us_case_speaks_its_units(edit, expected, tmp_path, demo_mappings):
    # a case in US customary units is told its problems in its own key spellings and units
    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    edit(data)
    path = tmp_path / "us.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    _assert_bad_input(run_cli(["check", path]), path, expected)


@pytest.mark.parametrize("text, fragment", [
    ("[case\nname = 'x'\n", "malformed TOML"),
    ("[field]\narea_ha = 6.4.4\n", "malformed TOML"),
    ("name = \"unterminated\n", "malformed TOML"),
    ("[field]\narea_ha = 1\narea_ha = 2\n", "malformed TOML"),  # TOML itself refuses a duplicate key
])
def test_malformed_toml(text, fragment, tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text(text, encoding="utf-8")
    for command in ("check", "run"):
        res = run_cli([command, path])
        _assert_bad_input(res, path, [("", fragment)])
        assert "line" in res.err  # says where


def test_malformed_toml_in_a_demo_case(tmp_path):
    text = CLAY.read_text(encoding="utf-8").replace("area_ha = 6.4", "area_ha = 6,4")
    path = tmp_path / "comma.toml"
    path.write_text(text, encoding="utf-8")
    _assert_bad_input(run_cli(["run", path]), path, [("", "malformed TOML")])


@pytest.mark.parametrize("name", ["missing.toml", "missing.xlsx", "no_folder/missing.toml"])
def test_missing_file(name, tmp_path):
    # regression: a missing .xlsx once went to the workbook reader and failed with exit 1
    path = tmp_path / name
    for command in ("check", "run"):
        _assert_bad_input(run_cli([command, path]), path, [("", "file not found")])


def test_unreadable_files(tmp_path):
    binary = tmp_path / "binary.toml"
    binary.write_bytes(b"\xff\xfe\x00garbage")
    _assert_bad_input(run_cli(["run", binary]), binary, [("", "cannot read the file")])
    _assert_bad_input(run_cli(["run", tmp_path]), tmp_path, [("", "cannot read the file")])


def test_three_errors_three_lines(tmp_path, demo_mappings):
    data = _clay(demo_mappings)
    data["field"]["area_ha"] = -1.0
    data["harvest"]["moisture_late_winter"] = 1.0
    data["costs"]["haul_distance_furlongs"] = 3.0
    path = tmp_path / "three.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    for command in ("check", "run"):
        _assert_bad_input(run_cli([command, path]), path, [
            ("field.area_ha", "must be > 0"),
            ("harvest.moisture_late_winter", "must be < 1"),
            ("costs.haul_distance_furlongs", "unknown key"),
        ])


def test_problems_of_every_file_at_once(tmp_path, demo_mappings):
    one, two = _clay(demo_mappings), _clay(demo_mappings)
    one["field"]["area_ha"] = -1.0
    two["finance"]["stand_life_years"] = 1
    p1, p2 = tmp_path / "one.toml", tmp_path / "two.toml"
    p1.write_text(to_toml(one), encoding="utf-8")
    p2.write_text(to_toml(two), encoding="utf-8")
    res = run_cli(["check", CLAY, p1, p2])
    _assert_clean(res)
    assert res.code == 2
    assert f"{CLAY}: ok" in res.out
    assert sorted(line.split(": ")[1] for line in res.err_lines if line.startswith("error:")) == sorted([str(p1), str(p2)])


@pytest.mark.parametrize("edit, key", [
    (_set("yield", mature_t_dm_per_ha=60.0), "yield.mature_t_dm_per_ha"),  # above the record 49, below 2 x 49
    (_set("finance", discount_rate=0.25), "finance.discount_rate"),
    (_set("case", currency="ISK"), "case.currency"),  # well-formed but not a common code
    (_set("costs", haul_distance_km=450.0), "costs.haul_distance_km"),
])
def test_unusual_value_warns_and_exits_0(edit, key, tmp_path, demo_mappings):
    data = _clay(demo_mappings)
    edit(data)
    path = tmp_path / "unusual.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    for command in ("check", "run"):
        res = run_cli([command, path])
        _assert_clean(res)
        assert res.code == 0, res.text
        assert not [line for line in res.err_lines if line.startswith("error:")]
        assert [line for line in res.err_lines if line.startswith(f"warning: {path}: {key}: ")], res.err


@pytest.mark.parametrize("argv", [[], ["run"], ["frobnicate"], ["run", "--no-such-option", str(CLAY)],
                                  ["new", "x"], ["new", "x", "--crop", "no_such_crop"]])
def test_usage_errors_exit_2(argv):
    res = run_cli(argv)
    _assert_clean(res)
    assert res.code == 2
    assert "usage:" in res.err


# --------------------------------------------------------------------------------------
# the demo cases
# --------------------------------------------------------------------------------------
def test_run_demo_prints_figures_and_cautions(demo_path):
    res = run_cli(["run", demo_path])
    _assert_clean(res)
    assert res.code == 0, res.err
    case = load_case(demo_path)
    assert case.name in res.out
    assert case.hash in res.out
    flat = " ".join(res.out.split())  # the terminal wraps long lines at 100 characters
    for caution in CAUTIONS:
        assert caution in flat
    assert "[DEMO DATA]" in res.out  # the demo cases are marked demo = true
    assert not [line for line in res.err_lines if line.startswith("error:")]


def test_yearly_ledger_prints_one_line_per_year_under_its_header(demo_path):
    """The yearly table of `tea run`: a header, then each year of the stand on its own line, its year and net
    cash as the ledger has them (read back from the printed text), within 100 characters."""
    res = run_cli(["run", demo_path])
    assert res.code == 0, res.err
    case = load_case(demo_path)
    frame = tea.build_ledger(case)
    lines = res.out.splitlines()
    assert all(len(line) <= 100 for line in lines)
    start = next(i for i, line in enumerate(lines) if line.startswith("Yearly ledger"))
    header = lines[start + 1].split()
    assert header[0] == "year" and "net" in header
    rows = lines[start + 2:start + 2 + len(frame)]
    years = [int(r.split()[0]) for r in rows]
    assert years == [int(y) for y in frame["year"]]
    net_col = header.index("net")  # "net cash": two words in the header, one number in each row
    per = 1.0 if case.unit_system == "metric" else 0.40468564224  # NIST Handbook 44: ha per acre
    for row, value in zip(rows, frame["net_cash_flow"]):
        shown = float(row.split()[net_col - 2].replace(",", "").replace("\u2212", "-"))
        assert shown == pytest.approx(value * per, abs=0.51), row


def test_run_brief_still_prints_cautions(demo_path):
    res = run_cli(["run", "--brief", demo_path])
    assert res.code == 0
    assert all(c in " ".join(res.out.split()) for c in CAUTIONS)  # wrapped at 100 characters
    assert "Yearly ledger" not in res.out


def test_check_demo(demo_path):
    res = run_cli(["check", demo_path])
    _assert_clean(res)
    assert res.code == 0
    assert res.out.startswith(f"{demo_path}: ok")


@pytest.fixture(scope="module")
def json_runs():
    out = {}
    for path in DEMO_CASES:
        res = run_cli(["run", "--json", path])
        assert res.code == 0, res.err
        out[path.stem] = json.loads(res.out)
    return out


@pytest.mark.parametrize("stem", DEMO_IDS)
def test_json_has_the_documented_keys(stem, json_runs):
    doc = json_runs[stem]
    case = load_case(CASES_DIR / f"{stem}.toml")
    for key in ("figures_per_ha", "figures_whole_field", "discount_rate", "ledger", "tool_version",
                "case_hash", "cautions"):
        assert key in doc, key
    assert doc["tool_version"] == tea.__version__
    assert doc["case_hash"] == case.hash
    assert doc["cautions"] == list(CAUTIONS)
    assert set(doc["figures_per_ha"]) == set(FIGURE_NAMES) == set(doc["figures_whole_field"])
    assert set(doc["discount_rate"]) >= {"used_real", "given", "basis", "inflation"}
    assert doc["discount_rate"]["given"] == case["finance.discount_rate"]


@pytest.mark.parametrize("stem", DEMO_IDS)
def test_json_ledger_has_every_line(stem, json_runs):
    ledger = json_runs[stem]["ledger"]
    case = load_case(CASES_DIR / f"{stem}.toml")
    years = list(range(case.stand_life + 1))
    assert ledger["years"] == years  # the "year" line
    assert set(ledger["lines"]) | {"year"} == set(LINE_NAMES)
    assert set(ledger["units"]) == set(LINE_NAMES)
    for name, values in ledger["lines"].items():
        assert len(values) == len(years), name
        assert all(v is None or math.isfinite(v) for v in values), name


@pytest.mark.parametrize("stem", DEMO_IDS)
def test_json_whole_field_is_per_ha_times_area(stem, json_runs):
    doc = json_runs[stem]
    area = doc["area_ha"]
    for name, per_ha in doc["figures_per_ha"].items():
        whole = doc["figures_whole_field"][name]
        if per_ha is None:
            assert whole is None
        elif FIGURE_BY_NAME[name].scales:
            assert whole == pytest.approx(per_ha * area, rel=1e-12), name
        else:
            assert whole == per_ha, name


def test_json_of_several_cases_is_a_list():
    res = run_cli(["run", "--json", *DEMO_CASES])
    assert res.code == 0
    doc = json.loads(res.out)
    assert isinstance(doc, list) and [d["case_hash"] for d in doc] == [load_case(p).hash for p in DEMO_CASES]


# --------------------------------------------------------------------------------------
# starter cases, presets, version
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("units", ["metric", "us_customary"])
@pytest.mark.parametrize("crop", preset_names())
def test_new_writes_a_case_that_checks(crop, units, tmp_path):
    target = tmp_path / f"starter_{crop}"
    res = run_cli(["new", target, "--crop", crop, "--units", units, "--currency", "USD"])
    _assert_clean(res)
    assert res.code == 0, res.err
    path = tmp_path / f"starter_{crop}.toml"
    text = path.read_text(encoding="utf-8")
    assert ("area_acre = " in text) == (units == "us_customary")
    assert ("area_ha = " in text) == (units == "metric")
    checked = run_cli(["check", path])
    _assert_clean(checked)
    assert checked.code == 0, checked.err
    case = load_case(path)
    assert case["crop.preset"] == crop and case.unit_system == units and case.currency == "USD"
    ran = run_cli(["run", "--brief", path])
    assert ran.code == 0, ran.err
    # refuses to overwrite without --force
    again = run_cli(["new", target, "--crop", crop, "--units", units])
    _assert_bad_input(again, path, [("", "exists; add --force")])
    assert path.read_text(encoding="utf-8") == text
    forced = run_cli(["new", path, "--crop", crop, "--units", units, "--force"])
    assert forced.code == 0


def test_presets_lists_every_preset():
    res = run_cli(["presets"])
    assert res.code == 0
    for name in preset_names():
        assert f"{name}: {tea.load_preset(name).title}" in res.out


def test_presets_verbose_lists_every_value_with_source():
    res = run_cli(["presets", "-v"])
    assert res.code == 0
    blocks = {}  # each preset's lines, under its name
    for line in res.out.splitlines():
        if line and not line.startswith(" ") and ":" in line:
            blocks[line.split(":", 1)[0]] = []
        elif blocks:
            blocks[list(blocks)[-1]].append(line)
    for name in preset_names():
        preset = tea.load_preset(name)
        for path, source in preset.sources.items():
            # each value written as a case file writes it: read back by the standard library's TOML parser
            line = next(t for t in blocks[name] if t.strip().startswith(f"{path} = ") and t.endswith(source))
            written = line.split(" = ", 1)[1][: -len(f"    # {source}")]
            assert tomllib.loads(f"x = {written}")["x"] == preset.values[path], line


def test_version_in_process():
    res = run_cli(["--version"])
    assert res.code == 0
    assert res.out.strip() == f"tea {tea.__version__}"


def test_version_is_the_installed_distributions():
    # the package's metadata (what pip and `pip show tea` report) takes its version from tea.__version__
    # (pyproject.toml, dynamic version): the two cannot drift apart
    from importlib.metadata import version

    assert version("tea") == tea.__version__


def test_version_as_a_subprocess(cli_subprocess):
    res = cli_subprocess(["--version"])
    assert res.code == 0, res.err
    assert res.out.strip() == f"tea {tea.__version__}"


def test_bad_input_as_a_subprocess(cli_subprocess, tmp_path):
    path = tmp_path / "missing.toml"
    res = cli_subprocess(["run", path])
    assert res.code == 2
    assert res.err.strip() == f"error: {path}: file not found"
    assert "Traceback" not in res.text


def test_options_that_shape_only_files_are_warned_when_no_file_is_asked_for(tmp_path):
    """`--sensitivity` and `--page-size` change only the files written: without one they would change
    nothing, and a user must not think they did (one warning line each); with a file, no warning."""
    case = CASES_DIR / "clay_corner_miscanthus.toml"
    res = run_cli(["run", case, "--brief", "--sensitivity", "--page-size", "Letter"])
    assert res.code == 0, res.text
    warned = [line for line in res.err.splitlines() if line.startswith("warning: --")]
    assert [w.split()[1] for w in warned] == ["--sensitivity", "--page-size"], res.err
    assert all("none is asked for" in w for w in warned)
    res = run_cli(["run", case, "--brief", "--sensitivity", "--xlsx", tmp_path / "a.xlsx"])
    assert res.code == 0 and "warning: --sensitivity" not in res.err, res.err


def test_a_file_that_is_no_case_is_named_for_what_it_is(tmp_path):
    """A PDF handed to `tea run` (its signature, ISO 32000-1 section 7.5.2: a file begins "%PDF-") is said to
    be one, not a case file in the wrong text encoding."""
    path = tmp_path / "summary.pdf"
    path.write_bytes(b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n1 0 obj\n")
    res = run_cli(["run", path])
    assert res.code == 2 and len(res.err_lines) == 1, res.text
    assert "not a case file: it is a PDF document" in res.err and "UTF-8" not in res.err


def test_an_unknown_section_lists_every_section_a_case_may_have(tmp_path):
    """The README's case-file reference documents these sections (common practice: an error lists the choices)."""
    path = tmp_path / "odd.toml"
    path.write_text('[bogus]\nx = 1\n', encoding="utf-8")
    res = run_cli(["check", path])
    assert res.code == 2
    listed = res.err[res.err.index("(sections: "):]
    for section in ("case", "operations", "sensitivity", "risk", "working_capital"):
        assert section in listed, section


def test_new_keeps_a_toml_ending_in_capitals(tmp_path):
    res = run_cli(["new", tmp_path / "field.TOML", "--crop", "willow"])
    assert res.code == 0, res.text
    assert (tmp_path / "field.TOML").exists() and not (tmp_path / "field.TOML.toml").exists()


def test_the_short_list_of_sources_names_references_not_fragments_of_findings():
    """`tea presets` lists each preset's sources by name: authors and year, a journal and volume, an
    organisation, or an attribution that stands for itself (common practice, from memory, derived, guides),
    never the opening words of what a source found (the project's rule for source notes)."""
    res = run_cli(["presets"])
    assert res.code == 0
    listed = [s for line in res.out.splitlines() if line.strip().startswith("sources: ")
              for s in line.split("sources: ", 1)[1].split("; ")]
    assert len(listed) > 20
    own = ("common practice", "from memory", "derived", "extension guides", "grower guides")
    for s in listed:
        assert s.startswith(own) or re.match(r'[A-Z"]|iForest ', s), s  # iForest: a journal's own spelling
        assert not re.match(r"[A-Z][a-z]? \d|within |published|a |year ", s), s
        assert not s.endswith("\u2026") and not re.match(r"(from memory|common practice) .", s), s
    # the references the coppice, poplar and switchgrass presets cite behind what they found, by name
    for named in ("Szczukowski et al. 2002", "Biomass and Bioenergy 25(6):571-580", "Guénon et al. 2016",
                  "Warncke et al. 2010", "iForest 5:224-229"):
        assert named in listed, named


def test_a_warning_is_one_line_in_a_log_and_wrapped_on_a_terminal():
    """A warning is one line where stderr is a file or pipe (a log, grep), and within the README's
    100 characters on a terminal, its further lines indented; the words are the same either way."""
    import io

    from tea.cli.common import warn
    from tea.core.texts import WIDTH

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    message = "case.toml: loan.profile: " + "repayments fall due in the years with no harvest " * 6
    log, screen = io.StringIO(), Terminal()
    warn(message, log)
    warn(message, screen)
    assert log.getvalue() == f"warning: {message}\n"
    lines = screen.getvalue().splitlines()
    assert len(lines) > 1 and all(len(line) <= WIDTH for line in lines)
    assert all(line.startswith("  ") for line in lines[1:])
    assert " ".join(line.strip() for line in lines) == f"warning: {message}".strip()


@pytest.mark.parametrize("what", ["case", "workbook", "field table"])
def test_an_input_the_machine_will_not_let_be_read_is_status_1(tmp_path, monkeypatch, what):
    """The README's exit statuses: 1 where the machine refused (no permission), as for an output; 2 for bad
    input. The refusal is made by the operating system's own error (PermissionError, errno 13), raised where
    the file is opened, since the tests may run with the rights to read anything."""
    import errno
    import pathlib
    import shutil
    import zipfile

    case = tmp_path / "case.toml"
    shutil.copy(CLAY, case)
    refused = PermissionError(errno.EACCES, "Permission denied")
    if what == "case":
        target, argv = case, ["check", case]
        read_bytes = pathlib.Path.read_bytes
        monkeypatch.setattr(pathlib.Path, "read_bytes",
                            lambda self: (_ for _ in ()).throw(refused) if self == target else read_bytes(self))
    elif what == "workbook":
        assert run_cli(["run", case, "--xlsx", tmp_path / "book.xlsx", "--brief"]).code == 0
        target, argv = tmp_path / "book.xlsx", ["check", tmp_path / "book.xlsx"]
        monkeypatch.setattr(zipfile, "ZipFile", lambda *a, **k: (_ for _ in ()).throw(refused))
    else:
        target = tmp_path / "fields.csv"
        target.write_text("field_id,area_ha\nA,3\n")
        argv = ["screen", target, "--case", case, "--out", tmp_path / "r.csv"]
        open_ = pathlib.Path.open
        monkeypatch.setattr(pathlib.Path, "open",
                            lambda self, *a, **k: (_ for _ in ()).throw(refused) if self == target else open_(self, *a, **k))
    res = run_cli(argv)
    assert res.code == 1, res.err
    assert res.err_lines == [f"error: {target}: cannot read the file: permission denied"], res.err
    assert not (tmp_path / "r.csv").exists()


@pytest.mark.parametrize("system", ["metric", "us_customary"])
def test_on_a_terminal_presets_and_explanations_keep_within_100_characters(system):
    # README: terminal lines stay within 100 characters. On a terminal the lists are fitted to that width (a
    # source goes on as comment lines); in a pipe each item stays one line, for grep. Both say the same words
    from tea.core.texts import WIDTH
    from tea.model import explain as X
    from tea.outputs.explain_text import explain_text
    from tea.outputs.terminal import presets_text

    def words(text: str) -> list[str]:  # a comment's further lines start with "#" again
        return [w for w in text.split() if w != "#"]

    for verbose in (False, True):
        fitted, whole = presets_text(verbose, system, width=WIDTH), presets_text(verbose, system)
        assert max(map(len, fitted.splitlines())) <= WIDTH
        assert max(map(len, whole.splitlines())) > WIDTH  # the check can fail: the pipe's lines are longer
        assert words(fitted) == words(whole)
    case = tea.load_case(CASES_DIR / "sandy_slope_switchgrass.toml")
    ex = X.explain(case, "npv")
    fitted, whole = explain_text(ex, case.currency, system, WIDTH), explain_text(ex, case.currency, system)
    assert max(map(len, fitted.splitlines())) <= WIDTH < max(map(len, whole.splitlines()))
    assert fitted.split() == whole.split()
