"""The lender-grade workbook: every computed cell a live spreadsheet formula.

:func:`write_workbook` writes one case, :func:`write_portfolio` several cases
with a side-by-side comparison sheet, and :func:`read_case_mapping` reads the
inputs sheet of such a workbook (as an advisor edited it) back into a case
mapping that :func:`tea.inputs.case.load_mapping` validates like a TOML file.

The workbook is the project's one deliberate second implementation of the
model. Each ledger line of :data:`tea.model.ledger.LINES` has its spreadsheet
formula in :data:`LEDGER_FORMULAS` below, beside the numpy expression in
:func:`tea.model.ledger.compute`; the recalculation tests (LibreOffice Calc,
headless) keep the two identical cell by cell.

Sheets
------
* **Inputs**: every resolved case input in the case's own units, with its unit,
  origin and source note; a factor and a formula convert it to the canonical
  unit, and a workbook-level defined name (``yield_mature_t_dm_per_ha``) is
  bound to the canonical cell. Below them, the model parameters derived from
  the inputs (formulas, names ``m_...``).
* **Ledger**: one row per year 0..60 (the longest stand life the schema
  allows); rows after the stand life evaluate to 0, so the stand life can be
  edited. Check columns to the right carry the sign and payback workings.
* **Results**, **Finance** (loan schedule with PMT/IPMT/PPMT, DSCR),
  **Carbon** (SOC path, GHG balance, published N2O and GWP coefficients),
  **Notes** (version, case hash, methods, cautions).
* **Sensitivity** (when the case has a ``[sensitivity]`` section, or when
  asked): each key input at its low and high value with NPV and EAV, from
  :func:`tea.analysis.sensitivity.sensitivity_table`, and a bar chart (tornado). These
  are values tea computed when it wrote the file, not formulas: every variant
  runs the whole ledger again, which a sheet cannot do live. The base NPV now
  is a formula on the results sheet, and a cell says when the inputs no longer
  match the table.

Conventions
-----------
Spreadsheet ``NPV(rate, v1..vn)`` discounts its first value by one period, so
NPV is written ``year-0 flow + NPV(rate, years 1..)``. Formulas use US-English
function names and comma separators. Case text (names, notes) is always
written as a text cell, never as a formula. The file is written by this module
directly (SpreadsheetML parts in a zip with fixed timestamps), so the same case
gives the same bytes; charts are serialised with openpyxl.

References
----------
.. [1] ECMA-376 *Office Open XML File Formats*, 5th ed., Part 1, 2016
   (SpreadsheetML and DrawingML chart parts).
.. [2] OASIS, *Open Document Format for Office Applications (OpenDocument)
   v1.2, Part 2: Recalculated Formula (OpenFormula) Format*, 2011, sec. 6.12
   (NPV, IRR, MIRR, PMT, IPMT, PPMT).
"""

from __future__ import annotations

import io
import json
import math
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

from tea import __version__
from tea.methods import carbon
from tea.inputs import published
from tea.inputs import display
from tea.inputs import schema, units
from tea.inputs.case import EXTENSION_SECTIONS, Case
from tea.inputs.workbook_reader import INPUT_COLUMNS, INPUT_HEAD_ROW, INPUTS, KEPT_HEADER, col_letter, read_case_mapping
from tea.core.errors import CaseError, Problem
from tea.core.files import atomic_write, check_target
from tea.core.safe_text import HEADER_LIMIT, clip, xlsx_text
from tea.model.ledger import BY_NAME as LINE_BY_NAME
from tea.model.ledger import LINE_NAMES, LINES
from tea.model.results import FIGURE_BY_NAME, FIGURES, Results
from tea.outputs.terminal import LABELS
from tea.core.texts import CAUTIONS

#: the longest stand life the sheets hold rows for [yr] (the schema's upper bound)
MAX_YEARS = int(schema.BY_PATH["finance.stand_life_years"].hi)
N_ROWS = MAX_YEARS + 1
#: list inputs get at least this many cells, so a longer list can be typed in
LIST_SLOTS = 12
#: fixed document timestamp: the same case gives the same bytes
DOCUMENT_TIMESTAMP = "2000-01-01T00:00:00Z"
_ZIP_TIME = (1980, 1, 1, 0, 0, 0)

# sheet titles of a single-case workbook (a portfolio prefixes "C01 " etc.)
LEDGER, RESULTS, FINANCE, CARBON, NOTES, COMPARISON = (
    "Ledger", "Results", "Finance", "Carbon", "Notes", "Comparison")
SENSITIVITY = "Sensitivity"

# layout: rows of the yearly tables
LEDGER_LABEL_ROW, LEDGER_UNIT_ROW, LEDGER_KEY_ROW, LEDGER_TOP = 4, 5, 6, 7
TABLE_LABEL_ROW, TABLE_UNIT_ROW, TABLE_KEY_ROW, TABLE_TOP = 22, 23, 24, 25
# the sensitivity sheet: the base block, then the table's label, unit and key rows and its first input row
SENS_BASE_ROW, SENS_LABEL_ROW, SENS_UNIT_ROW, SENS_KEY_ROW, SENS_TOP = 5, 11, 12, 13, 14
#: relative difference between the live NPV and the NPV the table was computed at above which the sheet
#: says the table is out of date (the spreadsheet's NPV and the engine's agree far closer than this)
SENS_STALE_RTOL = 1e-9
_CELL_TEXT_MAX = 32000  # a spreadsheet cell holds at most 32,767 characters
RESULT_HEAD_ROW = 4

# ----------------------------------------------------------------------------- the formula tables
# Template syntax, compiled per case by _Compiler:
#   {t}            the year of the row (ledger column A)
#   {life}         the stand life (defined name)
#   {section.key}  an input (defined name bound to its canonical cell)
#   {m.name}       a model parameter (defined name on the inputs sheet)
#   {k.name}       a published coefficient column (defined name on the carbon sheet)
#   {f.name}       a loan figure (defined name on the finance sheet)
#   [line]         the same-year cell of a column of the sheet being written
#   [line@p]       the previous year's cell of that column
#   [line@all]     the whole column, years 0..60 (absolute)
#   {L:line}       the same-year ledger cell (from another sheet)
#   {L0:line}      the year-0 ledger cell; {L1:line} years 1..60; {Lall:line} years 0..60;
#                  {Lprev:line} years 0..59 (absolute)
#   {F:col}        the same-year cell of the loan schedule
#   {R:figure}     a cell of the results sheet
#   {W:name}       a workings cell of the results sheet

#: model parameters derived from the inputs: (name, label, unit, formula)
MODEL_PARAMETERS: tuple[tuple[str, str, str, str], ...] = (
    ("rate", "Real discount rate (Fisher equation for a nominal rate)", "fraction/yr",
     'IF({finance.rate_basis}="nominal",(1+{finance.discount_rate})/(1+{finance.inflation})-1,{finance.discount_rate})'),
    ("material", "Planting material per ha", "money/ha",
     "{establishment.planting_units_per_ha}*{establishment.planting_unit_price}"),
    ("late", "Late-winter harvest (1) or autumn (0)", "flag", 'IF({harvest.timing}="late_winter",1,0)'),
    ("retention", "Share of the standing dry matter still there at the harvest", "fraction",
     "IF({m.late}=1,1-{harvest.overwinter_dm_loss},1)"),
    ("moisture", "Moisture at harvest, wet basis", "fraction",
     "IF({m.late}=1,{harvest.moisture_late_winter},{harvest.moisture_autumn})"),
    ("hv_delivered", "Net heating value at the delivered moisture (ISO 18125 relation, 2.443 GJ per t of water)",
     "GJ/t DM", "{revenue.heating_value_gj_per_t_dm}-2.443*{m.moisture}/(1-{m.moisture})"),
    ("n_per_t", "N removed per t DM at the chosen harvest time", "kg/t DM",
     "IF({m.late}=1,{nutrients.n_late_winter_kg_per_t_dm},{nutrients.n_autumn_kg_per_t_dm})"),
    ("p_per_t", "P2O5 removed per t DM at the chosen harvest time", "kg/t DM",
     "IF({m.late}=1,{nutrients.p2o5_late_winter_kg_per_t_dm},{nutrients.p2o5_autumn_kg_per_t_dm})"),
    ("k_per_t", "K2O removed per t DM at the chosen harvest time", "kg/t DM",
     "IF({m.late}=1,{nutrients.k2o_late_winter_kg_per_t_dm},{nutrients.k2o_autumn_kg_per_t_dm})"),
    ("price", "Biomass price per t DM in year 1 (a per-GJ price through the delivered heating value)", "money/t DM",
     "IF(ISNUMBER({revenue.price_per_gj}),{revenue.price_per_gj}*{m.hv_delivered},"
     "{revenue.price_per_t_dm})"),
    ("soc_start", "SOC stock at planting: equilibrium of the current use (IPCC 2006 Eq. 2.25)", "t C/ha",
     "{carbon.soc_ref_t_c_per_ha}*{carbon.current_f_lu}*{carbon.current_f_mg}*{carbon.current_f_i}"),
    ("soc_target", "SOC equilibrium under the stand (IPCC 2006 Eq. 2.25)", "t C/ha",
     "{carbon.soc_ref_t_c_per_ha}*{carbon.crop_f_lu}*{carbon.crop_f_mg}*{carbon.crop_f_i}"),
    ("first_order", "First-order SOC path (1) or IPCC linear stock change (0)", "flag",
     'IF({carbon.soc_method}="first_order",1,0)'),
    ("wet", "Moist or wet climate, boreal included (1): N leaching counted", "flag",
     'IF(RIGHT({field.climate},3)="dry",0,1)'),
    ("n2o_key", "Row of the N2O factor table used", "text", '{carbon.n2o_method}&IF({m.wet}=1," wet"," dry")'),
    ("ef1", "EF1, direct N2O", "kg N2O-N/kg N", "INDEX({k.ef1},MATCH({m.n2o_key},{k.n2o_key},0))"),
    ("frac_gasf", "Frac_GASF, N volatilised", "kg N/kg N", "INDEX({k.frac_gasf},MATCH({m.n2o_key},{k.n2o_key},0))"),
    ("frac_leach", "Frac_LEACH, N leached", "kg N/kg N", "INDEX({k.frac_leach},MATCH({m.n2o_key},{k.n2o_key},0))"),
    ("ef4", "EF4, N2O from volatilised N", "kg N2O-N/kg N", "INDEX({k.ef4},MATCH({m.n2o_key},{k.n2o_key},0))"),
    ("ef5", "EF5, N2O from leached N", "kg N2O-N/kg N", "INDEX({k.ef5},MATCH({m.n2o_key},{k.n2o_key},0))"),
    ("gwp_n2o", "GWP100 of N2O", "kg CO2e/kg N2O", "INDEX({k.gwp_n2o},MATCH({carbon.gwp},{k.gwp_report},0))"),
    ("loan_rate", "Loan interest rate (0 when none is given)", "fraction/yr", "IF(ISNUMBER({loan.rate}),{loan.rate},0)"),
    ("capitalised", "Grace-year interest capitalised (1) or paid (0)", "flag",
     'IF({loan.grace_interest}="capitalised",1,0)'),
    ("mirr_finance", "MIRR finance rate (real: Fisher equation for a nominal case)", "fraction/yr",
     'IF(ISNUMBER({finance.mirr_finance_rate}),IF({finance.rate_basis}="nominal",'
     "(1+{finance.mirr_finance_rate})/(1+{finance.inflation})-1,{finance.mirr_finance_rate}),{m.rate})"),
    ("mirr_reinvest", "MIRR reinvestment rate (real: Fisher equation for a nominal case)", "fraction/yr",
     'IF(ISNUMBER({finance.mirr_reinvest_rate}),IF({finance.rate_basis}="nominal",'
     "(1+{finance.mirr_reinvest_rate})/(1+{finance.inflation})-1,{finance.mirr_reinvest_rate}),{m.rate})"),
    ("loan_inflation", "Inflation turning the loan's money of the year into today's money (0 in a real case)",
     "fraction/yr", 'IF({finance.rate_basis}="nominal",{finance.inflation},0)'),
)

_ACTIVE = "({t}>=1)*({t}<={life})"

