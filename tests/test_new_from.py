"""`tea new NAME --from CASE --crop CROP`: another crop on the same field and deal.

The field's and the deal's values come from the source case exactly; the crop's own from the new crop's
preset or starter values; the same crop gives the same case.
"""

from __future__ import annotations

import math

import pytest

import tea
from tea.inputs import schema, starter

from conftest import CASES_DIR, run_cli

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"
SANDY = CASES_DIR / "sandy_slope_switchgrass.toml"
MEADOW = CASES_DIR / "flood_meadow_willow.toml"

#: what the new case names afresh: not carried
RENAMED = {"case.name", "case.notes", "crop.name"}

#: the field's and the deal's keys a comparison of crops must keep
DEAL_KEYS = ("field.area_ha", "field.current_margin_per_ha", "field.current_n_kg_per_ha", "yield.site_factor",
             "harvest.buyer_moisture_max", "harvest.above_spec", "harvest.drying_per_t_water",
             "establishment.site_preparation_per_ha", "establishment.grant_per_ha",
             "nutrients.n_price_per_kg", "nutrients.k2o_price_per_kg", "nutrients.spreading_per_ha",
             "costs.haul_distance_km", "costs.haul_per_t_km", "costs.storage_per_t_dm", "costs.rent_per_ha",
             "costs.overheads_per_ha", "costs.insurance_per_ha", "revenue.price_per_t_dm", "revenue.price_per_gj",
             "carbon.credit_price_per_t_co2e", "carbon.credit_first_year", "carbon.verification_per_ha",
             "carbon.n2o_method", "finance.discount_rate", "finance.rate_basis", "finance.inflation",
             "loan.share_of_establishment", "loan.rate", "loan.term_years", "loan.grace_years",
             "loan.grace_interest", "loan.profile", "loan.sculpt_dscr", "site_climate.temperature_c")

#: the crop's own keys the new crop's values replace
CROP_KEYS = ("establishment.planting_units_per_ha", "establishment.planting_unit_price",
             "establishment.planting_operation_per_ha", "harvest.timing", "harvest.interval_years",
             "nutrients.n_late_winter_kg_per_t_dm", "costs.harvest_per_ha", "costs.baling_chipping_per_t_dm",
             "costs.removal_per_ha", "revenue.heating_value_gj_per_t_dm", "finance.stand_life_years")


def _new(tmp_path, source, crop, *extra) -> tuple[tea.Case, str]:
    target = tmp_path / f"{source.stem}_{crop}"
    res = run_cli(["new", target, "--from", source, "--crop", crop, *extra])
    assert res.code == 0, res.text
    path = target.with_suffix(".toml")
    return tea.load_case(path), path.read_text(encoding="utf-8")


def _same(a, b, rel: float) -> bool:
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k], rel) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_same(x, y, rel) for x, y in zip(a, b))
    if isinstance(a, float) or isinstance(b, float):
        return isinstance(a, (int, float)) and isinstance(b, (int, float)) and math.isclose(a, b, rel_tol=rel,
                                                                                           abs_tol=1e-300)
    return a == b


def _warned(case: tea.Case) -> set[str]:
    """A case's warnings without the file name they start with."""
    return {w.partition(": ")[2] for w in case.warnings}


def _line_before(text: str, key_line: str) -> str:
    lines = text.splitlines()
    return lines[[i for i, line in enumerate(lines) if line.startswith(key_line)][0] - 1]


@pytest.mark.parametrize("source, crop", [(CLAY, "miscanthus"), (SANDY, "switchgrass"), (MEADOW, "willow"),
                                          (CLAY, "rhizome_grass")])
def test_the_same_crop_on_the_same_field_is_the_same_case(tmp_path, source, crop):
    base = tea.load_case(source)
    new, _ = _new(tmp_path, source, crop)
    assert tea.summarise(new)["npv"] == pytest.approx(tea.summarise(base)["npv"], rel=1e-9)
    assert new.values.keys() == base.values.keys()
    differ = [p for p in base.values if p not in RENAMED and not _same(base[p], new[p], 1e-12)]
    assert not differ, [(p, base[p], new[p]) for p in differ]
    # (c) and it warns of nothing the source case does not
    assert _warned(new) == _warned(base)


