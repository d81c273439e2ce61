"""Named constants of the model: stoichiometry and unit identities, each with its source.

They appear in the workbook as defined names (never as numbers typed in a
formula) and in ``tea explain`` with their source.
"""

from __future__ import annotations

import math

from tea.model.expr import const

C_TO_CO2 = const("c_to_co2", 44.0 / 12.0, "t CO2/t C", "Mass of CO2 per mass of its carbon (44/12)",
                 "stoichiometry: molar masses of CO2 (44) and C (12)")
N2O_N_TO_N2O = const("n2o_n_to_n2o", 44.0 / 28.0, "kg N2O/kg N2O-N", "Mass of N2O per mass of its nitrogen (44/28)",
                     "stoichiometry: molar mass of N2O (44) over its two N atoms (28); IPCC 2006 Vol.4 Eq. 11.1")
KG_PER_T = const("kg_per_t", 1000.0, "kg/t", "Kilograms per tonne", "SI unit identity")
WATER_VAPORISATION = const(
    "water_vaporisation_gj_per_t", 2.443, "GJ/t water",
    "Energy to evaporate the water delivered with the fuel, per tonne of water (at 25 °C)",
    "ISO 18125:2017, net calorific value as received: q_net,ar = q_net,d (1 - M) - 2.443 M [MJ/kg]")
FIRST_ORDER_REACH = const(
    "first_order_reach", math.log(20.0), "-",
    "k D of a first-order SOC path that covers 95 % of the change within the transition period D: ln(1 / 0.05)",
    "first-order decay: 1 - exp(-k D) = 0.95 gives k D = ln(20)")
LIMESTONE_EF = const(
    "limestone_ef_t_c_per_t", 12.011 / 100.087, "t C/t", "Carbon per t of limestone (CaCO3)",
    "stoichiometry (IUPAC standard atomic weights): C / CaCO3 = 12.011 / 100.087 = 0.120; IPCC 2006 Vol.4 "
    "Ch.11 Eq. 11.12 default 0.12")
DOLOMITE_EF = const(
    "dolomite_ef_t_c_per_t", 2 * 12.011 / 184.40, "t C/t", "Carbon per t of dolomite (CaMg(CO3)2)",
    "stoichiometry (IUPAC standard atomic weights): 2 C / CaMg(CO3)2 = 24.022 / 184.40 = 0.130; IPCC 2006 "
    "Vol.4 Ch.11 Eq. 11.12 default 0.13")
UREA_EF = const(
    "urea_ef_t_c_per_t", 12.011 / 60.056, "t C/t", "Carbon per t of urea (CO(NH2)2)",
    "stoichiometry (IUPAC standard atomic weights): C / CO(NH2)2 = 12.011 / 60.056 = 0.200; IPCC 2006 Vol.4 "
    "Ch.11 Eq. 11.13 default 0.20")
UREA_N = const(
    "urea_n_t_n_per_t", 2 * 14.007 / 60.056, "t N/t", "Nitrogen per t of urea (CO(NH2)2)",
    "stoichiometry (IUPAC standard atomic weights): 2 N / CO(NH2)2 = 28.014 / 60.056 = 0.466")
REPAID_TOLERANCE = const(
    "repaid_tolerance", 1e-9, "fraction",
    "A loan balance within this share of being repaid by the year's scheduled principal is repaid in full",
    "numerical: the rounding of the repayment arithmetic, not a term of any loan")
TIE_TOLERANCE = const(
    "tie_tolerance", 1e-9, "fraction",
    "Values within this share of the lowest count as the lowest (the first such year is reported)",
    "numerical: values equal but for rounding tie, in the engine and in a spreadsheet alike")
POINTS_PER_WHOLE = const("points_per_whole", 100.0, "points", "Percentage points in a whole (a share of 1)",
                         "unit identity: 1 = 100 %")