#: one spreadsheet formula per ledger line: name -> (label, formula, formula of the year-0 row or None)
LEDGER_FORMULAS: dict[str, tuple[str, str, str | None]] = {
    "est_site_preparation": ("Site preparation", "({t}=0)*{establishment.site_preparation_per_ha}", None),
    "est_weed_control": ("Weed control", "({t}=0)*{establishment.weed_control_per_ha}", None),
    "est_planting_material": ("Planting material", "({t}=0)*{m.material}", None),
    "est_planting_operation": ("Planting operation", "({t}=0)*{establishment.planting_operation_per_ha}", None),
    "est_fertiliser": ("Establishment fertiliser", "({t}=0)*{establishment.fertiliser_per_ha}", None),
    "est_fencing_other": ("Fencing and other", "({t}=0)*{establishment.fencing_other_per_ha}", None),
    "est_replanting_expected": (
        "Expected replanting",
        "({t}=1)*({life}>=1)*{establishment.failure_probability}*{establishment.replant_share}"
        "*({m.material}+{establishment.planting_operation_per_ha})", None),
    "establishment_cost": (
        "Establishment cost",
        "[est_site_preparation]+[est_weed_control]+[est_planting_material]+[est_planting_operation]"
        "+[est_fertiliser]+[est_fencing_other]+[est_replanting_expected]", None),
    "growth_fraction": (
        "Growth fraction",
        "IF(AND({t}>=1,{t}<={life}),IF({t}<=COUNT({yield.ramp_up_fractions}),INDEX({yield.ramp_up_fractions},{t}),1)"
        "*IF(AND({yield.decline_start_year}>0,{t}>{yield.decline_start_year}),"
        "(1-{yield.decline_per_year})^({t}-{yield.decline_start_year}),1),0)", None),
    "growth_t_dm": ("Growth", "{yield.mature_t_dm_per_ha}*{yield.site_factor}*[growth_fraction]", None),
    "harvest": (
        "Harvest year",
        "IF(AND({t}>={harvest.first_year},MOD({t}-{harvest.first_year},{harvest.interval_years})=0,"
        "{t}<={life},{t}>=1),1,0)", None),
    "standing_t_dm": (
        "Standing DM cut",
        "IF([harvest]=1,SUM(OFFSET([growth_t_dm],-MIN({harvest.interval_years}-1,{t}),0,"
        "MIN({harvest.interval_years},{t}+1),1)),0)", None),
    "overwinter_loss_t_dm": ("Overwinter loss", "[standing_t_dm]-[standing_t_dm]*{m.retention}", None),
    "field_loss_t_dm": ("Field loss", "[standing_t_dm]*{m.retention}-[harvested_t_dm]", None),
    "harvested_t_dm": ("Harvested DM", "[standing_t_dm]*{m.retention}*(1-{harvest.field_loss})", None),
    "storage_loss_t_dm": ("Storage loss", "[harvested_t_dm]-[sold_t_dm]", None),
    "sold_t_dm": ("DM sold", "[harvested_t_dm]*(1-{harvest.storage_loss})", None),
    "moisture": ("Moisture at harvest", "[harvest]*{m.moisture}", None),
    "harvested_fresh_t": ("Fresh t harvested", "[harvested_t_dm]/(1-{m.moisture})", None),
    "sold_fresh_t": ("Fresh t delivered", "[sold_t_dm]/(1-{m.moisture})", None),
    "sold_gj": ("Energy sold", "[sold_t_dm]*{m.hv_delivered}", None),
    "n_offtake_kg": ("N offtake", "[harvested_t_dm]*{m.n_per_t}", None),
    "p2o5_offtake_kg": ("P2O5 offtake", "[harvested_t_dm]*{m.p_per_t}", None),
    "k2o_offtake_kg": ("K2O offtake", "[harvested_t_dm]*{m.k_per_t}", None),
    "n_applied_kg": ("N applied", "[n_offtake_kg]*{nutrients.n_replace_share}+({t}=0)*{establishment.n_kg_per_ha}", None),
    "p2o5_applied_kg": ("P2O5 applied", "[p2o5_offtake_kg]*{nutrients.p2o5_replace_share}", None),
    "k2o_applied_kg": ("K2O applied", "[k2o_offtake_kg]*{nutrients.k2o_replace_share}", None),
    "fertiliser_cost": (
        "Replacement fertiliser",
        "[n_offtake_kg]*{nutrients.n_replace_share}*{nutrients.n_price_per_kg}"
        "+[p2o5_applied_kg]*{nutrients.p2o5_price_per_kg}+[k2o_applied_kg]*{nutrients.k2o_price_per_kg}"
        "+IF([n_offtake_kg]*{nutrients.n_replace_share}+[p2o5_applied_kg]+[k2o_applied_kg]>0,"
        "{nutrients.spreading_per_ha},0)", None),
    "harvest_cost": ("Cutting", "[harvest]*{costs.harvest_per_ha}", None),
    "baling_chipping_cost": ("Baling or chipping", "[harvested_t_dm]*{costs.baling_chipping_per_t_dm}", None),
    "haulage_cost": ("Haulage", "[sold_fresh_t]*{costs.haul_distance_km}*{costs.haul_per_t_km}", None),
    "storage_cost": ("Storage", "[sold_t_dm]*{costs.storage_per_t_dm}", None),
    "rent": ("Rent", _ACTIVE + "*{costs.rent_per_ha}", None),
    "overheads": ("Overheads", _ACTIVE + "*{costs.overheads_per_ha}", None),
    "insurance": ("Insurance", _ACTIVE + "*{costs.insurance_per_ha}", None),
    "upkeep": ("Upkeep", _ACTIVE + "*{costs.upkeep_per_ha}", None),
    "removal_cost": ("Removal", "({t}={life})*{costs.removal_per_ha}", None),
    "total_cost": (
        "Total cost",
        "[establishment_cost]+[fertiliser_cost]+[harvest_cost]+[baling_chipping_cost]+[haulage_cost]"
        "+[storage_cost]+[rent]+[overheads]+[insurance]+[upkeep]+[removal_cost]", None),
    "price_index": (
        "Price index",
        "IF(AND({t}>=1,{t}<={life}),IF(COUNT({revenue.price_path})>0,"
        "INDEX({revenue.price_path},MIN({t},COUNT({revenue.price_path}))),"
        "(1+{revenue.price_change_per_year})^({t}-1)),0)", None),
    "price_per_t_dm": ("Price per t DM", "{m.price}*[price_index]", None),
    "biomass_revenue": ("Biomass revenue", "[sold_t_dm]*[price_per_t_dm]", None),
    "grant": ("Grant", "({t}=0)*{establishment.grant_per_ha}", None),
    "annual_payment": (
        "Yearly payment",
        _ACTIVE + "*IF({revenue.annual_payment_years}>0,{t}<={revenue.annual_payment_years},1)"
        "*{revenue.annual_payment_per_ha}", None),
    "carbon_credit_revenue": ("Carbon-credit revenue", "[credited_t_co2e]*{carbon.credit_price_per_t_co2e}", None),
    "total_revenue": ("Total revenue", "[biomass_revenue]+[grant]+[annual_payment]+[carbon_credit_revenue]", None),
    "net_cash_flow": ("Net cash flow", "[total_revenue]-[total_cost]", None),
    "current_margin": ("Current use margin (forgone)", _ACTIVE + "*{field.current_margin_per_ha}", None),
    "current_use_cash_flow": ("Current use nets (margin - rent - overheads)", "[current_margin]-[rent]-[overheads]", None),
    "incremental_cash_flow": ("Incremental cash flow", "[net_cash_flow]-[current_use_cash_flow]", None),
    "discount_factor": ("Discount factor", "(1+{m.rate})^(-{t})", None),
    "discounted_cash_flow": ("Discounted cash flow", "[net_cash_flow]*[discount_factor]", None),
    "cumulative_cash_flow": ("Cumulative cash flow", "[cumulative_cash_flow@p]+[net_cash_flow]", "[net_cash_flow]"),
    "cumulative_discounted_cash_flow": (
        "Cumulative discounted", "[cumulative_discounted_cash_flow@p]+[discounted_cash_flow]", "[discounted_cash_flow]"),
    "discounted_incremental_cash_flow": (
        "Discounted incremental", "[incremental_cash_flow]*[discount_factor]", None),
    "cumulative_discounted_incremental": (
        "Cumulative disc. incremental", "[cumulative_discounted_incremental@p]+[discounted_incremental_cash_flow]",
        "[discounted_incremental_cash_flow]"),
    "soc_t_c": (
        "SOC stock",
        "IF({m.first_order}=1,{m.soc_target}+({m.soc_start}-{m.soc_target})"
        "*EXP(-{carbon.first_order_rate_per_year}*MIN({t},{life})),"
        "{m.soc_start}+({m.soc_target}-{m.soc_start})*MIN(MAX(MIN({t},{life})/{carbon.transition_years},0),1))", None),
    "soc_current_use_t_c": ("SOC under current use", "{m.soc_start}", None),
    # year 0 has no change by definition: the stock at its end is the opening stock
    "soc_change_t_c": ("SOC change", "[soc_t_c]-[soc_t_c@p]", "[soc_t_c]-[soc_t_c]"),
    "diesel_l": (
        "Diesel",
        "({t}=0)*{carbon.diesel_establishment_l_per_ha}+[harvest]*{carbon.diesel_harvest_l_per_ha}"
        "+[harvested_t_dm]*{carbon.diesel_l_per_t_dm}+({t}={life})*{carbon.diesel_removal_l_per_ha}", None),
    "ghg_n2o_direct_t_co2e": ("N2O direct", "[n_applied_kg]*{m.ef1}*(44/28)*{m.gwp_n2o}/1000", None),
    "ghg_n2o_indirect_t_co2e": (
        "N2O indirect", "[n_applied_kg]*({m.frac_gasf}*{m.ef4}+{m.frac_leach}*{m.ef5})*(44/28)*{m.gwp_n2o}/1000", None),
    "ghg_fertiliser_t_co2e": (
        "Fertiliser manufacture",
        "([n_applied_kg]*{carbon.n_manufacture_kg_co2e_per_kg}+[p2o5_applied_kg]*{carbon.p2o5_manufacture_kg_co2e_per_kg}"
        "+[k2o_applied_kg]*{carbon.k2o_manufacture_kg_co2e_per_kg})/1000", None),
    "ghg_diesel_t_co2e": ("Diesel CO2", "[diesel_l]*{carbon.diesel_kg_co2e_per_l}/1000", None),
    "ghg_haulage_t_co2e": ("Haulage", "[sold_fresh_t]*{costs.haul_distance_km}*{carbon.haul_kg_co2e_per_t_km}/1000", None),
    "ghg_emissions_t_co2e": (
        "Emissions",
        "[ghg_n2o_direct_t_co2e]+[ghg_n2o_indirect_t_co2e]+[ghg_fertiliser_t_co2e]+[ghg_diesel_t_co2e]"
        "+[ghg_haulage_t_co2e]", None),
    "ghg_soc_t_co2e": ("SOC change as CO2", "-[soc_change_t_c]*(44/12)", None),
    "ghg_net_t_co2e": ("Net GHG", "[ghg_emissions_t_co2e]+[ghg_soc_t_co2e]", None),
    "credited_t_co2e": (
        "Credited",
        "({t}>={carbon.credit_first_year})*" + _ACTIVE
        + "*MAX([soc_change_t_c],0)*(44/12)*(1-{carbon.credit_buffer_share})", None),
    "loan_drawdown": ("Loan drawn", "({t}=0)*{f.loan_principal}", None),
    "loan_interest": ("Loan interest", "{F:interest_due}", None),
    "loan_principal": ("Principal repaid", "{F:principal_repaid}", None),
    "debt_service": ("Debt service", "{F:debt_service}", None),
    "loan_balance": ("Loan balance", "{F:closing_balance}", None),
    "dscr": ("DSCR", "{F:dscr}", None),
    "equity_cash_flow": ("Own cash flow (today's money)",
                         "[net_cash_flow]+([loan_drawdown]-[debt_service])/(1+{m.loan_inflation})^{t}", None),
}

#: check columns right of the ledger lines: (key, label, unit, formula, formula of the year-0 row)
LEDGER_CHECKS: tuple[tuple[str, str, str, str, str | None], ...] = (
    ("chk_sign_net", "Sign of the last nonzero net cash flow", "sign",
     "IF([net_cash_flow]<>0,SIGN([net_cash_flow]),[chk_sign_net@p])", "SIGN([net_cash_flow])"),
    ("chk_sign_incremental", "Sign of the last nonzero incremental flow", "sign",
     "IF([incremental_cash_flow]<>0,SIGN([incremental_cash_flow]),[chk_sign_incremental@p])",
     "SIGN([incremental_cash_flow])"),
    ("chk_cum_below", "Cumulative cash flow has been below zero", "flag",
     "IF(OR([chk_cum_below@p]=1,[cumulative_cash_flow]<0),1,0)", "IF([cumulative_cash_flow]<0,1,0)"),
    ("chk_payback", "Payback year candidate", "yr",
     'IF(AND([chk_cum_below@p]=1,[cumulative_cash_flow]>=0),{t},"")', ""),
    ("chk_disc_below", "Cumulative discounted cash flow has been below zero", "flag",
     "IF(OR([chk_disc_below@p]=1,[cumulative_discounted_cash_flow]<0),1,0)",
     "IF([cumulative_discounted_cash_flow]<0,1,0)"),
    ("chk_disc_payback", "Discounted payback year candidate", "yr",
     'IF(AND([chk_disc_below@p]=1,[cumulative_discounted_cash_flow]>=0),{t},"")', ""),
    ("chk_payback_marker", "Discounted payback marker (chart)", "money/ha",
     "IF({t}={R:discounted_payback_year},MAX([cumulative_discounted_cash_flow@all]),0)", None),
)

#: the loan schedule on the finance sheet: (key, label, unit, formula, formula of the year-0 row)
FINANCE_SCHEDULE: tuple[tuple[str, str, str, str, str | None], ...] = (
    ("year", "Year", "yr", "{L:year}", None),
    ("phase", "Phase", "", 'IF({f.loan_principal}=0,"",IF([year]=0,"drawdown",IF([year]<={loan.grace_years},"grace",'
     'IF([year]<={loan.grace_years}+{loan.term_years},"repayment",""))))', None),
    ("period", "Repayment no.", "", 'IF(AND({f.loan_principal}>0,[year]>{loan.grace_years},'
     '[year]<={loan.grace_years}+{loan.term_years}),[year]-{loan.grace_years},"")', None),
    ("opening_balance", "Opening balance", "money/ha", "[closing_balance@p]", ""),
    ("interest_due", "Interest due", "money/ha",
     "IF(AND([year]>=1,[year]<={loan.grace_years}),[opening_balance]*{m.loan_rate},"
     "IF(ISNUMBER([period]),-IPMT({m.loan_rate},[period],{loan.term_years},{f.loan_balance_after_grace}),0))", None),
    ("interest_paid", "Interest paid", "money/ha",
     "IF(AND([year]>=1,[year]<={loan.grace_years},{m.capitalised}=1),0,[interest_due])", None),
    ("principal_repaid", "Principal repaid", "money/ha",
     "IF(ISNUMBER([period]),-PPMT({m.loan_rate},[period],{loan.term_years},{f.loan_balance_after_grace}),0)", None),
    ("debt_service", "Debt service", "money/ha", "[interest_paid]+[principal_repaid]", None),
    ("closing_balance", "Closing balance", "money/ha",
     "IF([year]=0,{f.loan_principal},IF([year]<={loan.grace_years},IF({m.capitalised}=1,"
     "{f.loan_principal}*(1+{m.loan_rate})^[year],{f.loan_principal}),"
     "IF(ISNUMBER([period]),[opening_balance]-[principal_repaid],0)))", None),
    ("net_cash_flow", "Net cash flow (before financing)", "money/ha", "{L:net_cash_flow}", None),
    ("dscr", "DSCR", "ratio",
     'IF([debt_service]>0,[net_cash_flow]*(1+{m.loan_inflation})^[year]/[debt_service],"")', None),
    ("below_covenant", "Below covenant", "",
     'IF(ISNUMBER([dscr]),IF([dscr]<{loan.dscr_covenant},"BELOW",""),"")', None),
    ("equity_cash_flow", "Own cash flow", "money/ha", "{L:equity_cash_flow}", None),
    ("cumulative_equity_cash_flow", "Cumulative own cash", "money/ha",
     "[cumulative_equity_cash_flow@p]+[equity_cash_flow]", "[equity_cash_flow]"),
)

#: loan figures above the schedule: (key, label, unit, formula); keys that are result figures feed the results sheet
FINANCE_FIGURES: tuple[tuple[str, str, str, str], ...] = (
    ("share_of_establishment", "Share of the year-0 establishment cost borrowed", "fraction",
     "{loan.share_of_establishment}"),
    ("rate", "Interest rate", "fraction/yr", "{m.loan_rate}"),
    ("term_years", "Repayment years after the grace years", "yr", "{loan.term_years}"),
    ("grace_years", "Grace years", "yr", "{loan.grace_years}"),
    ("grace_interest", "Interest in the grace years", "", '{loan.grace_interest}'),
    ("establishment_cost_year0", "Establishment cost in year 0", "money/ha", "{L0:establishment_cost}"),
    ("loan_principal", "Loan drawn at planting", "money/ha",
     "{loan.share_of_establishment}*{L0:establishment_cost}"),
    ("loan_balance_after_grace", "Balance when repayment starts", "money/ha",
     "IF({m.capitalised}=1,{f.loan_principal}*(1+{m.loan_rate})^{loan.grace_years},{f.loan_principal})"),
    ("loan_payment", "Level yearly payment (PMT)", "money/ha/yr",
     "IF({f.loan_principal}>0,-PMT({m.loan_rate},{loan.term_years},{f.loan_balance_after_grace}),0)"),
    ("loan_interest_total", "Interest over the loan", "money/ha", "SUM([interest_due@all])"),
    ("min_dscr", "Lowest DSCR", "ratio", 'IF(COUNT([dscr@all])>0,MIN([dscr@all]),"no debt service")'),
    ("min_dscr_year", "Year of the lowest DSCR", "yr",
     'IF(COUNT([dscr@all])>0,INDEX([year@all],MATCH(MIN([dscr@all]),[dscr@all],0)),"no debt service")'),
    ("dscr_covenant", "DSCR covenant", "ratio", "{loan.dscr_covenant}"),
    ("years_below_covenant", "Years below the covenant", "yr",
     "SUMPRODUCT(ISNUMBER([dscr@all])*([dscr@all]<{loan.dscr_covenant}))"),
    ("covenant_flag", "Covenant", "",
     'IF({f.years_below_covenant}>0,"DSCR BELOW THE COVENANT in "&{f.years_below_covenant}&" year(s)",'
     '"meets the covenant in every year")'),
    ("equity_peak_funding_need", "Peak own funding after the loan", "money/ha",
     "MAX(0,-MIN([cumulative_equity_cash_flow@all]))"),
)
_FINANCE_NAMED = ("loan_principal", "loan_balance_after_grace", "loan_payment", "years_below_covenant")