def test_a_carried_value_keeps_every_digit(tmp_path):
    text = CLAY.read_text(encoding="utf-8")
    source = tmp_path / "digits.toml"
    source.write_text(text.replace("rate = 0.055\n", "rate = 0.0551234567891\n", 1)
                      .replace("haul_per_t_km = 0.12\n", "haul_per_t_km = 0.123456789012\n", 1), encoding="utf-8")
    base = tea.load_case(source)
    for crop in ("miscanthus", "willow"):
        new, _ = _new(tmp_path, source, crop)
        assert new["loan.rate"] == base["loan.rate"] == 0.0551234567891
        assert new["costs.haul_per_t_km"] == base["costs.haul_per_t_km"] == 0.123456789012


@pytest.mark.parametrize("source, crop", [(CLAY, "willow"), (MEADOW, "miscanthus"), (SANDY, "willow"),
                                          (CLAY, "switchgrass")])
def test_another_crop_keeps_the_field_and_deal_and_takes_its_own_values(tmp_path, source, crop):
    base = tea.load_case(source)
    new, text = _new(tmp_path, source, crop)
    preset = new.preset
    assert preset.name != base["crop.preset"]
    # the deal, exactly as the source gives it (a US case through its own units: to the last digit or two)
    rel = 0.0 if base.unit_system == "metric" else 1e-12
    for path in DEAL_KEYS:
        assert base.origin[path] in ("case", "default"), path
        assert _same(new[path], base[path], rel) if rel else new[path] == base[path], (path, base[path], new[path])
        assert new.origin[path] == base.origin[path], path
    assert new.price_basis == base.price_basis
    assert new.real_discount_rate == pytest.approx(base.real_discount_rate, rel=1e-12)
    # the crop's own: the new preset's, or the starter's example for the crop where the case must give one
    examples = dict(starter.EXAMPLES, **(starter.COPPICE_EXAMPLES if preset.kind == "coppice" else {}))
    if base.unit_system == "us_customary":
        examples.update(starter.US_EXAMPLES, **(starter.US_COPPICE_EXAMPLES if preset.kind == "coppice" else {}))
    examples["establishment.planting_unit_price"] = starter.UNIT_PRICE_EXAMPLE[preset.kind]
    for path in CROP_KEYS:
        assert starter.whose(path) == starter.CROP
        if path in preset.values:
            assert _same(new[path], preset.values[path], 1e-12) and new.origin[path] == "preset", path
        else:
            k = schema.BY_PATH[path]
            spelling = schema.units.spell(k.template, base.unit_system)
            factor = schema.units.spellings(k.template)[spelling]
            assert new[path] == pytest.approx(examples[path] * factor, rel=1e-12), path
            assert "[new crop: example]" in _line_before(text, f"{spelling} = ")
    # the file says which is which, beside the keys and at the top
    for path in DEAL_KEYS:
        if base.origin[path] == "case":
            assert "[source case]" in _line_before(text, f"{base.given_spelling[path]} = "), path
    head = text.split("\n[case]")[0]
    assert "establishment.planting_unit_price" in head.split("Invented for this crop")[1]
    assert "Not carried" in head and "[sensitivity]" in head
    # the case is marked as holding invented values until they are replaced
    assert new["case.demo"] is True
    # and it checks
    assert run_cli(["check", tmp_path / f"{source.stem}_{crop}.toml"]).code == 0


def test_the_buyers_terms_change_the_comparison(tmp_path):
    """The buyer's moisture limit and drying cost are the deal's: a wetter crop pays for them."""
    base = tea.load_case(CLAY)
    assert base["harvest.buyer_moisture_max"] is not None and base["harvest.drying_per_t_water"] > 0
    new, text = _new(tmp_path, CLAY, "willow")
    assert new["harvest.moisture_late_winter"] > base["harvest.buyer_moisture_max"]
    without = tea.load_text("\n".join(line for line in text.splitlines()
                                      if not line.startswith(("buyer_moisture_max =", "drying_per_t_water ="))),
                            source="no_spec.toml")
    assert without["harvest.buyer_moisture_max"] is None
    assert tea.summarise(new)["npv"] < tea.summarise(without)["npv"]


def test_a_us_case_keeps_its_spellings(tmp_path):
    base = tea.load_case(SANDY)
    for crop in ("switchgrass", "willow"):
        _, text = _new(tmp_path, SANDY, crop)
        for path, spelling in base.given_spelling.items():
            if path in RENAMED or path.startswith("crop.") or base.origin.get(path) != "case":
                continue
            if crop == "willow" and starter.whose(path) == starter.CROP:
                continue
            assert f"\n{spelling} = " in text, spelling
        assert "\narea_ha = " not in text and "\nhaul_per_t_km = " not in text
        if crop == "willow":  # the keys the header says are invented are named as the file spells them
            said = " ".join(line.lstrip("# ") for line in text.split("Invented for this crop, check them: ")[1]
                            .split("\n# Not carried")[0].splitlines())
            named = [name.strip(" .") for name in said.split(",")]
            assert named and all("_per_ha" not in n and "_per_t_dm" not in n for n in named), named
            for name in named:
                section, key = name.split(".", 1)
                assert f"\n{key} = " in text or f"\n# {key} = " in text, name


