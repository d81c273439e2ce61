"""Tests of `tea.carbon` against published tables and worked examples.

Status of each check value, beside it: "secondary" = verified in a published
reproduction of the source (named); "weak" = matches independent
transcriptions only; "from memory" = recalled without the document;
"hand calculation" = worked by hand from the named equation and inputs.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from tea.methods import carbon
from tea.inputs import published

DATA_FILE = Path(published.__file__).parent / "data" / "ipcc.toml"

# IPCC 2006 Vol.4 Ch.2 Table 2.3, default reference SOC stocks under native vegetation,
# 0-30 cm [t C/ha], as reproduced in the ILCD Handbook (2010) Annex B Table 10 (secondary).
# None = NA in the table. Wetland-soil column not reproduced.
TABLE_2_3 = {
    #                      HAC  LAC  sandy spodic volcanic
    "boreal": (68, None, 10, 117, 20),
    "cool_temperate_dry": (50, 33, 34, None, 20),
    "cool_temperate_moist": (95, 85, 71, 115, 130),
    "warm_temperate_dry": (38, 24, 19, None, 70),
    "warm_temperate_moist": (88, 63, 34, None, 80),
    "tropical_dry": (38, 35, 31, None, 50),
    "tropical_moist": (65, 47, 39, None, 70),
    "tropical_wet": (44, 60, 66, None, 130),
}
TABLE_2_3_SOILS = ("high_activity_clay", "low_activity_clay", "sandy", "spodic", "volcanic")

TABLE_2_3_CELLS = [
    (climate, soil, value)
    for climate, row in TABLE_2_3.items()
    for soil, value in zip(TABLE_2_3_SOILS, row)
]


# --------------------------------------------------------------------------------------
# Reference stocks, Table 2.3
# --------------------------------------------------------------------------------------
class TestSocRef:
    def test_names_cover_table_2_3(self):
        # IPCC 2006 Table 2.3 climate rows and mineral-soil columns (via ILCD Table 10)
        assert published.CLIMATES == tuple(TABLE_2_3)
        assert published.SOILS == TABLE_2_3_SOILS

    @pytest.mark.parametrize("climate, soil, expected", TABLE_2_3_CELLS)
    def test_every_cell_equals_table_2_3(self, climate, soil, expected):
        # IPCC 2006 Vol.4 Ch.2 Table 2.3 (via ILCD Handbook 2010 Annex B Table 10), secondary
        if expected is None:
            with pytest.raises(KeyError, match="soils with a value there"):
                published.soc_ref_t_c_per_ha(climate, soil)
        else:
            assert published.soc_ref_t_c_per_ha(climate, soil) == float(expected)

    def test_data_file_has_no_cell_outside_table_2_3(self):
        # IPCC 2006 Table 2.3 (via ILCD Table 10): the data file holds exactly its non-NA cells
        cells = tomllib.loads(DATA_FILE.read_text(encoding="utf-8"))["soc_ref"]["cells"]
        stored = {(c, s) for c, row in cells.items() for s in row}
        expected = {(c, s) for c, s, v in TABLE_2_3_CELLS if v is not None}
        assert stored == expected

    def test_na_cell_lists_existing_soils(self):
        # Table 2.3: spodic is NA in warm temperate moist; the message lists the soils that exist
        with pytest.raises(KeyError) as info:
            published.soc_ref_t_c_per_ha("warm_temperate_moist", "spodic")
        message = str(info.value)
        for soil in ("high_activity_clay", "low_activity_clay", "sandy", "volcanic"):
            assert soil in message

    def test_unknown_climate_lists_valid_names(self):
        with pytest.raises(KeyError) as info:
            published.soc_ref_t_c_per_ha("mediterranean", "sandy")
        message = str(info.value)
        assert "mediterranean" in message
        for climate in TABLE_2_3:
            assert climate in message

    def test_unknown_soil_lists_valid_names(self):
        with pytest.raises(KeyError) as info:
            published.soc_ref_t_c_per_ha("boreal", "peat")
        for soil in TABLE_2_3_SOILS:
            assert soil in str(info.value)


# --------------------------------------------------------------------------------------
# Stock-change factors, Tables 5.5 and 6.2
# --------------------------------------------------------------------------------------
# One climate per column of the tables: temperate/boreal dry and moist, tropical dry and moist.
TD, TM, RD, RM = "cool_temperate_dry", "cool_temperate_moist", "tropical_dry", "tropical_moist"

FACTOR_CASES = [
    # IPCC 2006 Vol.4 Ch.5 Table 5.5 via ILCD Handbook 2010 Annex B Tables 11-12 (secondary):
    # F_LU long-term cultivated 0.80/0.69 temperate, 0.58/0.48 tropical; F_MG full till and
    # F_I medium 1.00.
    ("cropland_full_till", TD, (0.80, 1.00, 1.00)),
    ("cropland_full_till", TM, (0.69, 1.00, 1.00)),
    ("cropland_full_till", RD, (0.58, 1.00, 1.00)),
    ("cropland_full_till", RM, (0.48, 1.00, 1.00)),
    # Table 5.5 (via ILCD): F_MG reduced till 1.02/1.08 temperate, 1.09/1.15 tropical
    ("cropland_reduced_till", TD, (0.80, 1.02, 1.00)),
    ("cropland_reduced_till", TM, (0.69, 1.08, 1.00)),
    ("cropland_reduced_till", RD, (0.58, 1.09, 1.00)),
    ("cropland_reduced_till", RM, (0.48, 1.15, 1.00)),
    # Table 5.5 (via ILCD): F_MG no-till 1.10/1.15 temperate, 1.17/1.22 tropical
    ("cropland_no_till", TD, (0.80, 1.10, 1.00)),
    ("cropland_no_till", TM, (0.69, 1.15, 1.00)),
    ("cropland_no_till", RD, (0.58, 1.17, 1.00)),
    ("cropland_no_till", RM, (0.48, 1.22, 1.00)),
    # Table 5.5 (via ILCD): F_I low 0.95 dry / 0.92 moist, all temperature regimes
    ("cropland_low_input", TD, (0.80, 1.00, 0.95)),
    ("cropland_low_input", TM, (0.69, 1.00, 0.92)),
    ("cropland_low_input", RD, (0.58, 1.00, 0.95)),
    ("cropland_low_input", RM, (0.48, 1.00, 0.92)),
    # Table 5.5 (via ILCD): F_LU set-aside 0.93 dry / 0.82 moist; F_MG, F_I = 1 (not cultivated)
    ("set_aside", TD, (0.93, 1.00, 1.00)),
    ("set_aside", TM, (0.82, 1.00, 1.00)),
    ("set_aside", RD, (0.93, 1.00, 1.00)),
    ("set_aside", RM, (0.82, 1.00, 1.00)),
    # IPCC 2006 Vol.4 Ch.6: cropland converted to (perennial) grass takes the Table 5.5 set-aside factors above
    ("perennial_grass", TD, (0.93, 1.00, 1.00)),
    ("perennial_grass", TM, (0.82, 1.00, 1.00)),
    # Table 5.5 (via ILCD): F_LU perennial/tree crop 1.00; ILCD note: F_MG, F_I = 1
    ("perennial_crop", TD, (1.00, 1.00, 1.00)),
    ("perennial_crop", RM, (1.00, 1.00, 1.00)),
    # IPCC 2006 Vol.4 Ch.6 Table 6.2: F_LU 1.00 (from memory), F_MG nominal 1.00 (weak),
    # F_I medium 1.00 (from memory)
    ("grassland", TM, (1.00, 1.00, 1.00)),
    ("grassland", RD, (1.00, 1.00, 1.00)),
    # Table 6.2: F_MG moderately degraded, temperate 0.95 (from memory), tropical 0.97 (weak)
    ("grassland_degraded", TD, (1.00, 0.95, 1.00)),
    ("grassland_degraded", RM, (1.00, 0.97, 1.00)),
    # Table 6.2: F_MG improved, temperate 1.14 (from memory), tropical 1.17 (weak)
    ("grassland_improved", TM, (1.00, 1.14, 1.00)),
    ("grassland_improved", RD, (1.00, 1.17, 1.00)),
]


class TestLandUseFactors:
    def test_land_use_names(self):
        assert set(published.LAND_USES) == {case[0] for case in FACTOR_CASES}

    @pytest.mark.parametrize("land_use, climate, expected", FACTOR_CASES)
    def test_factors_match_tables(self, land_use, climate, expected):
        assert published.land_use_factors(land_use, climate) == pytest.approx(expected, abs=1e-12)

    def test_tropical_wet_uses_moist_wet_column(self):
        # Table 5.5 (via ILCD): tropical moist/wet column, F_LU 0.48, F_MG no-till 1.22
        assert published.land_use_factors("cropland_no_till", "tropical_wet") == pytest.approx(
            (0.48, 1.22, 1.00)
        )

    def test_warm_temperate_dry_uses_temperate_dry_column(self):
        # Table 5.5 (via ILCD): temperate/boreal dry column, F_LU 0.80, F_MG reduced till 1.02
        assert published.land_use_factors("cropland_reduced_till", "warm_temperate_dry") == (
            pytest.approx((0.80, 1.02, 1.00))
        )

    def test_boreal_uses_moist_column(self):
        # documented choice of tea.carbon.climate_regimes (Table 2.3 has one boreal row):
        # Table 5.5 temperate/boreal moist F_LU 0.69 (via ILCD)
        assert published.climate_regimes("boreal") == ("temperate_boreal", "moist_wet")
        assert published.land_use_factors("cropland_full_till", "boreal")[0] == pytest.approx(0.69)

    def test_unknown_land_use_lists_valid_names(self):
        with pytest.raises(KeyError) as info:
            published.land_use_factors("orchard", TM)
        for name in published.LAND_USES:
            assert name in str(info.value)

    def test_unknown_climate_lists_valid_names(self):
        with pytest.raises(KeyError) as info:
            published.land_use_factors("perennial_crop", "arctic")
        for climate in TABLE_2_3:
            assert climate in str(info.value)


# --------------------------------------------------------------------------------------
# Equilibrium stocks and the worked checks, Eq. 2.25
# --------------------------------------------------------------------------------------
def _equilibrium(land_use, climate, soil="high_activity_clay"):
    return carbon.soc_equilibrium(
        published.soc_ref_t_c_per_ha(climate, soil), *published.land_use_factors(land_use, climate)
    )


class TestSocEquilibrium:
    # Worked checks: IPCC 2006 Vol.4 Eq. 2.25 with Table 2.3 and Table 5.5 (via ILCD Handbook
    # 2010 Annex B Tables 10-12), secondary; printed to 2 decimals, so abs tolerance 0.005.
    @pytest.mark.parametrize(
        "land_use, climate, expected",
        [
            ("cropland_full_till", "cool_temperate_moist", 65.55),  # 95 x 0.69
            ("perennial_crop", "cool_temperate_moist", 95.0),  # 95 x 1.00
            ("set_aside", "cool_temperate_moist", 77.9),  # 95 x 0.82
            ("cropland_full_till", "warm_temperate_moist", 60.72),  # 88 x 0.69
        ],
    )
    def test_worked_checks(self, land_use, climate, expected):
        assert _equilibrium(land_use, climate) == pytest.approx(expected, abs=0.005)

    def test_arable_to_perennial_change_cool_temperate_moist(self):
        # Eq. 2.25 worked check (via ILCD), secondary: +29.45 t C/ha over 20 yr
        # = 1.4725 t C/ha/yr = 5.399 t CO2/ha/yr (x 44/12)
        start = _equilibrium("cropland_full_till", "cool_temperate_moist")
        target = _equilibrium("perennial_crop", "cool_temperate_moist")
        assert target - start == pytest.approx(29.45, abs=0.005)
        path = carbon.soc_path_stock_change(start, target, np.arange(0, 31))
        annual = np.diff(path)
        assert_allclose(annual[:20], 1.4725, atol=5e-5)
        assert_allclose(annual[20:], 0.0, atol=1e-12)
        assert annual[0] * carbon.C_TO_CO2 == pytest.approx(5.399, abs=5e-4)

    def test_arable_to_perennial_change_warm_temperate_moist(self):
        # Eq. 2.25 worked check (via ILCD), secondary: 88 - 60.72 = +27.28 t C/ha, 1.364 /yr
        start = _equilibrium("cropland_full_till", "warm_temperate_moist")
        target = _equilibrium("perennial_crop", "warm_temperate_moist")
        assert target - start == pytest.approx(27.28, abs=0.005)
        path = carbon.soc_path_stock_change(start, target, np.arange(0, 21))
        assert_allclose(np.diff(path), 1.364, atol=5e-4)

    @pytest.mark.parametrize("as_type", [float, list, np.array])
    def test_scalar_list_array(self, as_type):
        # 95 x 0.69, 88 x 0.69 (worked checks above)
        soc_ref = 95.0 if as_type is float else as_type([95.0, 88.0])
        got = carbon.soc_equilibrium(soc_ref, 0.69, 1.0, 1.0)
        expected = 65.55 if as_type is float else [65.55, 60.72]
        assert_allclose(got, expected, atol=0.005)
        if as_type is float:
            assert isinstance(got, float)

    def test_negative_factor_rejected(self):
        with pytest.raises(ValueError, match="f_lu"):
            carbon.soc_equilibrium(95.0, -0.69, 1.0, 1.0)


# --------------------------------------------------------------------------------------
# Stock paths
# --------------------------------------------------------------------------------------
class TestSocPathStockChange:
    def test_linear_path_values(self):
        # hand calculation from Eq. 2.25, D = 20 yr, with the worked-check stocks
        # 65.55 -> 95.0: t=0 65.55; t=10 65.55 + 29.45 x 10/20 = 80.275; t=20 95.0; t=25 95.0
        got = carbon.soc_path_stock_change(65.55, 95.0, [0, 10, 20, 25])
        assert_allclose(got, [65.55, 80.275, 95.0, 95.0], atol=1e-9)

    def test_transition_years_argument(self):
        # hand calculation from Eq. 2.25 with D = 10: 65.55 + 29.45 x 5/10 = 80.275 at t = 5
        got = carbon.soc_path_stock_change(65.55, 95.0, [0, 5, 10, 20], transition_years=10)
        assert_allclose(got, [65.55, 80.275, 95.0, 95.0], atol=1e-9)

    def test_broadcast_cases_by_years(self):
        # each row equals the scalar call; hand calculation of row 2 (loss, D = 10):
        # 80 -> 60 over 10 yr: t=5 70.0
        starts = np.array([[65.55], [80.0], [60.72]])
        targets = np.array([[95.0], [60.0], [88.0]])
        d = np.array([[20], [10], [20]])
        years = np.arange(0, 26)[np.newaxis, :]
        got = carbon.soc_path_stock_change(starts, targets, years, d)
        assert got.shape == (3, 26)
        for i in range(3):
            row = carbon.soc_path_stock_change(
                float(starts[i, 0]), float(targets[i, 0]), np.arange(0, 26), float(d[i, 0])
            )
            assert_allclose(got[i], row)
        assert got[1, 5] == pytest.approx(70.0)
        assert got[2, 20] == pytest.approx(88.0)

    @pytest.mark.parametrize("bad", [0, -5, [[20], [0]]])
    def test_bad_transition_years(self, bad):
        with pytest.raises(ValueError, match="transition_years"):
            carbon.soc_path_stock_change(65.55, 95.0, np.arange(5), bad)


class TestSocPathFirstOrder:
    # identities of SOC(t) = target + (start - target) exp(-k t) (hand calculation)
    def test_starts_at_start(self):
        assert carbon.soc_path_first_order(65.55, 95.0, 0, 0.05) == pytest.approx(65.55)

    def test_tends_to_target(self):
        # exp(-0.05 x 1000) ~ 2e-22: at t = 1000 yr the stock equals the target
        assert carbon.soc_path_first_order(65.55, 95.0, 1000, 0.05) == pytest.approx(95.0)

    @pytest.mark.parametrize("k", [0.02, 0.05, 0.2])
    def test_half_life(self, k):
        # after ln 2 / k years half the change is done: (65.55 + 95.0) / 2 = 80.275
        got = carbon.soc_path_first_order(65.55, 95.0, math.log(2) / k, k)
        assert got == pytest.approx(80.275, abs=1e-9)

    def test_zero_rate_keeps_start(self):
        got = carbon.soc_path_first_order(65.55, 95.0, np.arange(10), 0.0)
        assert_allclose(got, 65.55)

    def test_broadcast_cases_by_years(self):
        k = np.array([[0.05], [0.1]])
        years = np.arange(0, 50)[np.newaxis, :]
        starts = np.array([[65.55], [95.0]])
        targets = np.array([[95.0], [65.55]])
        got = carbon.soc_path_first_order(starts, targets, years, k)
        assert got.shape == (2, 50)
        # row 0 rises, row 1 falls, monotonically
        assert np.all(np.diff(got[0]) > 0)
        assert np.all(np.diff(got[1]) < 0)
        # half-life of row 1: ln 2 / 0.1 = 6.93 yr, so t = 6 above and t = 7 below the midpoint
        assert got[1, 6] > 80.275 > got[1, 7]

    def test_negative_rate_rejected(self):
        with pytest.raises(ValueError, match="rate_per_year"):
            carbon.soc_path_first_order(65.55, 95.0, np.arange(5), -0.1)


class TestReversion:
    def test_loss_equals_gain_of_worked_check(self):
        # Eq. 2.25 worked check (via ILCD), secondary: a perennial stand at 95.0 t C/ha going
        # back to arable (65.55) gives back the 29.45 t C/ha it gained
        loss = carbon.soc_reversion_loss_t_c_per_ha(95.0, 65.55)
        assert loss == pytest.approx(29.45, abs=0.005)

    def test_no_loss_when_below_former_equilibrium(self):
        # max(0, 60 - 65.55) = 0 (definition)
        assert carbon.soc_reversion_loss_t_c_per_ha(60.0, 65.55) == 0.0

    def test_path_back_to_former_equilibrium(self):
        # hand calculation from Eq. 2.25, D = 20: 95.0 - 29.45 x 10/20 = 80.275 at t = 10,
        # 65.55 at t >= 20
        got = carbon.soc_after_reversion(95.0, 65.55, [0, 10, 20, 30])
        assert_allclose(got, [95.0, 80.275, 65.55, 65.55], atol=1e-9)

    def test_loss_matches_path_over_transition(self):
        # the loss is the drop of the reversion path over the transition period (both Eq. 2.25)
        at_removal = np.array([[95.0], [70.0], [60.0]])
        former = np.array([[65.55], [65.55], [65.55]])
        path = carbon.soc_after_reversion(at_removal, former, np.arange(0, 21)[np.newaxis, :])
        drop = path[:, 0] - path[:, -1]
        loss = carbon.soc_reversion_loss_t_c_per_ha(at_removal, former)[:, 0]
        assert loss.shape == (3,)
        assert_allclose(loss, np.maximum(drop, 0.0))
        assert_allclose(loss, [29.45, 4.45, 0.0], atol=1e-9)  # 95-65.55, 70-65.55, none


# --------------------------------------------------------------------------------------
# N2O from synthetic fertiliser, Ch. 11
# --------------------------------------------------------------------------------------
def _n2o_total_kg_n2o_n(n_kg, factors):
    direct = carbon.n2o_direct_kg_n2o_n(n_kg, factors["ef1"])
    indirect = carbon.n2o_indirect_kg_n2o_n(
        n_kg, factors["frac_gasf"], factors["ef4"], factors["frac_leach"], factors["ef5"]
    )
    return direct, indirect


class TestN2O:
    # Check of 100 kg synthetic N in a wet climate: IPCC 2006 Vol.4 Ch.11 Eq. 11.1, 11.9,
    # 11.10 with Tables 11.1 and 11.3; 2019 Refinement Tables 11.1 and 11.3. The factor
    # values are weak (status C: several independent transcriptions, not read in the tables).
    # Printed precision: N2O-N 3-4 decimals, N2O 4 decimals, CO2e 1 decimal; tolerances
    # are half a unit of the last printed digit.

    def test_2006_wet(self):
        factors = published.n2o_factors("2006", wet=True)
        direct, indirect = _n2o_total_kg_n2o_n(100.0, factors)
        assert direct == pytest.approx(1.0, abs=5e-4)  # 100 x 0.010
        # 100 x 0.10 x 0.010 + 100 x 0.30 x 0.0075
        assert indirect == pytest.approx(0.10 + 0.225, abs=5e-4)
        total = direct + indirect
        assert total == pytest.approx(1.325, abs=5e-4)
        n2o = carbon.n2o_n_to_n2o(total)
        assert n2o == pytest.approx(2.0821, abs=5e-5)
        for report, expected in (("AR4", 620.5), ("AR5", 551.8), ("AR6", 568.4)):
            assert n2o * published.gwp("n2o", report) == pytest.approx(expected, abs=0.05)

    def test_2019_wet_aggregated(self):
        factors = published.n2o_factors("2019", wet=True, disaggregated=False)
        direct, indirect = _n2o_total_kg_n2o_n(100.0, factors)
        total = direct + indirect
        assert total == pytest.approx(1.374, abs=5e-4)  # 1.0 + 0.11 + 0.264
        n2o = carbon.n2o_n_to_n2o(total)
        assert n2o == pytest.approx(2.1591, abs=5e-5)
        assert n2o * published.gwp("n2o", "AR6") == pytest.approx(589.4, abs=0.05)

    def test_2019_wet_disaggregated(self):
        factors = published.n2o_factors("2019", wet=True)  # disaggregated is the default
        assert factors["ef1"] == pytest.approx(0.016)  # 2019 Table 11.1, wet, synthetic (weak)
        assert factors["ef4"] == pytest.approx(0.014)  # 2019 Table 11.3, wet (weak)
        direct, indirect = _n2o_total_kg_n2o_n(100.0, factors)
        total = direct + indirect
        assert total == pytest.approx(2.018, abs=5e-4)  # 1.6 + 0.154 + 0.264
        n2o = carbon.n2o_n_to_n2o(total)
        assert n2o == pytest.approx(3.1711, abs=5e-5)
        assert n2o * published.gwp("n2o", "AR6") == pytest.approx(865.7, abs=0.05)

    @pytest.mark.parametrize(
        "version, disaggregated, expected_total",
        [
            # hand calculation, 100 kg N, dry climate, Frac_LEACH = 0 (Table 11.3, weak):
            ("2006", True, 1.0 + 0.10),  # 100x0.010 + 100x0.10x0.010
            ("2019", False, 1.0 + 0.11),  # 100x0.010 + 100x0.11x0.010
            ("2019", True, 0.5 + 0.055),  # 100x0.005 + 100x0.11x0.005 (dry EF1, EF4)
        ],
    )
    def test_dry_climate_has_no_leaching_term(self, version, disaggregated, expected_total):
        factors = published.n2o_factors(version, wet=False, disaggregated=disaggregated)
        assert factors["frac_leach"] == 0.0
        direct, indirect = _n2o_total_kg_n2o_n(100.0, factors)
        volatilisation_only = carbon.n2o_indirect_kg_n2o_n(
            100.0, factors["frac_gasf"], factors["ef4"], 0.0, factors["ef5"]
        )
        assert indirect == pytest.approx(volatilisation_only, abs=1e-12)
        assert direct + indirect == pytest.approx(expected_total, abs=1e-9)

    def test_factor_keys_and_version_as_int(self):
        factors = published.n2o_factors(2006, wet=True)
        assert set(factors) == {"ef1", "frac_gasf", "frac_leach", "ef4", "ef5"}
        # IPCC 2006 Tables 11.1 / 11.3 (weak)
        assert factors == pytest.approx(
            {"ef1": 0.010, "frac_gasf": 0.10, "frac_leach": 0.30, "ef4": 0.010, "ef5": 0.0075}
        )

    def test_2019_factor_values(self):
        # 2019 Refinement Tables 11.1 / 11.3 (weak; EF5 0.011 secondary)
        assert published.n2o_factors("2019", wet=True, disaggregated=False) == pytest.approx(
            {"ef1": 0.010, "frac_gasf": 0.11, "frac_leach": 0.24, "ef4": 0.010, "ef5": 0.011}
        )
        assert published.n2o_factors("2019", wet=False) == pytest.approx(
            {"ef1": 0.005, "frac_gasf": 0.11, "frac_leach": 0.0, "ef4": 0.005, "ef5": 0.011}
        )

    def test_unknown_version_lists_valid(self):
        with pytest.raises(KeyError) as info:
            published.n2o_factors("2010", wet=True)
        assert "2006" in str(info.value) and "2019" in str(info.value)

    def test_wet_must_be_bool(self):
        with pytest.raises(TypeError, match="wet"):
            published.n2o_factors("2006", wet="dry")

    def test_broadcast_cases_by_years(self):
        # (cases, years) of N applied against per-case factors; each cell = N x factor
        # (Eq. 11.1 and 11.9 + 11.10, linear in F_SN)
        n = np.array([[0.0, 100.0, 50.0], [100.0, 0.0, 200.0]])
        ef1 = np.array([[0.010], [0.016]])
        direct = carbon.n2o_direct_kg_n2o_n(n, ef1)
        assert direct.shape == (2, 3)
        assert_allclose(direct, [[0.0, 1.0, 0.5], [1.6, 0.0, 3.2]])
        indirect = carbon.n2o_indirect_kg_n2o_n(
            n, np.array([[0.10], [0.11]]), np.array([[0.010], [0.014]]),
            np.array([[0.30], [0.24]]), np.array([[0.0075], [0.011]]),
        )
        # 100 kg N: 0.325 (2006 wet), 0.418 (2019 wet disaggregated: 0.154 + 0.264)
        assert_allclose(indirect, [[0.0, 0.325, 0.1625], [0.418, 0.0, 0.836]], atol=1e-12)
        assert_allclose(carbon.n2o_n_to_n2o(direct), direct * 44 / 28)

    def test_negative_n_rejected(self):
        with pytest.raises(ValueError, match="n_applied_kg"):
            carbon.n2o_direct_kg_n2o_n(-1.0, 0.01)

    def test_fraction_out_of_range_rejected(self):
        with pytest.raises(ValueError, match="frac_leach"):
            carbon.n2o_indirect_kg_n2o_n(100.0, 0.1, 0.01, 30.0, 0.0075)


# --------------------------------------------------------------------------------------
# Constants and GWP100
# --------------------------------------------------------------------------------------
class TestConstants:
    def test_c_to_co2(self):
        # stoichiometry 44/12 = 3.6667 (ILCD Handbook 2010 Annex B Formula 6, secondary)
        assert carbon.C_TO_CO2 == pytest.approx(3.6667, abs=5e-5)

    def test_n2o_n_to_n2o(self):
        # stoichiometry 44/28 = 1.5714 (standard, IPCC 2006 Vol.4 Ch.11)
        assert carbon.N2O_N_TO_N2O == pytest.approx(1.5714, abs=5e-5)
        assert carbon.n2o_n_to_n2o(28.0) == pytest.approx(44.0)


GWP_TABLE = [
    # IPCC AR4 / AR5 (without climate-carbon feedback) / AR6 GWP100; verified in the
    # PyPI package globalwarmingpotentials 0.13.2; AR4 also 40 CFR 98 Table A-1
    ("n2o", "AR4", 298.0),
    ("n2o", "AR5", 265.0),
    ("n2o", "AR6", 273.0),
    ("ch4", "AR4", 25.0),
    ("ch4", "AR5", 28.0),
    ("ch4", "AR6", 27.9),  # AR6 Table 7.SM.7 (fossil/non-fossil split not used)
    ("co2", "AR6", 1.0),  # reference gas, by definition
]


class TestGwp:
    @pytest.mark.parametrize("gas, report, expected", GWP_TABLE)
    def test_values(self, gas, report, expected):
        assert published.gwp(gas, report) == expected

    def test_case_insensitive(self):
        assert published.gwp("N2O", "ar5") == published.gwp("n2o", "AR5")

    @pytest.mark.parametrize("gas", ["n2o", "ch4"])
    @pytest.mark.parametrize("report", ["AR4", "AR5", "AR6"])
    def test_against_globalwarmingpotentials(self, gas, report):
        # outside check: PyPI package globalwarmingpotentials (0.13.2 checked), its
        # "<report>GWP100" tables (AR5 without climate-carbon feedback)
        gwp_pkg = pytest.importorskip(
            "globalwarmingpotentials",
            reason="PyPI package globalwarmingpotentials is not installed "
            "(pip install globalwarmingpotentials) - outside GWP check skipped",
        )
        expected = gwp_pkg.data[f"{report}GWP100"][gas.upper()]
        assert published.gwp(gas, report) == pytest.approx(expected, abs=1e-9)

    def test_unknown_gas_and_report_list_valid(self):
        with pytest.raises(KeyError) as info:
            published.gwp("sf6", "AR6")
        assert all(g in str(info.value) for g in ("co2", "ch4", "n2o"))
        with pytest.raises(KeyError) as info:
            published.gwp("n2o", "SAR")
        assert all(r in str(info.value) for r in ("AR4", "AR5", "AR6"))


# --------------------------------------------------------------------------------------
# Default input factors
# --------------------------------------------------------------------------------------
class TestDefaultInputFactors:
    def test_diesel_within_1_percent_of_40_cfr_98(self):
        # 40 CFR 98 Subpart C Table C-1, distillate fuel oil No. 2: 0.138 mmBtu/gal x
        # 73.96 kg CO2/mmBtu = 10.21 kg/gal = 2.696 kg CO2/L (verified). The IPCC default uses
        # net calorific values and another density, so agreement within 1 % is expected.
        diesel = published.default_input_factors()["diesel_kg_co2_per_l"]
        assert diesel["value"] == pytest.approx(2.696, rel=0.01)
        assert diesel["check_value"] == 2.696

    def test_diesel_derivation(self):
        # IPCC 2006 Vol.2 Ch.1 Tables 1.4 and 1.2: 74,100 kg CO2/TJ x 43.0 TJ/Gg = 3.186 kg/kg,
        # x 0.84 kg/L = 2.676 kg/L (all from memory); printed to 3 decimals
        diesel = published.default_input_factors()["diesel_kg_co2_per_l"]
        per_kg = diesel["value"] / diesel["density_kg_per_l"]
        assert per_kg == pytest.approx(3.186, abs=5e-4)
        assert diesel["value"] == pytest.approx(2.676, abs=5e-4)

    def test_every_factor_has_source_unit_and_status(self):
        factors = published.default_input_factors()
        assert set(factors) == {
            "diesel_kg_co2_per_l",
            "fertiliser_n_kg_co2e_per_kg_n",
            "fertiliser_p2o5_kg_co2e_per_kg_p2o5",
            "fertiliser_k2o_kg_co2e_per_kg_k2o",
            "road_haulage_kg_co2e_per_t_km",
        }
        for name, entry in factors.items():
            assert entry["value"] > 0, name
            assert entry["unit"], name
            # none of these defaults was read in its source document
            assert entry["status"] == "from memory", name
            assert "from memory" in entry["source"], name

    def test_fertiliser_n_inside_typical_range(self):
        # typical European manufacture values 3.5-6 kg CO2e/kg N (from memory)
        n = published.default_input_factors()["fertiliser_n_kg_co2e_per_kg_n"]
        assert 3.5 <= n["value"] <= 6.0

    def test_returns_a_copy(self):
        first = published.default_input_factors()
        first["diesel_kg_co2_per_l"]["value"] = 0.0
        assert published.default_input_factors()["diesel_kg_co2_per_l"]["value"] > 2.0


# --------------------------------------------------------------------------------------
# The data file itself
# --------------------------------------------------------------------------------------
def _entries_needing_source(data):
    """Yield (path, table) for every table that holds coefficient values."""
    yield "soc_ref", data["soc_ref"]
    for factor, levels in data["stock_change_factors"].items():
        for level, table in levels.items():
            yield f"stock_change_factors.{factor}.{level}", table
    for version, factors in data["n2o"].items():
        for name, table in factors.items():
            yield f"n2o.{version}.{name}", table
    for gas, table in data["gwp100"].items():
        yield f"gwp100.{gas}", table
    for name, table in data["inputs"].items():
        yield f"inputs.{name}", table


class TestDataFile:
    def test_every_entry_has_a_source(self):
        data = tomllib.loads(DATA_FILE.read_text(encoding="utf-8"))
        for path, table in _entries_needing_source(data):
            assert isinstance(table.get("source"), str) and table["source"].strip(), path

    @pytest.mark.parametrize(
        "path",
        [
            # values recalled without the source document at hand must say "from memory"
            "stock_change_factors.f_lu.grassland",
            "stock_change_factors.f_mg.grassland_moderately_degraded",
            "stock_change_factors.f_mg.grassland_improved",
            "stock_change_factors.f_i.grassland_medium",
            "inputs.diesel_kg_co2_per_l",
        ],
    )
    def test_from_memory_values_are_marked(self, path):
        data = tomllib.loads(DATA_FILE.read_text(encoding="utf-8"))
        table = data
        for key in path.split("."):
            table = table[key]
        assert "from memory" in table["source"]