_IRR_TEXT = "undefined: no single rate (see MIRR)"


def _irr(flow: str, changes: str) -> str:
    return (f'IF(OR({{W:{changes}}}=0,ISEVEN({{W:{changes}}})),"{_IRR_TEXT}",'
            f'IFERROR(IRR(OFFSET({{L0:{flow}}},0,0,{{life}}+1,1),{{R:mirr}}),"not found (see MIRR)"))')


def _irr_note(changes: str) -> str:
    return (f'IF({{W:{changes}}}=1,"unique: the flows change sign once",'
            f'IF(OR({{W:{changes}}}=0,ISEVEN({{W:{changes}}})),"the flows change sign "&{{W:{changes}}}'
            f'&" times: no rate or several make NPV zero",'
            f'"the flows change sign "&{{W:{changes}}}&" times: this rate may not be the only one"))')


def _payback(below: str, candidate: str, cum: str) -> str:
    return (f'IF(MAX({{Lall:{below}}})=0,0,IF(COUNT({{Lall:{candidate}}})=0,"not within the stand life",'
            f'MIN({{Lall:{candidate}}})))')


def _payback_years(year: str, cum: str, flow: str) -> str:
    return (f"IF(ISNUMBER({{R:{year}}}),IF({{R:{year}}}=0,0,{{R:{year}}}-1-INDEX({{Lall:{cum}}},{{R:{year}}})"
            f"/INDEX({{Lall:{flow}}},{{R:{year}}}+1)),{{R:{year}}})")


_PRICE_DIVISOR = "IF(ISNUMBER({revenue.price_per_gj}),{m.hv_delivered},1)"

#: one formula per decision figure of :data:`tea.model.results.FIGURES` (per ha)
RESULT_FORMULAS: dict[str, str] = {
    "npv": "{L0:net_cash_flow}+NPV({m.rate},{L1:net_cash_flow})",
    "npv_vs_current_use": "{L0:incremental_cash_flow}+NPV({m.rate},{L1:incremental_cash_flow})",
    "pv_current_use": "{L0:current_use_cash_flow}+NPV({m.rate},{L1:current_use_cash_flow})",
    "irr": _irr("net_cash_flow", "sign_changes_net"),
    "irr_vs_current_use": _irr("incremental_cash_flow", "sign_changes_incremental"),
    "mirr": ('IF(AND(COUNTIF(OFFSET({L0:net_cash_flow},0,0,{life}+1,1),">0")>0,'
             'COUNTIF(OFFSET({L0:net_cash_flow},0,0,{life}+1,1),"<0")>0),'
             "MIRR(OFFSET({L0:net_cash_flow},0,0,{life}+1,1),{m.mirr_finance},{m.mirr_reinvest}),"
             '"undefined: the flows need both a cost and a receipt")'),
    "eav": "-PMT({m.rate},{life},{R:npv})",
    "current_margin": "{field.current_margin_per_ha}",
    "current_use_net": "{field.current_margin_per_ha}-{costs.rent_per_ha}-{costs.overheads_per_ha}",
    "eav_vs_current_use": "-PMT({m.rate},{life},{R:npv_vs_current_use})",
    "payback_year": _payback("chk_cum_below", "chk_payback", "cumulative_cash_flow"),
    "payback_years": _payback_years("payback_year", "cumulative_cash_flow", "net_cash_flow"),
    "discounted_payback_year": _payback("chk_disc_below", "chk_disc_payback", "cumulative_discounted_cash_flow"),
    "discounted_payback_years": _payback_years(
        "discounted_payback_year", "cumulative_discounted_cash_flow", "discounted_cash_flow"),
    "breakeven_price": ('IF({W:price_pv}>0,({m.price}-{R:npv}/{W:price_pv})/' + _PRICE_DIVISOR
                        + ',"no biomass sold")'),
    "breakeven_price_vs_current_use": ('IF({W:price_pv}>0,({m.price}-{R:npv_vs_current_use}/{W:price_pv})/'
                                       + _PRICE_DIVISOR + ',"no biomass sold")'),
    "breakeven_mature_yield_t_dm_per_ha": (
        "IF({W:yield_pv}>0,{yield.mature_t_dm_per_ha}-{R:npv}/({W:yield_pv}/{yield.mature_t_dm_per_ha}),"
        '"not reachable by yield")'),
    "breakeven_mature_yield_vs_current_use_t_dm_per_ha": (
        "IF({W:yield_pv}>0,{yield.mature_t_dm_per_ha}-{R:npv_vs_current_use}/({W:yield_pv}"
        '/{yield.mature_t_dm_per_ha}),"not reachable by yield")'),
    "peak_funding_need": "MAX(0,-MIN({Lall:cumulative_cash_flow}))",
    "peak_funding_year": ("INDEX({Lall:year},MATCH(MIN({Lall:cumulative_cash_flow}),"
                          "{Lall:cumulative_cash_flow},0))"),
    "establishment_cost": "SUM({Lall:establishment_cost})",
    "sold_t_dm": "SUM({Lall:sold_t_dm})",
    "sold_gj": "SUM({Lall:sold_gj})",
    "mean_sold_t_dm_per_year": "{R:sold_t_dm}/{life}",
    "soc_start_t_c_per_ha": "{L0:soc_t_c}",
    "soc_end_t_c_per_ha": "INDEX({Lall:soc_t_c},{life}+1)",
    "soc_gain_t_c": "{R:soc_end_t_c_per_ha}-{m.soc_start}",
    "soc_gain_t_co2e": "{R:soc_gain_t_c}*(44/12)",
    "soc_loss_after_reversion_t_c": "MAX(0,{R:soc_end_t_c_per_ha}-{m.soc_start})",
    "ghg_emissions_t_co2e": "SUM({Lall:ghg_emissions_t_co2e})",
    "ghg_net_t_co2e": "SUM({Lall:ghg_net_t_co2e})",
    "ghg_net_t_co2e_per_year": "{R:ghg_net_t_co2e}/{life}",
    "ghg_net_kg_co2e_per_t_dm": 'IF({R:sold_t_dm}>0,1000*{R:ghg_net_t_co2e}/{R:sold_t_dm},"no biomass sold")',
    "ghg_net_kg_co2e_per_gj": 'IF({R:sold_gj}>0,1000*{R:ghg_net_t_co2e}/{R:sold_gj},"no energy sold")',
    "credited_t_co2e": "SUM({Lall:credited_t_co2e})",
    "carbon_credit_revenue": "SUM({Lall:carbon_credit_revenue})",
    "carbon_credit_pv": "SUMPRODUCT({Lall:carbon_credit_revenue},{Lall:discount_factor})",
    "loan_principal": "{f.loan_principal}",
    "loan_payment": "{f.loan_payment}",
    "loan_interest_total": "{FK:loan_interest_total}",
    "min_dscr": "{FK:min_dscr}",
    "min_dscr_year": "{FK:min_dscr_year}",
    "dscr_covenant": "{FK:dscr_covenant}",
    "years_below_covenant": "{f.years_below_covenant}",
    "equity_peak_funding_need": "{FK:equity_peak_funding_need}",
}

#: workings below the figures: (key, label, unit, formula)
RESULT_WORKINGS: tuple[tuple[str, str, str, str], ...] = (
    ("sign_changes_net", "Sign changes of the net cash flow (zeros skipped)", "count",
     "SUMPRODUCT(({L1:chk_sign_net}*{Lprev:chk_sign_net}<0)*1)"),
    ("sign_changes_incremental", "Sign changes of the incremental cash flow", "count",
     "SUMPRODUCT(({L1:chk_sign_incremental}*{Lprev:chk_sign_incremental}<0)*1)"),
    ("irr_note", "IRR", "", _irr_note("sign_changes_net")),
    ("irr_vs_current_use_note", "IRR vs current use", "", _irr_note("sign_changes_incremental")),
    ("price_pv", "Present value of the price-driven sales per unit of price per t DM", "t DM/ha",
     "SUMPRODUCT({Lall:sold_t_dm},{Lall:price_index},{Lall:discount_factor})"),
    ("yield_pv", "Present value of the yield-driven money lines (NPV is linear in the mature yield)", "money/ha",
     "SUMPRODUCT({Lall:discount_factor},{Lall:biomass_revenue}-{Lall:baling_chipping_cost}-{Lall:haulage_cost}"
     "-{Lall:storage_cost}-{Lall:n_offtake_kg}*{nutrients.n_replace_share}*{nutrients.n_price_per_kg}"
     "-{Lall:p2o5_applied_kg}*{nutrients.p2o5_price_per_kg}-{Lall:k2o_applied_kg}*{nutrients.k2o_price_per_kg})"),
)

_RESULT_GROUPS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("Cash", ("npv", "npv_vs_current_use", "pv_current_use", "irr", "irr_vs_current_use", "mirr", "eav",
              "current_margin", "current_use_net", "eav_vs_current_use", "payback_year", "payback_years", "discounted_payback_year",
              "discounted_payback_years", "peak_funding_need", "peak_funding_year", "establishment_cost")),
    ("Break-even (closed form, no goal seek)", ("breakeven_price", "breakeven_price_vs_current_use",
                                               "breakeven_mature_yield_t_dm_per_ha",
                                               "breakeven_mature_yield_vs_current_use_t_dm_per_ha")),
    ("Output", ("sold_t_dm", "sold_gj", "mean_sold_t_dm_per_year")),
    ("Carbon", ("soc_start_t_c_per_ha", "soc_end_t_c_per_ha", "soc_gain_t_c", "soc_gain_t_co2e",
                "soc_loss_after_reversion_t_c", "ghg_emissions_t_co2e", "ghg_net_t_co2e", "ghg_net_t_co2e_per_year",
                "ghg_net_kg_co2e_per_t_dm", "ghg_net_kg_co2e_per_gj", "credited_t_co2e", "carbon_credit_revenue",
                "carbon_credit_pv")),
    ("Establishment loan", ("loan_principal", "loan_payment", "loan_interest_total", "min_dscr", "min_dscr_year",
                            "dscr_covenant", "years_below_covenant", "equity_peak_funding_need")),
)

#: ledger lines repeated on the carbon sheet
CARBON_LINES = ("soc_t_c", "soc_current_use_t_c", "soc_change_t_c", "ghg_n2o_direct_t_co2e",
                "ghg_n2o_indirect_t_co2e", "ghg_fertiliser_t_co2e", "ghg_diesel_t_co2e", "ghg_haulage_t_co2e",
                "ghg_emissions_t_co2e", "ghg_soc_t_co2e", "ghg_net_t_co2e", "credited_t_co2e",
                "carbon_credit_revenue")
CARBON_FIGURES = ("soc_start_t_c_per_ha", "soc_end_t_c_per_ha", "soc_gain_t_c", "soc_gain_t_co2e",
                  "soc_loss_after_reversion_t_c", "ghg_emissions_t_co2e", "ghg_net_t_co2e",
                  "ghg_net_t_co2e_per_year", "credited_t_co2e", "carbon_credit_pv")
_N2O_COLUMNS = ("ef1", "frac_gasf", "frac_leach", "ef4", "ef5")