def test_every_key_is_the_fields_and_deals_or_the_crops():
    owners = {k.path: starter.whose(k.path) for k in schema.KEYS}
    assert set(owners.values()) == {starter.FIELD_AND_DEAL, starter.CROP}
    for path in ("harvest.buyer_moisture_max", "harvest.drying_per_t_water", "costs.haul_distance_km",
                 "costs.haul_per_t_km", "costs.rent_per_ha", "revenue.price_per_gj", "revenue.contract_years",
                 "loan.rate", "finance.discount_rate", "tax.rate", "establishment.grant_per_ha",
                 "carbon.credit_price_per_t_co2e", "field.current_use", "site_climate.rainfall_mm"):
        assert owners[path] == starter.FIELD_AND_DEAL, path
    for path in ("establishment.planting_unit_price", "establishment.planting_operation_per_ha",
                 "yield.mature_t_dm_per_ha", "harvest.interval_years", "harvest.timing",
                 "nutrients.k2o_autumn_kg_per_t_dm", "costs.baling_chipping_per_t_dm",
                 "carbon.crop_land_use", "finance.stand_life_years"):
        assert owners[path] == starter.CROP, path


def test_a_new_case_from_another_keeps_its_currency(tmp_path):
    """The carried prices are not converted: a different --currency is refused in one line (exit 2), and
    no file is written."""
    out = tmp_path / "other.toml"
    res = run_cli(["new", out, "--from", CASES_DIR / "clay_corner_miscanthus.toml", "--crop", "willow",
                   "--currency", "USD"])
    assert res.code == 2 and not out.exists()
    assert res.err.strip().endswith("so it keeps its currency") and len(res.err.strip().splitlines()) == 1


def test_another_crop_of_the_same_preset_is_not_the_same_crop(tmp_path):
    """One preset stands for several crops (a seed-sown grass: switchgrass, reed canary grass): naming the
    other one takes its own values, not the source crop's; naming the source's crop rebuilds the source."""
    source = CASES_DIR / "sandy_slope_switchgrass.toml"
    other, same = tmp_path / "canary.toml", tmp_path / "again.toml"
    assert run_cli(["new", other, "--from", source, "--crop", "reed canary grass"]).code == 0
    assert run_cli(["new", same, "--from", source, "--crop", "switchgrass"]).code == 0
    assert "The same crop as" not in other.read_text(encoding="utf-8")
    assert "The same crop as" in same.read_text(encoding="utf-8")
    base = tea.load_case(source)
    assert tea.summarise(tea.load_case(same))["npv"] == pytest.approx(tea.summarise(base)["npv"], rel=1e-9)
    assert tea.load_case(other)["crop.name"] == "reed canary grass"


def test_a_starter_in_a_currency_far_from_a_dollar_asks_for_every_money_value(tmp_path):
    """tea's invented examples are amounts in a currency of about a dollar; in yen (about 150 to the dollar,
    from memory) they would read as real prices 150 times too small. A JPY starter holds no number in its
    money keys, and `tea check` names each until it is given; in pounds sterling the examples stand."""
    assert run_cli(["new", tmp_path / "yen", "--crop", "willow", "--currency", "JPY"]).code == 0
    text = (tmp_path / "yen.toml").read_text(encoding="utf-8")
    assert 'price_per_t_dm = "your JPY value"' in text and "price_per_t_dm = 95" not in text
    res = run_cli(["check", tmp_path / "yen.toml"])
    assert res.code == 2
    named = {line.split(": ")[2] for line in res.err_lines if line.startswith("error:")}
    assert {"revenue.price_per_t_dm", "establishment.planting_unit_price", "costs.harvest_per_ha"} <= named
    assert all("expected a number [JPY/" in line for line in res.err_lines if line.startswith("error:"))
    assert run_cli(["new", tmp_path / "pound", "--crop", "willow", "--currency", "GBP"]).code == 0
    assert run_cli(["check", tmp_path / "pound.toml"]).code == 0