# ----------------------------------------------------------------------------- XML helpers
_ILLEGAL_XML = re.compile("[^\u0009\u000a\u000d\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def _esc(text: str) -> str:
    """Text for XML element content or attribute values (illegal control characters dropped)."""
    text = _ILLEGAL_XML.sub("", text)
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")




def _quote(sheet: str) -> str:
    return "'" + sheet.replace("'", "''") + "'"


def _abs(sheet: str, col: int, row: int, col2: int | None = None, row2: int | None = None) -> str:
    ref = f"{_quote(sheet)}!${col_letter(col)}${row}"
    if row2 is not None:
        ref += f":${col_letter(col2 or col)}${row2}"
    return ref


def _num(value: float) -> str:
    if isinstance(value, bool):
        return "1" if value else "0"
    if isinstance(value, int):
        return str(value)
    if not math.isfinite(value):
        raise ValueError(f"cannot write a non-finite number {value!r} as a constant")
    return repr(float(value))


# ----------------------------------------------------------------------------- styles
_FONT_DEFAULT = '<font><sz val="10"/><name val="Calibri"/><family val="2"/></font>'
_PALETTE = {
    # a palette of our own: sand for what people type, moss for headings, slate for formulas
    "input_fill": "FFF3E6C4", "input_font": "FF5A3E0B", "input_border": "FFB8893A",
    "constant_fill": "FFE6ECF2", "constant_font": "FF34495E",
    "head_fill": "FF2F4F3A", "head_font": "FFFFFFFF", "sub_font": "FF5B6B61",
    "computed_font": "FF1F2933", "key_fill": "FFEAF2EC", "flag_font": "FFB3261E", "flag_fill": "FFF9DEDC",
}

_ROLES = {
    # role: (font xml, fill rgb or None, border xml or None, alignment xml or None, named style)
    "title": (f'<font><b/><sz val="14"/><color rgb="{_PALETTE["head_fill"]}"/><name val="Calibri"/><family val="2"/></font>',
              None, None, None, 0),
    "subtitle": (f'<font><i/><sz val="10"/><color rgb="{_PALETTE["sub_font"]}"/><name val="Calibri"/><family val="2"/></font>',
                 None, None, None, 0),
    "head": (f'<font><b/><sz val="10"/><color rgb="{_PALETTE["head_font"]}"/><name val="Calibri"/><family val="2"/></font>',
             _PALETTE["head_fill"], None, '<alignment wrapText="1" vertical="top"/>', 0),
    "keyname": (f'<font><sz val="8"/><color rgb="{_PALETTE["sub_font"]}"/><name val="Calibri"/><family val="2"/></font>',
                None, None, None, 0),
    "group": (f'<font><b/><sz val="11"/><color rgb="{_PALETTE["head_fill"]}"/><name val="Calibri"/><family val="2"/></font>',
              None, '<border><left/><right/><top/><bottom style="thin"><color rgb="FF2F4F3A"/></bottom><diagonal/></border>',
              None, 0),
    "label": (_FONT_DEFAULT, None, None, None, 0),
    "text": (_FONT_DEFAULT, None, None, '<alignment wrapText="1" vertical="top"/>', 0),
    "input": (f'<font><b/><sz val="10"/><color rgb="{_PALETTE["input_font"]}"/><name val="Calibri"/><family val="2"/></font>',
              _PALETTE["input_fill"],
              f'<border><left style="dashed"><color rgb="{_PALETTE["input_border"]}"/></left>'
              f'<right style="dashed"><color rgb="{_PALETTE["input_border"]}"/></right>'
              f'<top style="dashed"><color rgb="{_PALETTE["input_border"]}"/></top>'
              f'<bottom style="dashed"><color rgb="{_PALETTE["input_border"]}"/></bottom><diagonal/></border>',
              None, 1),
    "computed": (f'<font><sz val="10"/><color rgb="{_PALETTE["computed_font"]}"/><name val="Calibri"/><family val="2"/></font>',
                 None, None, None, 2),
    "key": (f'<font><b/><sz val="10"/><color rgb="{_PALETTE["computed_font"]}"/><name val="Calibri"/><family val="2"/></font>',
            _PALETTE["key_fill"], None, None, 2),
    "flag": (f'<font><b/><sz val="10"/><color rgb="{_PALETTE["flag_font"]}"/><name val="Calibri"/><family val="2"/></font>',
             None, None, None, 2),
    "flag_wrap": (f'<font><b/><sz val="10"/><color rgb="{_PALETTE["flag_font"]}"/><name val="Calibri"/><family val="2"/></font>',
                  None, None, '<alignment wrapText="1" vertical="top"/>', 0),
    "constant": (f'<font><i/><sz val="10"/><color rgb="{_PALETTE["constant_font"]}"/><name val="Calibri"/><family val="2"/></font>',
                 _PALETTE["constant_fill"], None, None, 3),
}
_NAMED_STYLES = ("Normal", "tea input", "tea formula", "tea constant")


class _Styles:
    """Cell formats (xf records) registered on first use: (role, number format) -> index."""

    def __init__(self) -> None:
        self.fonts: list[str] = [_FONT_DEFAULT]
        self.fills: list[str] = ['<fill><patternFill patternType="none"/></fill>',
                                 '<fill><patternFill patternType="gray125"/></fill>']
        self.borders: list[str] = ["<border><left/><right/><top/><bottom/><diagonal/></border>"]
        self.numfmts: dict[str, int] = {}
        self.xfs: list[str] = ['<xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>']
        self.index: dict[tuple[str, str], int] = {}
        # named styles: one base record each
        self.style_xfs: list[str] = ['<xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>']
        for role in ("input", "computed", "constant"):
            font, fill, border, _, _ = _ROLES[role]
            self.style_xfs.append(f'<xf numFmtId="0" fontId="{self._font(font)}" fillId="{self._fill(fill)}" '
                                  f'borderId="{self._border(border)}"/>')

    def _font(self, xml: str) -> int:
        if xml not in self.fonts:
            self.fonts.append(xml)
        return self.fonts.index(xml)

    def _fill(self, rgb: str | None) -> int:
        if rgb is None:
            return 0
        xml = f'<fill><patternFill patternType="solid"><fgColor rgb="{rgb}"/><bgColor indexed="64"/></patternFill></fill>'
        if xml not in self.fills:
            self.fills.append(xml)
        return self.fills.index(xml)

    def _border(self, xml: str | None) -> int:
        if xml is None:
            return 0
        if xml not in self.borders:
            self.borders.append(xml)
        return self.borders.index(xml)

    def _numfmt(self, fmt: str) -> int:
        builtin = {"General": 0, "0": 1, "0.00": 2, "#,##0": 3, "#,##0.00": 4, "0%": 9, "0.00%": 10}
        if fmt in builtin:
            return builtin[fmt]
        if fmt not in self.numfmts:
            self.numfmts[fmt] = 164 + len(self.numfmts)
        return self.numfmts[fmt]

    def __call__(self, role: str, fmt: str = "General") -> int:
        key = (role, fmt)
        found = self.index.get(key)
        if found is not None:
            return found
        font, fill, border, align, named = _ROLES[role]
        attrs = (f'numFmtId="{self._numfmt(fmt)}" fontId="{self._font(font)}" fillId="{self._fill(fill)}" '
                 f'borderId="{self._border(border)}" xfId="{named}" applyNumberFormat="1" applyFont="1" '
                 f'applyFill="1" applyBorder="1"')
        self.xfs.append(f"<xf {attrs} applyAlignment=\"1\">{align}</xf>" if align else f"<xf {attrs}/>")
        self.index[key] = len(self.xfs) - 1
        return self.index[key]

    def xml(self) -> str:
        numfmts = "".join(f'<numFmt numFmtId="{i}" formatCode="{_esc(f)}"/>' for f, i in self.numfmts.items())
        numfmts = f'<numFmts count="{len(self.numfmts)}">{numfmts}</numFmts>' if self.numfmts else ""
        dxf = (f'<dxf><font><b/><color rgb="{_PALETTE["flag_font"]}"/></font><fill><patternFill patternType="solid">'
               f'<bgColor rgb="{_PALETTE["flag_fill"]}"/></patternFill></fill></dxf>')
        styles = "".join(f'<cellStyle name="{n}" xfId="{i}"' + (' builtinId="0"' if i == 0 else "") + "/>"
                         for i, n in enumerate(_NAMED_STYLES))
        return (
            '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
            '<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
            f"{numfmts}"
            f'<fonts count="{len(self.fonts)}">{"".join(self.fonts)}</fonts>'
            f'<fills count="{len(self.fills)}">{"".join(self.fills)}</fills>'
            f'<borders count="{len(self.borders)}">{"".join(self.borders)}</borders>'
            f'<cellStyleXfs count="{len(self.style_xfs)}">{"".join(self.style_xfs)}</cellStyleXfs>'
            f'<cellXfs count="{len(self.xfs)}">{"".join(self.xfs)}</cellXfs>'
            f'<cellStyles count="{len(_NAMED_STYLES)}">{styles}</cellStyles>'
            f'<dxfs count="1">{dxf}</dxfs>'
            "</styleSheet>"
        )


def _money_format(currency: str, decimals: int = 2) -> str:
    digits = "0." + "0" * decimals if decimals else "0"
    body = "#,##" + digits
    return f'{body} "{currency}";[Red]-{body} "{currency}"'


def _format_for(unit: str, currency: str) -> str:
    """Number format of a value in a canonical unit string (``money/ha``, ``t DM/ha``, ``fraction``...)."""
    if unit.startswith("money"):
        return _money_format(currency)
    if unit in ("fraction", "fraction/yr"):
        return "0.0000"
    if unit in ("yr", "flag", "count", "sign"):
        return "0"
    if unit == "ratio":
        return "0.00"
    return "#,##0.000"


def _unit_text(unit: str, currency: str, price_unit: str = "t DM") -> str:
    return unit.replace("money", currency).replace("price unit", price_unit)


# ----------------------------------------------------------------------------- a worksheet
@dataclass
class _Chart:
    xml: bytes
    anchor: tuple[int, int, int, int]  # from col, from row, to col, to row (0-based)


@dataclass
class _Sheet:
    """Cells of one worksheet as SpreadsheetML fragments, plus its view and print settings."""

    title: str
    tab: str = ""
    cells: dict[int, dict[int, str]] = field(default_factory=dict)
    widths: dict[int, float] = field(default_factory=dict)
    hidden_cols: set[int] = field(default_factory=set)
    heights: dict[int, float] = field(default_factory=dict)
    freeze: tuple[int, int] | None = None  # first unfrozen (row, col)
    charts: list[_Chart] = field(default_factory=list)
    validations: list[tuple[str, str, str, str]] = field(default_factory=list)  # (sqref, type, formula1, formula2)
    cond_formats: list[tuple[str, str]] = field(default_factory=list)  # (sqref, expression)
    print_titles: str = ""
    max_col: int = 1
    max_row: int = 1

    def _put(self, row: int, col: int, xml: str) -> None:
        self.cells.setdefault(row, {})[col] = xml
        if col > self.max_col:
            self.max_col = col
        if row > self.max_row:
            self.max_row = row

    def text(self, row: int, col: int, value: str, style: int) -> None:
        """A text cell. Case text goes only through here: it can never become a formula."""
        if value == "":
            return
        self._put(row, col, f'<c r="{col_letter(col)}{row}" s="{style}" t="inlineStr"><is><t xml:space="preserve">'
                            f"{xlsx_text(str(value))}</t></is></c>")

    def number(self, row: int, col: int, value: float, style: int) -> None:
        self._put(row, col, f'<c r="{col_letter(col)}{row}" s="{style}"><v>{_num(value)}</v></c>')

    def boolean(self, row: int, col: int, value: bool, style: int) -> None:
        self._put(row, col, f'<c r="{col_letter(col)}{row}" s="{style}" t="b"><v>{int(bool(value))}</v></c>')

    def formula(self, row: int, col: int, formula: str, style: int) -> None:
        self._put(row, col, f'<c r="{col_letter(col)}{row}" s="{style}"><f>{_esc(formula)}</f></c>')

    def formula_xml(self, row: int, col: int, escaped: str, style: int) -> None:
        """A formula already escaped for XML (the hot path of the yearly tables)."""
        self._put(row, col, f'<c r="{col_letter(col)}{row}" s="{style}"><f>{escaped}</f></c>')

    def blank(self, row: int, col: int, style: int) -> None:
        self._put(row, col, f'<c r="{col_letter(col)}{row}" s="{style}"/>')

    def value(self, row: int, col: int, value: Any, style: int) -> None:
        """A constant of any kind (numbers, booleans, text); None leaves a styled blank."""
        if value is None:
            self.blank(row, col, style)
        elif isinstance(value, bool):
            self.boolean(row, col, value, style)
        elif isinstance(value, (int, float)):
            self.number(row, col, value, style)
        else:
            self.text(row, col, str(value), style)

    def xml(self, header: str, footer: str, paper: int, selected: bool, drawing_rid: str | None) -> str:
        out = ['<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
               '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
               'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">']
        tab = f'<tabColor rgb="{self.tab}"/>' if self.tab else ""
        out.append(f'<sheetPr>{tab}<pageSetUpPr fitToPage="1"/></sheetPr>')
        out.append(f'<dimension ref="A1:{col_letter(self.max_col)}{self.max_row}"/>')
        sel = ' tabSelected="1"' if selected else ""
        if self.freeze:
            r, c = self.freeze
            top_left = f"{col_letter(c)}{r}"
            split = (f' xSplit="{c - 1}"' if c > 1 else "") + (f' ySplit="{r - 1}"' if r > 1 else "")
            pane = "bottomRight" if (r > 1 and c > 1) else ("bottomLeft" if r > 1 else "topRight")
            out.append(f'<sheetViews><sheetView workbookViewId="0"{sel}><pane{split} topLeftCell="{top_left}" '
                       f'activePane="{pane}" state="frozen"/><selection pane="{pane}" activeCell="{top_left}" '
                       f'sqref="{top_left}"/></sheetView></sheetViews>')
        else:
            out.append(f'<sheetViews><sheetView workbookViewId="0"{sel}/></sheetViews>')
        out.append('<sheetFormatPr defaultRowHeight="13.8"/>')
        if self.widths or self.hidden_cols:
            cols = []
            for c in sorted(set(self.widths) | self.hidden_cols):
                hidden = ' hidden="1"' if c in self.hidden_cols else ""
                cols.append(f'<col min="{c}" max="{c}" width="{self.widths.get(c, 10)}" customWidth="1"{hidden}/>')
            out.append("<cols>" + "".join(cols) + "</cols>")
        out.append("<sheetData>")
        for r in sorted(self.cells):
            row = self.cells[r]
            ht = f' ht="{self.heights[r]:g}" customHeight="1"' if r in self.heights else ""
            out.append(f'<row r="{r}"{ht}>' + "".join(row[c] for c in sorted(row)) + "</row>")
        out.append("</sheetData>")
        for i, (sqref, expr) in enumerate(self.cond_formats):
            out.append(f'<conditionalFormatting sqref="{sqref}"><cfRule type="expression" dxfId="0" '
                       f'priority="{i + 1}"><formula>{_esc(expr)}</formula></cfRule></conditionalFormatting>')
        if self.validations:
            out.append(f'<dataValidations count="{len(self.validations)}">')
            for sqref, kind, f1, f2 in self.validations:
                between = ' operator="between"' if f2 else ""
                second = f"<formula2>{_esc(f2)}</formula2>" if f2 else ""
                out.append(f'<dataValidation type="{kind}"{between} allowBlank="1" showErrorMessage="1" '
                           f'sqref="{sqref}"><formula1>{_esc(f1)}</formula1>{second}</dataValidation>')
            out.append("</dataValidations>")
        out.append('<pageMargins left="0.4" right="0.4" top="0.7" bottom="0.7" header="0.3" footer="0.3"/>')
        out.append(f'<pageSetup paperSize="{paper}" orientation="landscape" fitToWidth="1" fitToHeight="0"/>')
        out.append(f"<headerFooter><oddHeader>{_esc(header)}</oddHeader><oddFooter>{_esc(footer)}</oddFooter>"
                   "</headerFooter>")
        if drawing_rid:
            out.append(f'<drawing r:id="{drawing_rid}"/>')
        out.append("</worksheet>")
        return "".join(out)


# ----------------------------------------------------------------------------- formula compiler
_TOKEN = re.compile(r"\[(\w+)(@p|@all)?\]|\{([A-Za-z]\w*):(\w+)\}|\{(\w+)\.(\w+)\}|\{(t|life)\}")


class _Compiler:
    """Turns formula templates into spreadsheet formulas for one case's layout."""

    def __init__(self, book: "_CaseLayout"):
        self.book = book

    def compile(self, template: str, sheet: str, columns: Mapping[str, int] | None = None,
                top: int = 0) -> str:
        """A Python format string with fields ``{r}`` (this row), ``{p}`` (previous row), ``{q}`` (same year on the
        loan schedule), ``{l}`` (same year on the ledger)."""
        b = self.book

        def sub(m: re.Match) -> str:
            line, mod, tag, arg, sec, key, word = m.groups()
            if line is not None:
                if columns is None or line not in columns:
                    raise KeyError(f"{sheet}: no column {line!r} for template {template!r}")
                letter = col_letter(columns[line])
                if mod == "@p":
                    return f"{letter}{{p}}"
                if mod == "@all":
                    return f"${letter}${top}:${letter}${top + N_ROWS - 1}"
                return f"{letter}{{r}}"
            if word == "t":
                return f"{_quote(b.ledger)}!$A{{l}}" if sheet != b.ledger else "$A{r}"
            if word == "life":
                return b.name("finance.stand_life_years")
            if sec is not None:
                if sec == "m":
                    return b.name(f"m.{key}")
                if sec == "k":
                    return b.name(f"k.{key}")
                if sec == "f":
                    return b.name(f"f.{key}")
                return b.name(f"{sec}.{key}")
            col_ledger = b.ledger_cols
            if tag in ("L", "L0", "L1", "Lall", "Lprev"):
                c = col_ledger[arg]
                prefix = "" if sheet == b.ledger else _quote(b.ledger) + "!"
                letter = col_letter(c)
                if tag == "L":
                    return f"{prefix}{letter}{{l}}"
                first, last = {"L0": (0, 0), "L1": (1, MAX_YEARS), "Lall": (0, MAX_YEARS),
                               "Lprev": (0, MAX_YEARS - 1)}[tag]
                ref = f"{prefix}${letter}${LEDGER_TOP + first}"
                return ref if first == last else ref + f":${letter}${LEDGER_TOP + last}"
            if tag == "F":
                prefix = "" if sheet == b.finance else _quote(b.finance) + "!"
                return f"{prefix}{col_letter(b.finance_cols[arg])}{{q}}"
            if tag == "FK":
                return _abs(b.finance, 2, b.finance_rows[arg])
            if tag == "R":
                return _abs(b.results, 3, b.result_rows[arg])
            if tag == "W":
                return _abs(b.results, 3, b.working_rows[arg])
            raise KeyError(f"unknown template field {m.group(0)!r} in {template!r}")

        return _TOKEN.sub(sub, template)


def _fill(template: str, r: int, p: int = 0, q: int = 0, l: int = 0) -> str:  # noqa: E741
    return template.replace("{r}", str(r)).replace("{p}", str(p)).replace("{q}", str(q)).replace("{l}", str(l))


# ----------------------------------------------------------------------------- one case's layout
@dataclass
class _InputRow:
    key: schema.Key
    rows: list[int]  # one row, or one per list slot
    name: str
    name_ref: str


class _CaseLayout:
    """Sheet names, defined names and cell positions of one case in a workbook."""

    def __init__(self, case: Case, prefix: str = "", sheet_prefix: str = ""):
        self.case = case
        self.prefix = prefix
        self.inputs = sheet_prefix + INPUTS
        self.ledger = sheet_prefix + LEDGER
        self.results = sheet_prefix + RESULTS
        self.finance = sheet_prefix + FINANCE
        self.carbon = sheet_prefix + CARBON
        self.notes = sheet_prefix + NOTES
        self.sensitivity = sheet_prefix + SENSITIVITY
        self.names: dict[str, str] = {}  # template key -> defined name
        self.refs: dict[str, str] = {}  # defined name -> reference
        self.system = case.unit_system
        self.currency = case.currency
        # inputs sheet rows
        self.input_rows: list[_InputRow] = []
        row = INPUT_HEAD_ROW + 1
        for k in schema.KEYS:
            n = 1
            if k.kind == "list":
                given = case.values.get(k.path)
                n = max(LIST_SLOTS, len(given) if isinstance(given, list) else 0)
            rows = list(range(row, row + n))
            row += n
            name = self._define(k.path, f"{k.section}_{k.name}")
            col = 8 if k.kind in ("float", "int", "list") else 3
            ref = _abs(self.inputs, col, rows[0], col, rows[-1]) if n > 1 else _abs(self.inputs, col, rows[0])
            self.refs[name] = ref
            self.input_rows.append(_InputRow(k, rows, name, ref))
        self.inputs_end = row - 1
        self.model_head = row + 2
        self.model_rows: dict[str, int] = {}
        row = self.model_head + 1
        for key, *_ in MODEL_PARAMETERS:
            name = self._define(f"m.{key}", f"m_{key}")
            self.refs[name] = _abs(self.inputs, 3, row)
            self.model_rows[key] = row
            row += 1
        # sections kept whole ([risk], [sensitivity]), as JSON text
        self.kept_head = row + 2
        self.kept: list[tuple[str, str]] = []
        for section in EXTENSION_SECTIONS:
            if section in case.values:
                text = json.dumps(case.values[section], sort_keys=True, separators=(",", ":"))
                self.kept.extend((section, text[i:i + _CELL_TEXT_MAX]) for i in range(0, len(text), _CELL_TEXT_MAX))
        # ledger columns
        self.ledger_cols = {"year": 1}
        for i, line in enumerate(LINE_NAMES[1:], start=2):
            self.ledger_cols[line] = i
        for j, (key, *_) in enumerate(LEDGER_CHECKS, start=len(LINE_NAMES) + 2):
            self.ledger_cols[key] = j
        # finance
        self.finance_rows = {key: 4 + i for i, (key, *_) in enumerate(FINANCE_FIGURES)}
        self.finance_cols = {key: i + 1 for i, (key, *_) in enumerate(FINANCE_SCHEDULE)}
        for key in _FINANCE_NAMED:
            name = self._define(f"f.{key}", f"f_{key}")
            self.refs[name] = _abs(self.finance, 2, self.finance_rows[key])
        # results
        self.result_rows: dict[str, int] = {}
        self.result_groups: list[tuple[int, str]] = []
        row = RESULT_HEAD_ROW + 1
        for title, names in _RESULT_GROUPS:
            self.result_groups.append((row, title))
            row += 1
            for nm in names:
                self.result_rows[nm] = row
                row += 1
        assert set(self.result_rows) == set(FIGURE_BY_NAME), set(FIGURE_BY_NAME) ^ set(self.result_rows)
        self.workings_head = row + 1
        self.working_rows = {key: self.workings_head + 1 + i for i, (key, *_) in enumerate(RESULT_WORKINGS)}
        # carbon coefficient tables (names k_...)
        self.n2o_rows = [(m, wet) for m in ("ipcc2006", "ipcc2019") for wet in (True, False)]
        self.k_top = 4
        for j, key in enumerate(("n2o_key",) + _N2O_COLUMNS):
            name = self._define(f"k.{key}", f"k_{key}")
            self.refs[name] = _abs(self.carbon, 5 + j, self.k_top, 5 + j, self.k_top + len(self.n2o_rows) - 1)
        self.gwp_reports = published.REPORTS
        self.gwp_top = self.k_top + len(self.n2o_rows) + 4
        for j, key in enumerate(("gwp_report", "gwp_n2o")):
            name = self._define(f"k.{key}", f"k_{key}")
            self.refs[name] = _abs(self.carbon, 5 + j, self.gwp_top, 5 + j, self.gwp_top + len(self.gwp_reports) - 1)
        self.compiler = _Compiler(self)

    def _define(self, key: str, name: str) -> str:
        full = self.prefix + name
        self.names[key] = full
        return full

    def name(self, key: str) -> str:
        try:
            return self.names[key]
        except KeyError:
            raise KeyError(f"formula refers to {key!r}, which has no defined name") from None


# ----------------------------------------------------------------------------- display of inputs
def _display(k: schema.Key, canonical: Any, factor: float) -> Any:
    """The value shown in the case's units: the shortest decimal that converts back exactly."""
    if canonical is None or isinstance(canonical, (str, bool)) or factor == 1.0:
        return canonical
    if isinstance(canonical, list):
        return [_display(k, v, factor) for v in canonical]
    shown = canonical / factor
    for digits in range(1, 17):
        candidate = round(shown, digits)
        if candidate * factor == canonical:
            return candidate
    return shown


def _key_unit(k: schema.Key, system: str, currency: str) -> str:
    """A key's unit as shown (``t DM/ha/yr``, ``t C/ha``): the schema names what the tonnes are of."""
    return k.unit_text(system, currency)


def _text_value(value: Any) -> str:
    return value if isinstance(value, str) else str(value)


# ----------------------------------------------------------------------------- sheet builders
class _Builder:
    """Builds the sheets of one case into a workbook."""

    def __init__(self, case: Case, ledger, results: Results, styles: _Styles, layout: _CaseLayout):
        self.case, self.frame, self.res, self.st, self.b = case, ledger, results, styles, layout
        self.cur = case.currency
        self.price_unit = "GJ" if case.price_basis == "gj" else "t DM"
        self.with_sensitivity = False

    # --- shared pieces ---------------------------------------------------------------
    def _title(self, sh: _Sheet, title: str, subtitle: str) -> None:
        sh.text(1, 1, title, self.st("title"))
        sh.text(2, 1, subtitle, self.st("subtitle"))

    def _year_table(self, sh: _Sheet, columns, top: int, label_row: int, unit_row: int, key_row: int,
                    col_of: Mapping[str, int], formats: Mapping[str, str] | None = None,
                    roles: Mapping[str, str] | None = None) -> None:
        """Header rows and one formula row per year 0..MAX_YEARS for ``columns`` of (key, label, unit, formula,
        year-0 formula) — a year-0 formula of "" leaves that cell empty."""
        st, b = self.st, self.b
        head, keyname = st("head"), st("keyname")
        for key, label, unit, formula, first in columns:
            c = col_of[key]
            sh.text(label_row, c, label, head)
            sh.text(unit_row, c, _unit_text(unit, self.cur) if unit else "", keyname)
            sh.text(key_row, c, key, keyname)
            fmt = (formats or {}).get(key) or _format_for(unit, self.cur)
            style = st((roles or {}).get(key, "computed"), fmt)
            body = _esc(b.compiler.compile(formula, sh.title, col_of, top))
            head0 = _esc(b.compiler.compile(first, sh.title, col_of, top)) if first else first
            for i in range(N_ROWS):
                r = top + i
                template = body if (i > 0 or head0 is None) else head0
                if template == "":
                    continue
                sh.formula_xml(r, c, _fill(template, r, r - 1, TABLE_TOP + i, LEDGER_TOP + i), style)

    # --- inputs ----------------------------------------------------------------------
    def inputs(self) -> _Sheet:
        case, st, b = self.case, self.st, self.b
        sh = _Sheet(b.inputs, tab=_PALETTE["input_border"])
        self._title(sh, f"Inputs: {case.name}", "Sand-coloured cells are the inputs: edit them and every figure "
                    "follows. Values are in the case's units; the canonical column (metric, per ha) feeds the model "
                    "through the defined name beside it. Every other cell is a formula.")
        sh.text(3, 1, "DEMO DATA: invented farm, field and prices." if case["case.demo"] else "", st("flag"))
        head = st("head")
        for c, label in enumerate(INPUT_COLUMNS, start=1):
            sh.text(INPUT_HEAD_ROW, c, label, head)
        label, const, computed = st("label"), st("constant", "0.0#########"), st("computed", "General")
        text = label  # source notes stay on one line: the full note is in the cell
        inp_num, inp_text = st("input", "General"), st("input", "@")
        keyname = st("keyname")
        system = b.system
        for item in b.input_rows:
            k = item.key
            spelled = units.spell(k.template, system)
            factor = k.spellings()[spelled]
            value = case.values.get(k.path)
            shown = _display(k, value, factor)
            unit = _key_unit(k, system, self.cur)
            canon_unit = _key_unit(k, "metric", self.cur)
            origin = case.origin.get(k.path, "not given")
            if origin == "preset":
                origin = f"preset {case['crop.preset']}"
            note = case.notes.get(k.path, "not used unless given" if value is None else "")
            numeric = k.kind in ("float", "int", "list")
            slots = shown if isinstance(shown, list) else [shown]
            for i, r in enumerate(item.rows):
                v = slots[i] if i < len(slots) else None
                sh.text(r, 1, k.section, label)
                sh.text(r, 2, spelled if len(item.rows) == 1 else f"{spelled}[{i + 1}]", label)
                if numeric:
                    sh.value(r, 3, v, inp_num)
                elif k.kind == "bool":
                    sh.value(r, 3, bool(v), inp_num)
                else:
                    sh.text(r, 3, "" if v is None else _text_value(v), inp_text)
                    if v in (None, ""):
                        sh.blank(r, 3, inp_text)
                sh.text(r, 4, unit, label)
                if i == 0:
                    sh.text(r, 5, origin, label)
                    sh.text(r, 6, note, text)
                    sh.text(r, 10, item.name, keyname)
                if numeric:
                    sh.number(r, 7, factor, const)
                    sh.formula(r, 8, f'IF(ISNUMBER(C{r}),C{r}*G{r},"")', computed)
                    sh.text(r, 9, canon_unit, label)
                if v is not None and v != "":
                    sh.value(r, 11, v, label)
            if k.kind == "enum":
                sh.validations.append((f"C{item.rows[0]}", "list", '"' + ",".join(k.choices) + '"', ""))
            elif k.path == "finance.stand_life_years":  # the sheets hold rows up to MAX_YEARS
                sh.validations.append((f"C{item.rows[0]}", "whole", f"{int(k.lo)}", f"{MAX_YEARS}"))
        # model parameters
        r0 = b.model_head
        sh.text(r0 - 1, 1, "Model parameters derived from the inputs", st("group"))
        for c, txt in enumerate(("Parameter", "Meaning", "Value", "Unit", "", "", "", "", "", "Defined name"), start=1):
            sh.text(r0, c, txt, head)
        for key, meaning, unit, formula in MODEL_PARAMETERS:
            r = b.model_rows[key]
            sh.text(r, 1, key, label)
            sh.text(r, 2, meaning, text)
            fmt = "@" if unit == "text" else _format_for(unit, self.cur)
            sh.formula(r, 3, b.compiler.compile(formula, sh.title), st("computed", fmt))
            sh.text(r, 4, _unit_text(unit, self.cur) if unit not in ("text", "flag") else unit, label)
            sh.text(r, 10, b.name(f"m.{key}"), keyname)
        if b.kept:
            sh.text(b.kept_head - 1, 1, "Case sections kept whole (read back by tea run; edit in the case file)",
                    st("group"))
            sh.text(b.kept_head, 1, KEPT_HEADER[0], head)
            sh.text(b.kept_head, 2, KEPT_HEADER[1], head)
            for i, (section, chunk) in enumerate(b.kept, start=1):
                sh.text(b.kept_head + i, 1, section, label)
                sh.text(b.kept_head + i, 2, chunk, st("keyname"))
        sh.widths.update({1: 13, 2: 36, 3: 18, 4: 17, 5: 20, 6: 58, 7: 16, 8: 16, 9: 17, 10: 34, 11: 12})
        sh.hidden_cols.add(11)
        sh.freeze = (INPUT_HEAD_ROW + 1, 3)
        return sh

    # --- ledger ----------------------------------------------------------------------
    def ledger(self) -> _Sheet:
        b, st = self.b, self.st
        sh = _Sheet(b.ledger, tab=_PALETTE["head_fill"])
        self._title(sh, f"Yearly ledger: {self.case.name}",
                    f"Per ha, money in {self.cur}; year 0 is planting, later years at the end of the year. "
                    f"Rows run to year {MAX_YEARS} so that the stand life can be edited; rows after it are 0.")
        columns = [("year", "Year", "yr", "{L:year}", None)]
        roles = {}
        for line in LINES[1:]:
            label, formula, first = LEDGER_FORMULAS[line.name]
            columns.append((line.name, label, line.unit, formula, first))
            if line.name in ("net_cash_flow", "total_cost", "total_revenue", "cumulative_discounted_cash_flow"):
                roles[line.name] = "key"
        columns.extend(LEDGER_CHECKS)
        groups = {line.name: line.group for line in LINES}
        seen = set()
        for key, *_ in columns[1:]:
            g = groups.get(key, "checks")
            if g not in seen:
                seen.add(g)
                sh.text(3, b.ledger_cols[key], g.capitalize(), st("group"))
        # the year column: 0, then the previous year + 1
        sh.text(LEDGER_LABEL_ROW, 1, "Year", st("head"))
        sh.text(LEDGER_UNIT_ROW, 1, "yr", st("keyname"))
        sh.text(LEDGER_KEY_ROW, 1, "year", st("keyname"))
        year_style = st("key", "0")
        sh.number(LEDGER_TOP, 1, 0, year_style)
        for i in range(1, N_ROWS):
            sh.formula(LEDGER_TOP + i, 1, f"A{LEDGER_TOP + i - 1}+1", year_style)
        self._year_table(sh, columns[1:], LEDGER_TOP, LEDGER_LABEL_ROW, LEDGER_UNIT_ROW, LEDGER_KEY_ROW,
                         b.ledger_cols, roles=roles)
        sh.widths[1] = 6
        for c in range(2, max(b.ledger_cols.values()) + 1):
            sh.widths[c] = 13.5
        sh.freeze = (LEDGER_TOP, 2)
        sh.print_titles = f"{_quote(sh.title)}!$A:$A,{_quote(sh.title)}!${LEDGER_LABEL_ROW}:${LEDGER_KEY_ROW}"
        # charts: yield by stand age
        life = self.case.stand_life
        g, s, y = (b.ledger_cols[n] for n in ("growth_t_dm", "sold_t_dm", "year"))
        rng = lambda c: _abs(sh.title, c, LEDGER_TOP, c, LEDGER_TOP + life)  # noqa: E731
        sh.charts.append(_Chart(_line_chart(
            "Yield by stand age", "t DM/ha", [(rng(g), "DM grown (autumn peak)"), (rng(s), "DM sold")], rng(y),
            kind="bar"), (2, LEDGER_TOP + N_ROWS + 1, 12, LEDGER_TOP + N_ROWS + 21)))
        return sh

    # --- results ---------------------------------------------------------------------
    def results(self) -> _Sheet:
        b, st, case = self.b, self.st, self.case
        sh = _Sheet(b.results, tab="FF6B8F71")
        metric = b.system == "metric"
        self._title(sh, f"Results: {case.name}",
                    f"Decision figures per ha and for the whole field ({case.area_ha:g} ha), money in {self.cur}; "
                    "NPV is the year-0 flow + NPV(rate, later years). Planning estimates, not financial advice.")
        cols = ["Key", "Figure", "Per ha", "Unit", "Whole field", "Unit"]
        if not metric:
            cols += ["Per acre", "Unit", "Whole field (case units)", "Unit"]
        cols.append("Note")
        head = st("head")
        for c, txt in enumerate(cols, start=1):
            sh.text(RESULT_HEAD_ROW, c, txt, head)
        note_col = len(cols)
        area = b.name("field.area_ha")
        for row, title in b.result_groups:
            sh.text(row, 2, title, st("group"))
        key_figs = {"npv", "irr", "eav_vs_current_use", "discounted_payback_year", "peak_funding_need",
                    "breakeven_price", "min_dscr", "ghg_net_t_co2e"}
        for fig in FIGURES:
            r = b.result_rows[fig.name]
            unit = fig.unit
            if fig.name.startswith("breakeven_price"):
                unit = f"money/{self.price_unit}"
            sh.text(r, 1, fig.name, st("keyname"))
            sh.text(r, 2, LABELS.get(fig.name, fig.doc.rstrip(".")), st("label"))
            fmt = "0.00%" if unit == "fraction" else _format_for(unit, self.cur)
            if fig.name in ("payback_years", "discounted_payback_years"):
                fmt = "0.00"
            role = "key" if fig.name in key_figs else "computed"
            sh.formula(r, 3, b.compiler.compile(RESULT_FORMULAS[fig.name], sh.title), st(role, fmt))
            sh.text(r, 4, _unit_text(unit, self.cur, self.price_unit), st("label"))
            whole_unit = unit.replace("/ha", "") if fig.scales else unit
            if fig.scales:
                sh.formula(r, 5, f"IF(ISNUMBER(C{r}),C{r}*{area},C{r})", st(role, fmt))
            else:
                sh.formula(r, 5, f"C{r}", st(role, fmt))
            sh.text(r, 6, _unit_text(whole_unit, self.cur, self.price_unit), st("label"))
            if not metric:
                f1, u1 = display.convert(1.0, unit, b.system)
                f2, u2 = display.convert(1.0, whole_unit, b.system)
                if fig.name.startswith("breakeven_price") and self.price_unit == "GJ":
                    f1 = f2 = 1.0
                sh.formula(r, 7, f"IF(ISNUMBER(C{r}),C{r}*{_num(f1)},C{r})", st(role, fmt))
                sh.text(r, 8, _unit_text(u1, self.cur, self.price_unit), st("label"))
                sh.formula(r, 9, f"IF(ISNUMBER(E{r}),E{r}*{_num(f2)},E{r})", st(role, fmt))
                sh.text(r, 10, _unit_text(u2, self.cur, self.price_unit), st("label"))
            if fig.name in ("irr", "irr_vs_current_use"):
                sh.formula(r, note_col, f"{_abs(b.results, 3, b.working_rows[fig.name + '_note'])}", st("label"))
            elif fig.name.startswith("breakeven_mature_yield"):
                sh.formula(r, note_col, f'IF(AND(ISNUMBER(C{r}),C{r}<0),"negative: the stand pays even with no '
                           f'harvest","")', st("label"))
            elif fig.name == "years_below_covenant":
                sh.formula(r, note_col, f"{_abs(b.finance, 2, b.finance_rows['covenant_flag'])}", st("flag"))
        sh.text(b.workings_head, 2, "Workings", st("group"))
        for key, label, unit, formula in RESULT_WORKINGS:
            r = b.working_rows[key]
            sh.text(r, 1, key, st("keyname"))
            sh.text(r, 2, label, st("label"))
            fmt = "0" if unit == "count" else ("@" if not unit else _format_for(unit, self.cur))
            sh.formula(r, 3, b.compiler.compile(formula, sh.title), st("computed", fmt))
            sh.text(r, 4, _unit_text(unit, self.cur), st("label"))
        sh.widths.update({1: 12, 2: 40, 3: 16, 4: 14, 5: 16, 6: 12, 7: 16, 8: 16, 9: 18, 10: 14})
        sh.widths[note_col] = 60
        sh.freeze = (RESULT_HEAD_ROW + 1, 3)
        # chart: cumulative discounted cash flow, with a bar at the discounted payback year
        life = case.stand_life
        lc = b.ledger_cols
        rng = lambda c: _abs(b.ledger, c, LEDGER_TOP, c, LEDGER_TOP + life)  # noqa: E731
        sh.charts.append(_Chart(_payback_chart(rng(lc["cumulative_discounted_cash_flow"]),
                                               rng(lc["chk_payback_marker"]), rng(lc["year"]), self.cur),
                                (note_col, RESULT_HEAD_ROW - 1, note_col + 8, RESULT_HEAD_ROW + 24)))
        return sh

    # --- finance ---------------------------------------------------------------------
    def finance(self) -> _Sheet:
        b, st = self.b, self.st
        sh = _Sheet(b.finance, tab="FF8A6D3B")
        self._title(sh, f"Establishment loan: {self.case.name}",
                    "Level repayment after the grace years (PMT; IPMT and PPMT split each payment), "
                    "DSCR = net cash flow before financing / debt service. Per ha, money in " + self.cur + ".")
        head = st("head")
        for c, txt in enumerate(("Loan", "Value", "Unit", "Key"), start=1):
            sh.text(3, c, txt, head)
        cols = b.finance_cols
        for key, label, unit, formula in FINANCE_FIGURES:
            r = b.finance_rows[key]
            sh.text(r, 1, label, st("label"))
            fmt = _format_for(unit, self.cur) if unit else "General"
            role = "flag" if key == "covenant_flag" else ("key" if key in FIGURE_BY_NAME else "computed")
            sh.formula(r, 2, b.compiler.compile(formula, sh.title, cols, TABLE_TOP), st(role, fmt))
            sh.text(r, 3, _unit_text(unit, self.cur), st("label"))
            sh.text(r, 4, key, st("keyname"))
        sh.text(TABLE_LABEL_ROW - 1, 1, "Amortisation schedule", st("group"))
        self._year_table(sh, FINANCE_SCHEDULE, TABLE_TOP, TABLE_LABEL_ROW, TABLE_UNIT_ROW, TABLE_KEY_ROW, cols,
                         formats={"phase": "General", "period": "0", "below_covenant": "General"},
                         roles={"below_covenant": "flag"})
        d = col_letter(cols["dscr"])
        cov = b.name("loan.dscr_covenant")
        sh.cond_formats.append((f"{d}{TABLE_TOP}:{d}{TABLE_TOP + N_ROWS - 1}",
                                f"AND(ISNUMBER({d}{TABLE_TOP}),{d}{TABLE_TOP}<{cov})"))
        sh.widths.update({1: 44, 2: 16, 3: 14, 4: 22})
        for c in range(5, len(FINANCE_SCHEDULE) + 1):
            sh.widths[c] = 15
        sh.freeze = (3, 1)
        return sh

    # --- carbon ----------------------------------------------------------------------
    def carbon(self) -> _Sheet:
        b, st, case = self.b, self.st, self.case
        sh = _Sheet(b.carbon, tab="FF3B7A57")
        self._title(sh, f"Soil carbon and greenhouse gases: {case.name}",
                    "IPCC Tier 1: SOC stock change (2006 Vol.4 Eq. 2.25), N2O from N applied (Eq. 11.1, 11.9, "
                    "11.10), GWP100; emissions positive, removals (SOC gain) negative. Per ha.")
        head = st("head")
        for c, txt in enumerate(("Carbon totals", "Per ha", "Unit", "Key"), start=1):
            sh.text(3, c, txt, head)
        for i, name in enumerate(CARBON_FIGURES):
            r = 4 + i
            fig = FIGURE_BY_NAME[name]
            sh.text(r, 1, LABELS.get(name, fig.doc.rstrip(".")), st("label"))
            sh.formula(r, 2, _abs(b.results, 3, b.result_rows[name]), st("computed", _format_for(fig.unit, self.cur)))
            sh.text(r, 3, _unit_text(fig.unit, self.cur), st("label"))
            sh.text(r, 4, name, st("keyname"))
        # published coefficients
        sh.text(b.k_top - 1, 5, "N2O factors", head)
        for j, txt in enumerate(_N2O_COLUMNS, start=6):
            sh.text(b.k_top - 1, j, txt, head)
        const = st("constant", "0.0000")
        for i, (method, wet) in enumerate(b.n2o_rows):
            r = b.k_top + i
            sh.text(r, 5, f"{method} {'wet' if wet else 'dry'}", st("constant"))
            factors = published.n2o_factors(method.removeprefix("ipcc"), wet)
            for j, name in enumerate(_N2O_COLUMNS, start=6):
                sh.number(r, j, factors[name], const)
        r = b.k_top + len(b.n2o_rows)
        for version, src in _n2o_sources().items():
            sh.text(r, 5, f"Sources ipcc{version}: {src}", st("keyname"))
            r += 1
        sh.text(b.gwp_top - 1, 5, "GWP100", head)
        sh.text(b.gwp_top - 1, 6, "N2O", head)
        for i, report in enumerate(b.gwp_reports):
            r = b.gwp_top + i
            sh.text(r, 5, report, st("constant"))
            sh.number(r, 6, published.gwp("N2O", report), st("constant", "0.0"))
        sh.text(b.gwp_top + len(b.gwp_reports), 5, "Source: " + published._data()["gwp100"]["n2o"]["source"],
                st("keyname"))
        # yearly table: links to the ledger
        sh.text(TABLE_LABEL_ROW - 1, 1, "SOC path and GHG balance by year", st("group"))
        cols = {"year": 1}
        columns = [("year", "Year", "yr", "{L:year}", None)]
        for i, line in enumerate(CARBON_LINES, start=2):
            cols[line] = i
            columns.append((line, LEDGER_FORMULAS[line][0], LINE_BY_NAME[line].unit, "{L:%s}" % line, None))
        self._year_table(sh, columns, TABLE_TOP, TABLE_LABEL_ROW, TABLE_UNIT_ROW, TABLE_KEY_ROW, cols)
        sh.widths.update({1: 30, 2: 14, 3: 13, 4: 22})
        for c in range(5, len(CARBON_LINES) + 2):
            sh.widths[c] = 13
        sh.freeze = (3, 1)
        life = case.stand_life
        rng = lambda c: _abs(sh.title, c, TABLE_TOP, c, TABLE_TOP + life)  # noqa: E731
        sh.charts.append(_Chart(_line_chart(
            "SOC stock, 0-30 cm", "t C/ha", [(rng(cols["soc_t_c"]), "under the stand"),
                                            (rng(cols["soc_current_use_t_c"]), "had the current use continued")],
            rng(cols["year"])), (len(CARBON_LINES) + 2, TABLE_LABEL_ROW - 1, len(CARBON_LINES) + 10,
                                 TABLE_LABEL_ROW + 19)))
        return sh

    # --- sensitivity -----------------------------------------------------------------
    def sensitivity(self, run) -> _Sheet:
        """What moves NPV: :func:`tea.analysis.sensitivity.sensitivity_table` as tea computed it, and a tornado chart.

        The table holds values, not formulas (each variant runs the whole
        ledger again, which a sheet cannot do live); the base figures are
        linked live to the results sheet beside the values the table was
        computed at, and a cell says whether they still agree.
        """
        from tea.analysis.sensitivity import sensitivity_table

        b, st, case, cur = self.b, self.st, self.case, self.cur
        table = sensitivity_table(run)
        moved = {m.path: m for m in run.moved}
        metric = b.system == "metric"
        per_acre = display.convert(1.0, "money/ha", b.system)[0]
        sh = _Sheet(b.sensitivity, tab=_PALETTE["input_border"])
        self._title(sh, f"Sensitivity: {case.name}",
                    "What moves NPV: each input moved alone to its low and its high value, the others at their base "
                    "values, ranked by the swing of NPV (one-factor-at-a-time ranges, the tornado diagram of "
                    f"Eschenbach 1992). Inputs in the case's units; money per ha in {cur}"
                    + ("." if metric else ", and per acre at the right."))
        sh.text(3, 1, f"Values computed by tea {__version__} when this file was written (case hash {case.hash}), "
                "not formulas: a sensitivity runs the whole ledger again for each input, which a sheet cannot do "
                "live. They do not follow edits of the Inputs sheet; after an edit, write the workbook again "
                "(tea run THIS.xlsx --xlsx NEW.xlsx --sensitivity).", st("flag"))
        money = _money_format(cur)
        const_money, live_money = st("constant", money), st("key", money)
        label, keyname = st("label"), st("keyname")
        # the base: as written (values) and now (live, from the results sheet)
        r = SENS_BASE_ROW
        npv_now, eav_now = (_abs(b.results, 3, b.result_rows[n]) for n in ("npv", "eav"))
        base_rows = (
            ("Base NPV the table was computed at", "base_npv", table.attrs["base_npv"], None, "money/ha"),
            ("Base NPV now (live: Results sheet)", "npv_now", None, npv_now, "money/ha"),
            ("Base EAV the table was computed at", "base_eav", table.attrs["base_eav"], None, "money/ha/yr"),
            ("Base EAV now (live: Results sheet)", "eav_now", None, eav_now, "money/ha/yr"),
        )
        for i, (text, key, value, formula, unit) in enumerate(base_rows):
            sh.text(r + i, 1, text, label)
            if formula is None:
                sh.number(r + i, 3, value, const_money)
            else:
                sh.formula(r + i, 3, formula, live_money)
            sh.text(r + i, 4, _unit_text(unit, cur), label)
            sh.text(r + i, 5, key, keyname)
        written, now = f"$C${r}", f"$C${r + 1}"
        sh.text(r + 4, 1, "Does the table match the inputs?", label)
        sh.formula(r + 4, 3, f"IF(ABS({now}-{written})<={_num(SENS_STALE_RTOL)}*MAX(1,ABS({written})),"
                             '"yes: the inputs are those the table was computed for",'
                             '"NO: the inputs changed after the table was computed; write the workbook again")',
                   st("flag"))
        sh.text(r + 4, 5, "current", keyname)
        # the table
        columns: list[tuple[str, str, str, int]] = [  # key, label, unit, width
            ("rank", "Rank", "", 6), ("label", "Input", "", 30), ("low_case_units", "Low", "case units", 13),
            ("high_case_units", "High", "case units", 13), ("unit_case", "Unit", "", 20),
            ("base_case_units", "Base", "case units", 13), ("range", "Low and high from", "", 36),
            ("input", "Key", "", 30)]
        figures = (("npv", "NPV", "money/ha"), ("eav", "EAV", "money/ha/yr"),
                   ("npv_vs_current_use", "NPV vs current use", "money/ha"),
                   ("eav_vs_current_use", "EAV vs current use", "money/ha/yr"))
        for fig, name, unit in figures:
            for side, word in (("low", "at low"), ("high", "at high"), ("swing", "swing")):
                columns.append((f"{fig}_{side}", f"{name} {word}", unit, 14))
        if not metric:
            for fig, name, unit in figures[:2]:
                for side, word in (("low", "at low"), ("high", "at high"), ("swing", "swing")):
                    columns.append((f"{fig}_{side}_per_acre", f"{name} {word}, per acre",
                                    unit.replace("/ha", "/acre"), 15))
        columns += [("chart_npv_change_low", "Change in NPV, input low (chart)", "money/ha", 16),
                    ("chart_npv_change_high", "Change in NPV, input high (chart)", "money/ha", 16)]
        col = {key: i for i, (key, *_) in enumerate(columns, start=1)}
        head = st("head")
        for key, text, unit, width in columns:
            c = col[key]
            sh.text(SENS_LABEL_ROW, c, text, head)
            sh.text(SENS_UNIT_ROW, c, _unit_text(unit, cur), keyname)
            sh.text(SENS_KEY_ROW, c, key, keyname)
            sh.widths[c] = width
        sh.text(SENS_LABEL_ROW - 1, 1, "Each input low and high (values computed by tea when this file was written)",
                st("group"))
        L = col_letter  # noqa: N806
        for i, row in enumerate(table.to_dict(orient="records")):
            r = SENS_TOP + i
            m = moved[row["input"]]
            f = m.display_factor(case)
            integer = float(m.low).is_integer() and float(m.high).is_integer() and float(m.base).is_integer()
            shown = st("constant", "0" if integer else "#,##0.0###")
            sh.number(r, col["rank"], int(row["rank"]), st("constant", "0"))
            sh.text(r, col["label"], row["label"], label)
            for side in ("low", "high", "base"):
                sh.number(r, col[f"{side}_case_units"], float(row[side]) * f, shown)
            sh.text(r, col["unit_case"], m.unit_text(case), label)
            sh.text(r, col["range"], row["range"], label)
            sh.text(r, col["input"], row["input"], keyname)
            for fig, _, unit in figures:
                lo, hi = L(col[f"{fig}_low"]), L(col[f"{fig}_high"])
                sh.number(r, col[f"{fig}_low"], float(row[f"{fig}_low"]), const_money)
                sh.number(r, col[f"{fig}_high"], float(row[f"{fig}_high"]), const_money)
                sh.formula(r, col[f"{fig}_swing"], f"ABS({hi}{r}-{lo}{r})", st("computed", money))
            if not metric:
                for fig, _, _ in figures[:2]:
                    for side in ("low", "high", "swing"):
                        sh.formula(r, col[f"{fig}_{side}_per_acre"], f"{L(col[f'{fig}_{side}'])}{r}*{_num(per_acre)}",
                                   st("computed", money))
            for side in ("low", "high"):
                sh.formula(r, col[f"chart_npv_change_{side}"], f"{L(col[f'npv_{side}'])}{r}-{written}",
                           st("computed", money))
        last = SENS_TOP + len(table) - 1
        sh.widths[1] = 9
        sh.heights[SENS_LABEL_ROW] = 27.6  # two lines of heading
        sh.freeze = (SENS_TOP, 3)
        rng = lambda key: _abs(sh.title, col[key], SENS_TOP, col[key], last)  # noqa: E731
        sh.charts.append(_Chart(_tornado_chart(rng("chart_npv_change_low"), rng("chart_npv_change_high"),
                                               rng("label"), cur),
                                (1, last + 2, 9, last + 2 + max(16, 2 * len(table) + 4))))
        return sh

    # --- notes -----------------------------------------------------------------------
    def notes(self) -> _Sheet:
        b, st, case = self.b, self.st, self.case
        sh = _Sheet(b.notes, tab="FF7A7A7A")
        self._title(sh, f"Notes: {case.name}", "What this workbook is, how it computes and what it is not.")
        rows: list[tuple[str, str]] = [
            ("Tool", f"tea {__version__}"),
            ("Case hash", case.hash),
            ("Case", case.name),
            ("Case file", case.source),
            ("Field", f"{case['field.name']}, {case.area_ha:g} ha"),
            ("Units", f"inputs shown in {case.unit_system} units; the ledger is per ha in t, kg, km, l and GJ; "
                      f"money in {self.cur}"),
            ("Demo data", "yes: invented farm, field and prices" if case["case.demo"] else "no"),
            ("Case notes", case["case.notes"]),
            ("", ""),
            ("How to use", "Edit the sand-coloured input cells on the Inputs sheet; every other cell is a formula "
                           "and follows. `tea run THIS.xlsx` reads the edited inputs back and computes them with "
                           "the engine."),
            ("Derived inputs", "The SOC reference stock, the current-use stock-change factors and the default "
                               "emission factors were looked up from climate, soil and land use when the workbook "
                               "was written. Changing the climate, soil or current use here does not look them up "
                               "again; `tea run THIS.xlsx` does, unless you typed over them."),
            ("Stand life", f"The sheets hold rows for years 0..{MAX_YEARS}; a stand life up to {MAX_YEARS} years "
                           "can be typed in. The charts show the years of the stand life the workbook was written "
                           "with."),
            ("NPV", "Year 0 (planting) is not discounted; every later flow falls at the end of its year and is "
                    "discounted by (1 + r)^-t. The spreadsheet NPV function discounts its first value, so NPV is "
                    "written as the year-0 flow + NPV(rate, years 1..)."),
            ("IRR", "IRR is shown only where it can be the one rate that makes NPV zero. By Descartes' rule of "
                    "signs, flows that change sign an even number of times (or never) have no single rate: the "
                    "sheet then shows a text note instead. Flows that change sign once have exactly one rate; "
                    "IRR(flows, guess = MIRR) finds it. Flows that change sign three or more (odd) times may have "
                    "several: the sheet shows the rate IRR finds and says so beside it. The engine "
                    "(tea.methods.finance.irr) reports such a rate only when it has counted exactly one root. Use MIRR "
                    "where no single IRR exists."),
            ("MIRR", "Over years 0..stand life only (trailing zero years would change its exponent), finance and "
                     "reinvestment rates as the case says (the real discount rate by default); OpenFormula MIRR."),
            ("Break-evens", "Closed form, no goal seek: NPV is linear in the price (price-driven sales x price "
                            "index x discount factor) and in the mature yield (the yield-driven money lines), so "
                            "the break-even is the value at which the straight line crosses zero."),
            ("Paybacks", "First year the cumulative (discounted) cash flow is back at or above zero after having "
                         "been below it; interpolated within that year as if its flow came evenly."),
            ("Loan", "Drawn at planting as a share of the year-0 establishment cost; grace years with interest "
                     "paid or capitalised; then a level payment (PMT) over the term, split by IPMT/PPMT. "
                     "DSCR = net cash flow before financing / debt service (7 CFR 1744.21 defines it the same "
                     "way for farm lending)."),
            ("Yield", "Mature yield x site factor x growth fraction (ramp-up list, plateau, optional compounding "
                      "decline); each harvest takes the growth since the previous harvest window; overwinter, "
                      "field and storage losses in turn; fresh tonnes at the harvest moisture (wet basis)."),
            ("SOC", "IPCC 2006 Vol.4 Ch.2 Eq. 2.25: SOC = SOC_ref x F_LU x F_MG x F_I for the current use and "
                    "the stand; the stock moves linearly over the transition years, or by first-order kinetics "
                    "if chosen. Credits: the SOC gain x 44/12 less the buffer share."),
            ("N2O", "IPCC 2006 Vol.4 Ch.11 Eq. 11.1 (direct), 11.9 and 11.10 (indirect) for synthetic N, "
                    "factors of the 2006 Guidelines or the 2019 Refinement (Carbon sheet), x 44/28 x GWP100."),
            ("Other emissions", "Diesel (IPCC 2006 Vol.2 Ch.1 factors), fertiliser manufacture and road haulage "
                                "(tea/inputs/data/ipcc.toml, each value with its source and status)."),
        ]
        for section in EXTENSION_SECTIONS:
            if section in case.values:
                rows.append((f"[{section}]", "kept whole, as JSON text, at the foot of the Inputs sheet; it is read "
                             "back by `tea run THIS.xlsx` but not used by the formulas of this workbook"))
        if self.with_sensitivity:
            rows.append(("Sensitivity", "The Sensitivity sheet holds values tea computed when it wrote this file: "
                         "each key input moved alone to its low and its high value, the whole ledger run again for "
                         "each (tea.analysis.sensitivity). They do not follow edits of the inputs; the base NPV now is a "
                         "formula on the Results sheet, and the sheet says when it no longer matches the table."))
        rows.append(("", ""))
        for i, caution in enumerate(CAUTIONS, start=1):
            rows.append(("Caution" if i == 1 else "", caution))
        if case.warnings:
            rows.append(("", ""))
            for i, w in enumerate(case.warnings):
                rows.append(("Warnings" if i == 0 else "", w))
        for i, (topic, txt) in enumerate(rows):
            r = 4 + i
            sh.text(r, 1, topic, st("group") if topic else st("label"))
            sh.text(r, 2, txt, st("text") if not topic.startswith("Caution") else st("flag_wrap"))
            lines = max(1, math.ceil(len(txt) / 125))
            if lines > 1:
                sh.heights[r] = round(13.8 * lines, 1)
        sh.widths.update({1: 18, 2: 120})
        return sh


def _n2o_sources() -> dict[str, str]:
    data = published._data()["n2o"]
    return {version: "; ".join(data[version][name]["source"] for name in _N2O_COLUMNS) for version in data}


# ----------------------------------------------------------------------------- charts
def _line_chart(title: str, y_title: str, series: Sequence[tuple[str, str]], categories: str,
                kind: str = "line") -> bytes:
    from openpyxl.chart import BarChart, LineChart, Reference, Series
    from openpyxl.xml.functions import tostring

    chart = BarChart() if kind == "bar" else LineChart()
    chart.title = title
    chart.y_axis.title = y_title
    chart.x_axis.title = "year"
    for i, (ref, name) in enumerate(series):
        ser = Series(Reference(range_string=ref), title=name)
        _colour(ser, _SERIES_COLOURS[i % len(_SERIES_COLOURS)], kind)
        chart.series.append(ser)
    chart.set_categories(Reference(range_string=categories))
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.x_axis.tickLblPos = "low"
    chart.legend.position = "b"
    return tostring(chart._write())


_SERIES_COLOURS = ("2F4F3A", "B8893A", "6B8F71")


def _colour(series, rgb: str, kind: str) -> None:
    """Give a chart series an explicit colour (a line without one may be drawn invisible)."""
    props = series.graphicalProperties
    props.line.solidFill = rgb
    if kind == "bar":
        props.solidFill = rgb
    else:
        props.line.width = 28575  # 2.25 pt in EMU
        series.smooth = False


def _payback_chart(cum: str, marker: str, years: str, currency: str) -> bytes:
    from openpyxl.chart import BarChart, LineChart, Reference, Series
    from openpyxl.xml.functions import tostring

    bar = BarChart()
    mark = Series(Reference(range_string=marker), title="discounted payback year")
    _colour(mark, _PALETTE["input_border"][2:], "bar")
    bar.series.append(mark)
    bar.set_categories(Reference(range_string=years))
    bar.gapWidth = 300
    line = LineChart()
    cum_series = Series(Reference(range_string=cum), title="cumulative discounted cash flow")
    _colour(cum_series, _PALETTE["head_fill"][2:], "line")
    line.series.append(cum_series)
    line.set_categories(Reference(range_string=years))
    bar.title = "Cumulative discounted cash flow and payback"
    bar.y_axis.title = f"{currency}/ha"
    bar.x_axis.title = "year"
    bar.x_axis.delete = False
    bar.y_axis.delete = False
    bar.x_axis.tickLblPos = "low"
    bar.legend.position = "b"
    bar += line
    return tostring(bar._write())


def _tornado_chart(low: str, high: str, labels: str, currency: str) -> bytes:
    """A native horizontal bar chart (tornado): the change in NPV with each input low and high, rank 1 on top."""
    from openpyxl.chart import BarChart, Reference, Series
    from openpyxl.xml.functions import tostring

    chart = BarChart()
    chart.type = "bar"
    chart.grouping = "clustered"
    chart.overlap = 100
    chart.gapWidth = 40
    for ref, name, rgb in ((low, "input at its low value", _PALETTE["input_border"][2:]),
                           (high, "input at its high value", _PALETTE["head_fill"][2:])):
        ser = Series(Reference(range_string=ref), title=name)
        _colour(ser, rgb, "bar")
        chart.series.append(ser)
    chart.set_categories(Reference(range_string=labels))
    chart.title = "What moves NPV: change from the base NPV"
    chart.y_axis.title = f"change in NPV [{currency}/ha]"
    chart.x_axis.scaling.orientation = "maxMin"  # the largest swing at the top
    chart.x_axis.tickLblPos = "low"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend.position = "b"
    return tostring(chart._write())


_DRAWING_NS = ('xmlns:xdr="http://schemas.openxmlformats.org/drawingml/2006/spreadsheetDrawing" '
               'xmlns:a="http://schemas.openxmlformats.org/drawingml/2006/main"')


def _drawing_xml(charts: Sequence[_Chart]) -> str:
    parts = [f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<xdr:wsDr {_DRAWING_NS}>']
    for i, ch in enumerate(charts, start=1):
        c0, r0, c1, r1 = ch.anchor
        parts.append(
            f"<xdr:twoCellAnchor><xdr:from><xdr:col>{c0}</xdr:col><xdr:colOff>0</xdr:colOff><xdr:row>{r0}</xdr:row>"
            f"<xdr:rowOff>0</xdr:rowOff></xdr:from><xdr:to><xdr:col>{c1}</xdr:col><xdr:colOff>0</xdr:colOff>"
            f"<xdr:row>{r1}</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:to>"
            f'<xdr:graphicFrame macro=""><xdr:nvGraphicFramePr><xdr:cNvPr id="{i + 1}" name="Chart {i}"/>'
            "<xdr:cNvGraphicFramePr/></xdr:nvGraphicFramePr><xdr:xfrm><a:off x=\"0\" y=\"0\"/>"
            '<a:ext cx="0" cy="0"/></xdr:xfrm><a:graphic><a:graphicData '
            'uri="http://schemas.openxmlformats.org/drawingml/2006/chart"><c:chart '
            'xmlns:c="http://schemas.openxmlformats.org/drawingml/2006/chart" '
            'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships" '
            f'r:id="rId{i}"/></a:graphicData></a:graphic></xdr:graphicFrame><xdr:clientData/></xdr:twoCellAnchor>')
    parts.append("</xdr:wsDr>")
    return "".join(parts)


# ----------------------------------------------------------------------------- the package
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_CT = "application/vnd.openxmlformats-officedocument"


def _rels(items: Iterable[tuple[str, str, str]]) -> str:
    body = "".join(f'<Relationship Id="{i}" Type="{t}" Target="{target}"/>' for i, t, target in items)
    return ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
            f'<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">{body}</Relationships>')


def _header_text(text: str, room: int) -> str:
    """Case text for a page header or footer, in ``room`` characters: '&' starts a code there, so it is doubled;
    text too long for the header's 255 characters is cut with a visible mark."""
    limit = room
    while len(shown := clip(text, limit).replace("&", "&&")) > room:
        limit -= 1
    return shown


def _package(sheets: Sequence[_Sheet], styles: _Styles, names: Mapping[str, str], title: str,
             subject: str, keywords: str, description: str, paper: int) -> bytes:
    """The .xlsx bytes: every part written in a fixed order with fixed timestamps."""
    files: list[tuple[str, str | bytes]] = []
    overrides = [("/xl/workbook.xml", f"{_CT}.spreadsheetml.sheet.main+xml"),
                 ("/xl/styles.xml", f"{_CT}.spreadsheetml.styles+xml"),
                 ("/docProps/core.xml", "application/vnd.openxmlformats-package.core-properties+xml"),
                 ("/docProps/app.xml", f"{_CT}.extended-properties+xml")]
    sheet_entries, wb_rels, defined = [], [], []
    chart_no = drawing_no = 0
    header = f"&L&\"-,Bold\"{{}}&R&A"
    header = header.format(_header_text(title, HEADER_LIMIT - len(header) + 2))
    footer = f"&Ltea {__version__}, planning estimates only&RPage &P of &N"
    sheet_parts = []
    for i, sh in enumerate(sheets, start=1):
        sheet_entries.append(f'<sheet name="{_esc(sh.title)}" sheetId="{i}" r:id="rId{i}"/>')
        wb_rels.append((f"rId{i}", f"{_REL}/worksheet", f"worksheets/sheet{i}.xml"))
        overrides.append((f"/xl/worksheets/sheet{i}.xml", f"{_CT}.spreadsheetml.worksheet+xml"))
        rid = None
        if sh.charts:
            drawing_no += 1
            rid = "rId1"
            files.append((f"xl/worksheets/_rels/sheet{i}.xml.rels",
                          _rels([("rId1", f"{_REL}/drawing", f"../drawings/drawing{drawing_no}.xml")])))
            files.append((f"xl/drawings/drawing{drawing_no}.xml", _drawing_xml(sh.charts)))
            overrides.append((f"/xl/drawings/drawing{drawing_no}.xml", f"{_CT}.drawing+xml"))
            chart_rels = []
            for j, ch in enumerate(sh.charts, start=1):
                chart_no += 1
                files.append((f"xl/charts/chart{chart_no}.xml", ch.xml))
                overrides.append((f"/xl/charts/chart{chart_no}.xml", f"{_CT}.drawingml.chart+xml"))
                chart_rels.append((f"rId{j}", f"{_REL}/chart", f"../charts/chart{chart_no}.xml"))
            files.append((f"xl/drawings/_rels/drawing{drawing_no}.xml.rels", _rels(chart_rels)))
        sheet_parts.append((f"xl/worksheets/sheet{i}.xml", sh.xml(header, footer, paper, i == 1, rid)))
        if sh.print_titles:
            defined.append(f'<definedName name="_xlnm.Print_Titles" localSheetId="{i - 1}">'
                           f"{_esc(sh.print_titles)}</definedName>")
    for name in sorted(names):
        defined.append(f'<definedName name="{name}">{_esc(names[name])}</definedName>')
    wb_rels.append((f"rId{len(sheets) + 1}", f"{_REL}/styles", "styles.xml"))
    workbook = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                '<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
                f'xmlns:r="{_REL}"><workbookPr/><bookViews><workbookView activeTab="0"/></bookViews>'
                f'<sheets>{"".join(sheet_entries)}</sheets><definedNames>{"".join(defined)}</definedNames>'
                '<calcPr calcId="191029" fullCalcOnLoad="1"/></workbook>')
    core = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
            '<cp:coreProperties xmlns:cp="http://schemas.openxmlformats.org/package/2006/metadata/core-properties" '
            'xmlns:dc="http://purl.org/dc/elements/1.1/" xmlns:dcterms="http://purl.org/dc/terms/" '
            'xmlns:dcmitype="http://purl.org/dc/dcmitype/" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            f"<dc:title>{_esc(title)}</dc:title><dc:subject>{_esc(subject)}</dc:subject>"
            f"<dc:creator>tea {__version__}</dc:creator><cp:keywords>{_esc(keywords)}</cp:keywords>"
            f"<dc:description>{_esc(description)}</dc:description>"
            f'<dcterms:created xsi:type="dcterms:W3CDTF">{DOCUMENT_TIMESTAMP}</dcterms:created>'
            f'<dcterms:modified xsi:type="dcterms:W3CDTF">{DOCUMENT_TIMESTAMP}</dcterms:modified>'
            "</cp:coreProperties>")
    app = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
           '<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/extended-properties">'
           "<Application>tea</Application><DocSecurity>0</DocSecurity><ScaleCrop>false</ScaleCrop>"
           "</Properties>")
    types = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
             '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
             '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
             '<Default Extension="xml" ContentType="application/xml"/>'
             + "".join(f'<Override PartName="{p}" ContentType="{t}"/>' for p, t in overrides) + "</Types>")
    root_rels = _rels([("rId1", f"{_REL}/officeDocument", "xl/workbook.xml"),
                       ("rId2", "http://schemas.openxmlformats.org/package/2006/relationships/metadata/core-properties",
                        "docProps/core.xml"),
                       ("rId3", f"{_REL}/extended-properties", "docProps/app.xml")])
    ordered: list[tuple[str, str | bytes]] = [
        ("[Content_Types].xml", types), ("_rels/.rels", root_rels), ("docProps/core.xml", core),
        ("docProps/app.xml", app), ("xl/workbook.xml", workbook), ("xl/_rels/workbook.xml.rels", _rels(wb_rels)),
        ("xl/styles.xml", styles.xml()), *sheet_parts, *files]
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in ordered:
            info = zipfile.ZipInfo(name, date_time=_ZIP_TIME)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o600 << 16
            zf.writestr(info, data.encode("utf-8") if isinstance(data, str) else data, compresslevel=6)
    return buf.getvalue()


def _check_ledger(case: Case, ledger) -> None:
    if ledger is not None and len(ledger) != case.stand_life + 1:
        raise ValueError(f"the ledger has {len(ledger)} rows, but case {case.name!r} has a {case.stand_life}-year "
                         "stand life: it does not belong to this case")


def _wants_sensitivity(case: Case, given: bool | None) -> bool:
    """Whether a case's sheets include the sensitivity sheet: as asked, else when the case has the section."""
    if given is not None and not isinstance(given, bool):
        raise TypeError("sensitivity: expected True, False or None")
    return given if given is not None else "sensitivity" in case.values


def _case_sheets(case: Case, ledger, results: Results, styles: _Styles, layout: _CaseLayout,
                 sensitivity: bool | None = None) -> list[_Sheet]:
    bld = _Builder(case, ledger, results, styles, layout)
    sheets = [bld.inputs(), bld.ledger(), bld.results(), bld.finance(), bld.carbon()]
    if _wants_sensitivity(case, sensitivity):
        from tea.analysis.sensitivity import run

        bld.with_sensitivity = True
        sheets.append(bld.sensitivity(run(case, with_surface=False)))
    return sheets + [bld.notes()]


def _paper(case: Case) -> int:
    return 1 if case["case.page_size"] == "Letter" else 9  # SpreadsheetML paper codes: 1 Letter, 9 A4


def workbook_bytes(case: Case, ledger=None, results: Results | None = None, sensitivity: bool | None = None) -> bytes:
    """The workbook of one case as .xlsx bytes (see :func:`write_workbook`)."""
    _check_ledger(case, ledger)
    styles = _Styles()
    layout = _CaseLayout(case)
    sheets = _case_sheets(case, ledger, results, styles, layout, sensitivity)
    return _package(sheets, styles, layout.refs, case.name, f"{case['field.name']}: stand-life economics and carbon",
                    f"tea; case {case.hash}; {case.currency}", _description([case]), _paper(case))


def _description(cases: Sequence[Case]) -> str:
    demo = any(c["case.demo"] for c in cases)
    text = (f"Written by tea {__version__}; case hash " + ", ".join(c.hash for c in cases)
            + ". Live formulas; planning estimates, not financial, tax or agronomic advice.")
    return ("DEMO DATA. " + text) if demo else text


def write_workbook(case: Case, ledger, results: Results, path: str | Path, force: bool = False,
                   sensitivity: bool | None = None) -> Path:
    """Write the live-formula workbook of one case.

    Parameters
    ----------
    case : Case
        The validated case.
    ledger : pandas.DataFrame
        Its ledger (:func:`tea.build_ledger`); checked to belong to the case.
    results : Results
        Its decision figures (:func:`tea.summarise`).
    path : str or Path
        The .xlsx file to write.
    force : bool
        Replace an existing file; otherwise an existing file raises OutputError.
    sensitivity : bool, optional
        Add the sensitivity sheet (values computed by :mod:`tea.analysis.sensitivity`
        when the file is written, and a tornado chart): by default (None)
        when the case has a ``[sensitivity]`` section; True always, False never.

    Returns
    -------
    Path
        The file written. The write is atomic: an interrupted run leaves no half-written file.
    """
    check_target(path, force)
    data = workbook_bytes(case, ledger, results, sensitivity)
    return atomic_write(path, lambda p: p.write_bytes(data), force)


def portfolio_bytes(cases: Sequence[Case], ledgers: Sequence | None = None,
                    results: Sequence[Results] | None = None, sensitivity: bool | None = None) -> bytes:
    """The workbook of several cases as .xlsx bytes (see :func:`write_portfolio`)."""
    if not cases:
        raise ValueError("a portfolio needs at least one case")
    ledgers = ledgers or [None] * len(cases)
    results = results or [None] * len(cases)
    styles = _Styles()
    width = max(2, len(str(len(cases))))
    layouts = [_CaseLayout(c, prefix=f"c{i:0{width}d}_", sheet_prefix=f"C{i:0{width}d} ")
               for i, c in enumerate(cases, start=1)]
    sheets = [_comparison_sheet(cases, layouts, styles)]
    names: dict[str, str] = {}
    for case, frame, res, layout in zip(cases, ledgers, results, layouts):
        _check_ledger(case, frame)
        sheets.extend(_case_sheets(case, frame, res, styles, layout, sensitivity))
        names.update(layout.refs)
    title = f"Portfolio of {len(cases)} cases"
    return _package(sheets, styles, names, title, "Stand-life economics and carbon, side by side",
                    "tea; " + "; ".join(f"case {c.hash}" for c in cases), _description(cases), _paper(cases[0]))


def write_portfolio(cases: Sequence[Case], ledgers: Sequence, results: Sequence[Results], path: str | Path,
                    force: bool = False, sensitivity: bool | None = None) -> Path:
    """Write one workbook holding several cases: a comparison sheet, then each case's sheets.

    Sheets of case ``i`` are named ``C01 Inputs``, ``C01 Ledger``, ... and its defined
    names carry the prefix ``c01_``. See :func:`write_workbook` for ``force``, ``sensitivity``
    (case by case) and atomicity.
    """
    check_target(path, force)
    data = portfolio_bytes(cases, ledgers, results, sensitivity)
    return atomic_write(path, lambda p: p.write_bytes(data), force)


def _comparison_sheet(cases: Sequence[Case], layouts: Sequence[_CaseLayout], styles: _Styles) -> _Sheet:
    st = styles
    sh = _Sheet(COMPARISON, tab="FF2F4F3A")
    sh.text(1, 1, f"Side by side: {len(cases)} cases", st("title"))
    sh.text(2, 1, "Every figure is a formula linking to the case's own results sheet; per ha, then whole field. "
                  "Planning estimates, not financial advice.", st("subtitle"))
    head = st("head")
    sh.text(4, 1, "Key", head)
    sh.text(4, 2, "Figure", head)
    sh.text(4, 3, "Unit", head)
    for j, case in enumerate(cases):
        c = 4 + j
        sh.text(4, c, case.name, head)
        sh.text(5, c, case["field.name"], st("label"))
        sh.text(6, c, case.currency, st("label"))
        sh.text(7, c, layouts[j].inputs.split(" ")[0], st("keyname"))
        sh.widths[c] = 18
    sh.text(5, 2, "Field", st("label"))
    sh.text(6, 2, "Currency", st("label"))
    sh.text(7, 2, "Sheets", st("label"))
    row = 9
    for block, whole in (("Per ha", False), ("Whole field", True)):
        sh.text(row, 2, block, st("group"))
        row += 1
        for fig in FIGURES:
            if whole and not fig.scales:
                continue
            sh.text(row, 1, fig.name, st("keyname"))
            sh.text(row, 2, LABELS.get(fig.name, fig.doc.rstrip(".")), st("label"))
            unit = fig.unit.replace("/ha", "") if whole else fig.unit
            sh.text(row, 3, unit.replace("money", "currency"), st("label"))
            for j, (case, lay) in enumerate(zip(cases, layouts)):
                fmt = "0.00%" if unit == "fraction" else _format_for(unit, case.currency)
                if fig.name.startswith("breakeven_price"):
                    fmt = _money_format(case.currency)
                sh.formula(row, 4 + j, _abs(lay.results, 5 if whole else 3, lay.result_rows[fig.name]),
                           st("computed", fmt))
            row += 1
        row += 1
    sh.widths.update({1: 12, 2: 36, 3: 16})
    sh.freeze = (5, 4)
    return sh


# ----------------------------------------------------------------------------- reading back
__all__ = ["write_workbook", "write_portfolio", "read_case_mapping", "workbook_bytes", "portfolio_bytes",
           "LEDGER_FORMULAS", "RESULT_FORMULAS", "MAX_YEARS"]
