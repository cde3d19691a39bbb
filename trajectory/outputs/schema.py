"""The output contract: layers, their fields, units and meanings, declared once.

The GeoPackage writer, the deficit table and the README's field tables all
read this module; ``tests/test_contract.py`` owns the contract.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Field:
    name: str
    kind: str        # 'float', 'int', 'str'
    unit: str
    description: str


def _f(name: str, kind: str, unit: str, description: str) -> Field:
    return Field(name, kind, unit, description)


STATION_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station along the centreline"),
    _f("section_id", "str", "", "Section of the conditions table the station lies in"),
    _f("x", "float", "m", "Easting of the station on the centreline (the run's projected CRS)"),
    _f("y", "float", "m", "Northing of the station on the centreline (the run's projected CRS)"),
    _f("lat", "float", "degrees", "Latitude of the station, WGS 84 (EPSG:4326)"),
    _f("lon", "float", "degrees", "Longitude of the station, WGS 84 (EPSG:4326)"),
    _f("crest_level", "float", "m",
       "Crest level assessed (DEM datum): the mean between the crest edges, or the "
       "water-side edge level where a cross-fall makes that lower; objects removed"),
    _f("required_level", "float", "m",
       "Required crest level = still water + freeboard + settlement"),
    _f("margin", "float", "m", "crest_level - required_level (negative: too low)"),
    _f("status", "str", "", "ok | watch | deficit | no_data | excluded"),
    _f("water_level", "float", "m", "Design water level of the section"),
    _f("sea_level_rise", "float", "m", "Sea-level-rise allowance"),
    _f("settlement", "float", "m", "Settlement allowance (extra construction height)"),
    _f("freeboard", "float", "m", "Freeboard: required_level - water_level - allowances"),
    _f("freeboard_eurotop", "float", "m",
       "Freeboard solving EurOtop (2018) mean overtopping for q_allow on the measured slope"),
    _f("freeboard_rule", "str", "", "Which freeboard governs: the freeboard_method or minimum"),
    _f("q_at_crest", "float", "l/s per m",
       "EurOtop (2018) mean overtopping discharge at the measured crest"),
    _f("outer_slope", "float", "n of 1:n", "Outer (water-side) slope, least-squares fit edge-toe"),
    _f("inner_slope", "float", "n of 1:n", "Inner (land-side) slope, least-squares fit edge-toe"),
    _f("crest_width", "float", "m", "Distance between the outer and inner crest edges"),
    _f("crest_offset", "float", "m",
       "Centre of the crest from the centreline, + towards the water"),
    _f("outer_toe", "float", "m", "Offset of the outer toe from the centreline (+ towards water)"),
    _f("inner_toe", "float", "m", "Offset of the inner toe from the centreline (- towards land)"),
    _f("outer_toe_level", "float", "m", "Ground level at the outer toe"),
    _f("inner_toe_level", "float", "m", "Ground level at the inner toe"),
    _f("outer_fit_rmse", "float", "m", "Root-mean-square residual of the outer slope fit"),
    _f("inner_fit_rmse", "float", "m", "Root-mean-square residual of the inner slope fit"),
    _f("nodata_fraction", "float", "fraction",
       "Share of samples without data in the levee's body, inner toe to outer toe"),
    _f("noise", "float", "m", "Robust estimate of the profile's noise (std)"),
    _f("gamma_f", "float", "-", "Roughness factor used"),
    _f("gamma_beta", "float", "-", "Oblique-wave factor used (EurOtop 2018, overtopping)"),
    # --- required level: every further term, per station, for audit (issue 4)
    _f("freeboard_method", "str", "",
       "Freeboard rule of the section: overtopping | runup | constant | cfr_riverine | "
       "cfr_coastal"),
    _f("freeboard_runup", "float", "m", "2 % wave run-up height Ru2% (EurOtop 2018 Eq. 5.1/5.2)"),
    _f("freeboard_fixed", "float", "m",
       "Constant freeboard, or the 44 CFR 65.10 freeboard (coastal: 1 ft above the greater "
       "of the 1 % wave height and the run-up)"),
    _f("freeboard_fixed_ft", "float", "ft", "The 44 CFR 65.10 freeboard in feet"),
    _f("min_freeboard", "float", "m", "Lower bound of the freeboard of the section"),
    _f("runup_level", "float", "m", "Level reached by the 2 % run-up: still water + Ru2%"),
    _f("tm10", "float", "s", "Spectral period Tm-1,0 used"),
    _f("period_source", "str", "", "tm10 (given) or tp/1.1 (derived from the peak period)"),
    _f("gamma_b", "float", "-", "Berm factor used (EurOtop 2018 Eq. 5.33-5.36; 1 without berm)"),
    _f("gamma_beta_runup", "float", "-", "Oblique-wave factor used for run-up (EurOtop 2018)"),
    _f("tan_alpha", "float", "-", "Slope tangent used in the wave formulas"),
    _f("breaker_parameter", "float", "-", "Breaker parameter xi_m-1,0 (EurOtop 2018)"),
    _f("validity_flags", "str", "",
       "Formula validity warnings, ';'-separated (see README); result kept"),
    _f("flags", "str", "", "Quality flags, ';'-separated (see README)"),
    _f("water_side", "str", "", "Side of the water relative to the digitised direction"),
    # --- uncertainty: survey accuracy carried through to the margin (uncertainty.py)
    _f("crest_sigma", "float", "m", "Standard deviation of crest_level from the DEM's accuracy"),
    _f("slope_sigma", "float", "n of 1:n", "Standard deviation of outer_slope (slope fit)"),
    _f("required_sigma", "float", "m",
       "Standard deviation of required_level from slope_sigma (freeboard's slope derivative)"),
    _f("margin_sigma", "float", "m", "Standard deviation of margin (crest and requirement)"),
    _f("p_short", "float", "probability", "P(margin < 0), normal model"),
    _f("confidence", "str", "", "firm (status holds at margin +- 2 margin_sigma) | marginal"),
    _f("sim_crest_sigma", "float", "m", "Monte Carlo std of crest_level (with --simulate)"),
    _f("sim_margin_sigma", "float", "m", "Monte Carlo std of margin (with --simulate)"),
    # --- profile reading: berms and the characteristic slope
    _f("outer_berm_level", "float", "m", "Level of the outer berm (empty where none)"),
    _f("outer_berm_width", "float", "m", "Width of the outer berm between the slope lines"),
    _f("outer_berm_slope", "float", "m/m", "Gradient of the outer berm (+ falling outward)"),
    _f("inner_berm_level", "float", "m", "Level of the inner berm (empty where none)"),
    _f("inner_berm_width", "float", "m", "Width of the inner berm between the slope lines"),
    _f("inner_berm_slope", "float", "m/m", "Gradient of the inner berm (+ falling landward)"),
    _f("outer_lower_slope", "float", "n of 1:n",
       "Lowest segment of the outer slope (below the berm or the knee; = outer_slope if one "
       "segment); extends the slope below the last dry sample"),
    _f("outer_slope_steepest", "float", "n of 1:n",
       "Steepest straight segment of the outer slope (stability, revetment)"),
    _f("inner_slope_steepest", "float", "n of 1:n", "Steepest straight segment of the inner slope"),
    _f("outer_breaks", "str", "m",
       "Outer side as a breakline: offset/level of each break, crest edge to toe (offset + "
       "towards the water)"),
    _f("inner_breaks", "str", "m", "Inner side as a breakline, crest edge to toe"),
    _f("crest_mean", "float", "m", "Mean measured level between the crest edges"),
    _f("crest_level_outer", "float", "m",
       "Level of the crest's water-side edge (cross-fall line where resolved, else the mean)"),
    _f("crest_hole", "float", "m",
       "Longest nodata hole on the crest and its shoulders (flag crest_interpolated from "
       "1.5 m, no_data beyond 5 m)"),
    _f("characteristic_slope", "float", "n of 1:n",
       "EurOtop (2018) average outer slope, SWL - 1.5 Hm0 to Ru2% or crest, berm excluded; "
       "used for the freeboard unless the section gives a design slope"),
    _f("outer_slope_source", "str", "",
       "Slope the requirement used: measured (characteristic_slope) | design (the section's "
       "design_outer_slope; flag design_slope)"),
)

# --- several surveys (trajectory.judgement.epochs): stations and stretches fields,
# the `epochs` layer
EPOCH_STATION_FIELDS: tuple[Field, ...] = (
    _f("epochs_used", "int", "", "Number of surveys in which the crest was read"),
    _f("first_year", "float", "year", "Date of the first survey read (decimal year)"),
    _f("change_previous", "float", "m", "Crest level change since the previous survey (- lower)"),
    _f("change_first", "float", "m", "Crest level change since the first survey (- lower)"),
    _f("lowering_rate", "float", "m/yr",
       "Crest lowering rate, least squares over the surveys (+ going down)"),
    _f("lowering_rate_se", "float", "m/yr",
       "Standard error of the rate: the fit's, at least what the DEM accuracy allows"),
    _f("rate_significant", "int", "", "1 where the lowering rate exceeds rate_z standard errors"),
    _f("projected_year", "float", "year",
       "Year the margin reaches zero at the lowering rate; the survey year if already below "
       "(empty: stable, rising or not significant)"),
    _f("significant_drop", "int", "",
       "1 where the crest fell since the previous survey by more than rate_z x sqrt(2) x "
       "crest_sigma"),
)
EPOCH_STRETCH_FIELDS: tuple[Field, ...] = (
    _f("mean_lowering_rate", "float", "m/yr", "Mean lowering rate of the stretch's stations"),
    _f("worst_lowering_rate", "float", "m/yr", "Largest lowering rate in the stretch"),
    _f("earliest_projected_year", "float", "year",
       "Earliest projected year of the stretch's stations (empty: none)"),
)
EPOCH_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station"),
    _f("epoch", "str", "", "Survey date as given (empty for a single undated survey)"),
    _f("year", "float", "year", "Survey date as a decimal year"),
    _f("source", "str", "", "File the survey was read from (terrain model or earlier result)"),
    _f("crest_level", "float", "m", "Crest level in this survey"),
    _f("change_previous", "float", "m", "Change since the station's previous survey"),
    _f("change_first", "float", "m", "Change since the first survey"),
    _f("margin", "float", "m", "Crest level of this survey - today's required level"),
)
STATION_FIELDS = STATION_FIELDS + EPOCH_STATION_FIELDS

# --- frequency lines and safety standards (frequency.py, held.py, economics.py)
FREQUENCY_STATION_FIELDS: tuple[Field, ...] = (
    _f("water_level_source", "str", "",
       "Where the design water level came from: given | table | decimation | gumbel "
       "(the line read at the standard)"),
    _f("standard_return_period", "float", "years",
       "Safety standard of the section as a return period (empty: none)"),
    _f("return_period_held", "float", "years",
       "Return period whose water level and waves the crest holds today (requirement without "
       "the future allowances); the range's bound where held_range is above or below"),
    _f("held_probability", "float", "per year", "1 / return_period_held"),
    _f("held_range", "str", "",
       "within | extrapolated (in the decade beyond the table, on request) | above | below "
       "the frequency line's range (empty: no line)"),
    _f("return_period_held_low", "float", "years",
       "Return period held at crest_level - 2 margin_sigma (survey accuracy)"),
    _f("held_range_low", "str", "", "held_range of return_period_held_low"),
    _f("return_period_held_future", "float", "years",
       "Return period held with the allowances (sea-level rise, settlement) of the end of "
       "the planning period"),
    _f("held_range_future", "str", "", "held_range of return_period_held_future"),
    _f("standard_level", "float", "m",
       "Crest level that holds the standard today (required level at the standard, without "
       "the allowances)"),
    _f("rise_per_decade", "float", "m",
       "Rise of that required level per factor ten in return period, around the standard"),
    _f("below_standard_year", "float", "year",
       "Year the held return period falls below the standard at the significant lowering "
       "rate; the survey year if already below (empty: not projected)"),
)
STATION_FIELDS = STATION_FIELDS + FREQUENCY_STATION_FIELDS
# --- known structures and accepted exceptions (trajectory.judgement.structures)
STATION_FIELDS = STATION_FIELDS + (
    _f("ground_crest_level", "float", "m",
       "Crest level read from the DEM (crest_level differs where a structure gives it)"),
    _f("structure_id", "str", "", "Known structure(s) or exception(s) at the station, ';'-joined"),
    _f("structure_kind", "str", "", "Their kind(s), ';'-joined"),
    _f("structure_effect", "str", "",
       "exclude (status excluded) | crest_level (crest_level is the given level) | note"),
    _f("structure_note", "str", "", "Their note(s), ';'-joined"),
)

# --- piping (backward erosion) screened on the measured profile (trajectory.inner.piping_screen)
PIPING_STATION_FIELDS: tuple[Field, ...] = (
    _f("piping_status", "str", "",
       "ok | short (seepage path shorter than a rule requires) | no_data (entry or exit not "
       "read) | not_screened (no polder_level) | excluded"),
    _f("seepage_length", "float", "m",
       "Horizontal seepage length L from the entry to the exit point"),
    _f("piping_required", "float", "m", "Seepage length the governing rule requires"),
    _f("piping_margin", "float", "m", "seepage_length - piping_required (negative: short)"),
    _f("piping_rule", "str", "", "Governing rule: bligh | lane | sellmeijer"),
    _f("piping_head", "float", "m",
       "Head difference dH = water_level + sea_level_rise - polder_level"),
    _f("piping_required_bligh", "float", "m",
       "Bligh (1910): C_B dH (empty: class not in Bligh's table)"),
    _f("piping_required_lane", "float", "m",
       "Lane (1935): horizontal length 3 C_L dH (L_v + L_h / 3 >= C_L dH, no vertical path)"),
    _f("piping_required_sellmeijer", "float", "m",
       "Sellmeijer et al. (2011): shortest L whose critical head reaches dH - 0.3 d "
       "(empty: no aquifer parameters)"),
    _f("sellmeijer_critical_head", "float", "m",
       "Sellmeijer et al. (2011) critical head H_c at the measured seepage_length"),
    _f("piping_entry", "str", "", "Entry point used: outer_toe | waterline"),
    _f("piping_entry_offset", "float", "m",
       "Offset of the entry point from the centreline (+ towards the water)"),
    _f("piping_exit", "str", "", "Exit point used: inner_toe | inner_berm_end"),
    _f("piping_exit_offset", "float", "m",
       "Offset of the exit point from the centreline (- towards land)"),
    _f("polder_level", "float", "m", "Land-side water or ground level of the section"),
    _f("subsoil_class", "str", "", "Subsoil class of the section (creep rules)"),
)
STATION_FIELDS = STATION_FIELDS + PIPING_STATION_FIELDS

#: runs of consecutive stations of one piping status
PIPING_STRETCH_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "Start of the stretch"),
    _f("line_id", "str", "", "Line the stretch belongs to (empty for a single line)"),
    _f("to_chainage", "float", "m", "End of the stretch"),
    _f("length", "float", "m", "Length of the stretch"),
    _f("status", "str", "", "piping_status of its stations: ok | short | no_data | "
       "not_screened | excluded"),
    _f("worst_margin", "float", "m", "Smallest piping_margin in the stretch"),
    _f("worst_chainage", "float", "m", "Chainage of the smallest piping_margin"),
    _f("stations", "int", "", "Number of stations in the stretch"),
    _f("seepage_length", "float", "m", "seepage_length at the worst station"),
    _f("piping_required", "float", "m", "piping_required at the worst station"),
    _f("piping_rule", "str", "", "Governing rule at the worst station"),
)

# --- inner-slope stability (trajectory.inner.stability): Bishop (1955) on the measured inner side
STABILITY_STATION_FIELDS: tuple[Field, ...] = (
    _f("stability_fos", "float", "-",
       "Least factor of safety of the inner slope over the circles searched, Bishop (1955) "
       "simplified, one homogeneous soil (empty where not screened)"),
    _f("stability_required", "float", "-",
       "Required factor of safety of the section (column required_safety_factor)"),
    _f("stability_status", "str", "",
       "ok (stability_fos >= stability_required) | short | no_data (inner side not read) | "
       "not_screened (the section gives no soil)"),
    _f("slip_centre_offset", "float", "m", "Centre of the critical circle: offset, + towards "
       "the water"),
    _f("slip_centre_level", "float", "m", "Centre of the critical circle: level (DEM datum)"),
    _f("slip_radius", "float", "m", "Radius of the critical circle"),
    _f("slip_entry", "float", "m", "Offset where the critical circle enters the ground (crest "
       "or inner slope)"),
    _f("slip_exit", "float", "m", "Offset where it leaves the ground (inner toe region or "
       "beyond)"),
    _f("phreatic_entry", "float", "m",
       "Offset where the schematised phreatic line leaves the still water on the outer slope "
       "(empty with stability_phreatic saturated)"),
    _f("phreatic_entry_level", "float", "m", "Its level: still water, at most the crest level"),
)
STATION_FIELDS = STATION_FIELDS + STABILITY_STATION_FIELDS

#: the critical circle of every screened station, drawn along its section line
SLIP_CIRCLE_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station"),
    _f("section_id", "str", "", "Section of the station"),
    *(f for f in STABILITY_STATION_FIELDS if f.name not in ("phreatic_entry",
                                                           "phreatic_entry_level")),
)

# --- what changed since the previous survey (trajectory.judgement.changes)
CHANGE_STATION_FIELDS: tuple[Field, ...] = (
    _f("status_previous", "str", "",
       "Verdict of the previous survey under today's rules (conditions, parameters, known "
       "structures) on its terrain (empty: a single survey)"),
    _f("status_delivered", "str", "",
       "Status delivered by the latest earlier result given with --compare, as stored there"),
    _f("margin_previous", "float", "m", "Margin of the previous survey under today's rules"),
    _f("margin_change", "float", "m", "margin - margin_previous (- worse now)"),
    _f("change_sigma", "float", "m",
       "Combined std of margin_change: sqrt(margin_sigma^2 + margin_sigma_previous^2)"),
    _f("verdict_change", "str", "",
       "new_deficit | resolved | worsened | improved (margin change beyond change_sigma) | "
       "unchanged (empty: no previous verdict)"),
)
STATION_FIELDS = STATION_FIELDS + CHANGE_STATION_FIELDS
CHANGE_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "Start of the stretch of change"),
    _f("line_id", "str", "", "Line the stretch belongs to (empty for a single line)"),
    _f("to_chainage", "float", "m", "End of the stretch of change"),
    _f("length", "float", "m", "Length of the stretch"),
    _f("change", "str", "", "new_deficit | resolved | worsened | improved"),
    _f("stations", "int", "", "Number of stations in the stretch"),
    _f("status_previous", "str", "", "Previous verdicts in the stretch, ';'-joined"),
    _f("status", "str", "", "Today's verdicts in the stretch, ';'-joined"),
    _f("largest_change", "float", "m",
       "margin_change of the station that changed most in the stretch's direction"),
    _f("largest_change_chainage", "float", "m", "Chainage of that station"),
    _f("margin_previous", "float", "m", "Its previous margin"),
    _f("margin", "float", "m", "Its margin today"),
    _f("change_sigma", "float", "m", "Its change_sigma"),
)

CROSS_SECTION_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station"),
    _f("crest_level", "float", "m", "Measured crest level"),
    _f("crest_width", "float", "m", "Crest width"),
    _f("outer_slope", "float", "n of 1:n", "Outer slope"),
    _f("inner_slope", "float", "n of 1:n", "Inner slope"),
    _f("status", "str", "", "Station status"),
    _f("half_width", "float", "m", "Section length on each side of the centreline"),
    # --- the station's whole profile, so any section can be opened from the GIS
    _f("profile_start", "float", "m",
       "Offset of the first sample of profile_levels (+ towards the water)"),
    _f("profile_step", "float", "m", "Spacing of the samples of profile_levels"),
    _f("profile_levels", "str", "mm",
       "Ground level of every sample across the section in whole millimetres (DEM datum), "
       "water side last, space-separated (nan: nodata); offset of sample k = profile_start "
       "+ k x profile_step"),
    _f("outer_breaks", "str", "m", "Water-side breakline as in the stations layer"),
    _f("inner_breaks", "str", "m", "Land-side breakline as in the stations layer"),
)

CREST_LINE_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "First station of this run of readable crest"),
    _f("to_chainage", "float", "m", "Last station of this run of readable crest"),
)

STRETCH_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "Start of the stretch"),
    _f("to_chainage", "float", "m", "End of the stretch"),
    _f("length", "float", "m", "Length of the stretch"),
    _f("status", "str", "", "ok | watch | deficit | no_data | excluded"),
    _f("worst_margin", "float", "m", "Smallest margin in the stretch"),
    _f("worst_chainage", "float", "m", "Chainage of the smallest margin"),
    _f("stations", "int", "", "Number of stations in the stretch"),
    # --- uncertainty (uncertainty.py)
    _f("margin_sigma", "float", "m", "margin_sigma of the worst-margin station"),
    _f("p_short", "float", "probability", "Largest p_short of the stretch's stations"),
    _f("confidence", "str", "",
       "firm | marginal (deficit: a firm deficit station; other: all stations firm)"),
    _f("marginal_stations", "int", "", "Number of marginal stations in the stretch"),
)
STRETCH_FIELDS = STRETCH_FIELDS + EPOCH_STRETCH_FIELDS

# --- outputs for the asset manager (stretch rule, report profiles)
STRETCH_FIELDS = STRETCH_FIELDS + (
    _f("absorbed", "int", "",
       "Stations of a milder status counted in this stretch by the minimum stretch length rule"),
)

# --- what each stretch holds, against the standard and the economic optimum
STRETCH_FIELDS = STRETCH_FIELDS + (
    _f("min_return_period_held", "float", "years",
       "Smallest return_period_held of the stretch's stations"),
    _f("min_held_chainage", "float", "m", "Chainage of that station"),
    _f("min_held_range", "str", "", "held_range of that station"),
    _f("standard_return_period", "float", "years", "Standard of that station's section"),
    _f("below_standard", "float", "",
       "1 where min_return_period_held is below the standard (empty where either is missing)"),
    _f("economic_return_period", "float", "years",
       "van Dantzig (1956) economic optimum of that station's section, as a return period"),
)

# --- the raise that closes each stretch, and its rank (judgement/stretch_table.py)
STRETCH_FIELDS = STRETCH_FIELDS + (
    _f("crest_raise", "float", "m", "Crest raise that closes the stretch's gap: the raise "
       "option's (whole_stretch, incl. settlement of new fill); else required - crest"),
    _f("length_to_raise", "float", "m",
       "Chainage length whose crest is below the required level"),
    _f("fill_volume", "float", "m3",
       "Estimated fill of that raise, keeping crest width and slopes"),
    _f("severity_rank", "int", "",
       "1 = the worst margin of the line(s), then in order (no_data last)"),
)

#: per section: the classic van Dantzig (1956) single-section optimum (economics.py)
ECONOMICS_FIELDS: tuple[Field, ...] = (
    _f("line_id", "str", "", "Line the section belongs to (empty for a single line)"),
    _f("section_id", "str", "", "Section"),
    _f("standard_return_period", "float", "years", "Safety standard of the section"),
    _f("weakest_chainage", "float", "m", "Station holding the smallest return period"),
    _f("return_period_held", "float", "years", "What that station holds today"),
    _f("crest_level", "float", "m", "Its crest level"),
    _f("standard_level", "float", "m", "Its crest level needed for the standard today"),
    _f("flood_damage", "float", "currency", "V: damage of a flood behind the section"),
    _f("discount_rate", "float", "per year", "delta: net of economic growth"),
    _f("alpha", "float", "1/m",
       "1 / (d required level / d ln T) around the standard (median over the stations)"),
    _f("marginal_cost", "float", "currency per m",
       "I': cost of one more metre of raise over the section (fill volume x fill_unit_cost "
       "+ raise_fixed_cost x km)"),
    _f("optimal_raise", "float", "m",
       "X* = ln(alpha V P0 / (delta I')) / alpha, P0 = 1 / return_period_held (0 if negative)"),
    _f("optimal_level", "float", "m",
       "crest_level + X*: the crest level of probability P* (below the crest where no raise "
       "pays)"),
    _f("optimal_probability", "float", "per year", "P* = delta I' / (alpha V)"),
    _f("optimal_return_period", "float", "years", "1 / optimal_probability"),
)

SECTION_PROFILE_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station (worst station of a severe stretch)"),
    _f("offset", "float", "m", "Offset from the centreline, + towards the water"),
    _f("level", "float", "m", "Ground level sampled from the DEM (NaN: nodata)"),
)

OPTION_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "Start of the stretch"),
    _f("line_id", "str", "", "Line the stretch belongs to (empty for a single line)"),
    _f("to_chainage", "float", "m", "End of the stretch"),
    _f("length", "float", "m", "Length of the stretch"),
    _f("status", "str", "",
       "Status of the stretch (deficit, or watch on request; short for a stability_berm)"),
    _f("basis", "str", "", "whole_stretch: one design over the stretch, sized so every "
       "station reaches the target; every_station: each station's own design, summed"),
    _f("option", "str", "",
       "raise | outer_berm | combined (crest) | piping_berm (a stretch short on piping: an "
       "inner berm lengthening the seepage path) | stability_berm (inner slope: berm_level "
       "and berm_width of a berm on the inner side, status short)"),
    _f("chainage", "float", "m",
       "Station that governs the design: least margin with it built in (whole_stretch)"),
    _f("crest_raise", "float", "m", "Crest raise, incl. the settlement allowance of new fill"),
    _f("berm_level", "float", "m", "Level of the outer berm (DEM datum); piping_berm: level of "
       "its top (inner toe level + piping_berm_thickness)"),
    _f("berm_width", "float", "m", "Width added to the outer berm (the measured one, or new); "
       "piping_berm: its length landward of the exit point (the seepage deficit closed)"),
    _f("fill_volume", "float", "m3", "Fill volume over the stretch (screening estimate)"),
    _f("footprint_outer", "float", "m", "Widening of the footprint on the outer side"),
    _f("footprint_inner", "float", "m", "Widening of the footprint on the inner side"),
    _f("gamma_b", "float", "-", "Berm influence factor EurOtop (2018) of the option"),
    _f("closes_gap", "int", "",
       "1 where every station's margin, recomputed with the option built in under the "
       "status's rule (characteristic slope, measured berm), reaches the target"),
    _f("remaining_deficit", "float", "m", "What is still short where the option cannot close"),
    _f("cost", "float", "cost units",
       "fill_volume x fill_unit_cost: an order-of-magnitude estimate"),
    _f("cheapest", "int", "", "1 for the least-fill option that closes the gap (a "
       "stability_berm: 1 where it closes its stretch's stability gap)"),
    _f("fos_with_option", "float", "-",
       "stability_berm: least factor of safety over the stretch with the berm built in "
       "(Bishop 1955, the same search; empty for the crest options)"),
)

STRUCTURE_FIELDS: tuple[Field, ...] = (
    _f("structure_id", "str", "", "Id of the structure or exception (S1, S2, ... if not given)"),
    _f("line_id", "str", "", "Line it belongs to (empty: every line)"),
    _f("kind", "str", "",
       "ramp | gate | culvert | crossing | crest_wall | accepted | scheduled | other"),
    _f("effect", "str", "", "exclude | crest_level | note"),
    _f("from_chainage", "float", "m", "Start (as given, or the first station a polygon covers)"),
    _f("to_chainage", "float", "m", "End (as given, or the last station a polygon covers)"),
    _f("crest_level", "float", "m", "Level used as the crest (effect crest_level: wall top, sill)"),
    _f("note", "str", "", "The manager's note"),
    _f("stations", "int", "", "Number of stations it covers in this run"),
)

DEM_EXTENT_FIELDS: tuple[Field, ...] = (
    _f("dem", "str", "", "File name of the terrain model (the survey that gives the status)"),
    _f("cell_size", "float", "m", "Its cell size"),
    _f("columns", "int", "", "Its width in cells"),
    _f("rows", "int", "", "Its height in cells"),
)

METADATA_FIELDS: tuple[Field, ...] = (
    _f("key", "str", "", "Item of the run's metadata"),
    _f("value", "str", "", "Its value"),
)

#: layer name -> (geometry type or None, fields)
LAYERS: dict[str, tuple[str | None, tuple[Field, ...]]] = {
    "stations": ("Point", STATION_FIELDS),
    "cross_sections": ("LineString", CROSS_SECTION_FIELDS),
    "crest_line": ("LineString Z", CREST_LINE_FIELDS),
    "stretches": ("LineString", STRETCH_FIELDS),
    "options": ("LineString", OPTION_FIELDS),
    "run_metadata": (None, METADATA_FIELDS),
    "epochs": ("Point", EPOCH_FIELDS),
    "section_profiles": (None, SECTION_PROFILE_FIELDS),
    "economics": (None, ECONOMICS_FIELDS),
    "structures": (None, STRUCTURE_FIELDS),
    "piping_stretches": ("LineString", PIPING_STRETCH_FIELDS),
    "slip_circles": ("LineString Z", SLIP_CIRCLE_FIELDS),
    "changes": ("LineString", CHANGE_FIELDS),
    "dem_extent": ("Polygon", DEM_EXTENT_FIELDS),
}

#: raster tables of the GeoPackage (GeoPackage tiles): name -> what it holds
RASTERS: dict[str, str] = {
    "terrain_shade": "Hillshade of the terrain model along the line, for context (Horn 1981 "
                     "slope and aspect, sun at azimuth 315 and altitude 45 degrees as gdaldem "
                     "hillshade; 1 + 254 x illumination, 0 no value), decimated to at most "
                     "800 pixels across; written with a report (--report), absent where the line's "
                     "extent holds no DEM value",
}

#: what each layer holds, one line each (gpkg_contents.description)
LAYER_DESCRIPTIONS: dict[str, str] = {
    "stations": "One point per cross-section: measured crest, required level, margin, status "
                "(screening estimate; review by a qualified engineer)",
    "cross_sections": "The cross-section of each station with its sampled ground profile",
    "crest_line": "The measured crest in 3-D, one line per run of readable stations",
    "stretches": "Consecutive stations of one status merged, with the worst margin",
    "options": "Reinforcement options per deficit stretch, basis and option (screening "
               "estimates), drawn offset to the land side so they do not stack",
    "run_metadata": "The run: software, inputs and checksums, parameters, caution",
    "epochs": "One point per station and survey: crest level, change, margin",
    "section_profiles": "Ground profiles of the stations the report draws (long table)",
    "economics": "van Dantzig (1956) economic optimum per section",
    "structures": "Known structures and accepted exceptions applied before the verdict",
    "changes": "Stretches whose verdict changed since the previous survey: new deficits, "
               "resolved, worsened, improved",
    "piping_stretches": "Consecutive stations of one piping status (screening of geometry "
                        "with schematised soil, not a geotechnical assessment)",
    "slip_circles": "The critical slip circle (Bishop 1955) of each station screened for "
                    "inner-slope stability, drawn in its section's vertical plane",
    "dem_extent": "Footprint of the terrain model (its bounds), for context in the GIS view",
}

# --- several lines in one run: the spatial layers lead with the line's id
LINE_ID_FIELD = _f("line_id", "str", "",
                   "Id of the centreline (its --line-id-field value; empty for a single line)")
# (after the leading chainage field, so tables open on the chainage, frozen beside the header)
for _name in ("stations", "cross_sections", "crest_line", "stretches", "slip_circles"):
    _fields = LAYERS[_name][1]
    LAYERS[_name] = (LAYERS[_name][0], (_fields[0], LINE_ID_FIELD, *_fields[1:]))


def field_names(layer: str) -> list[str]:
    return [f.name for f in LAYERS[layer][1]]


def markdown_table(layer: str) -> str:
    """The layer's fields as a Markdown table (for the README)."""
    rows = ["| field | unit | meaning |", "|---|---|---|"]
    rows += [f"| `{f.name}` | {f.unit} | {f.description} |" for f in LAYERS[layer][1]]
    return "\n".join(rows)


def refresh_readme(text: str) -> str:
    """Rewrite the field tables between ``<!-- fields:LAYER -->`` and ``<!-- /fields -->``."""
    import re

    def table(match: re.Match) -> str:
        return f"<!-- fields:{match[1]} -->\n{markdown_table(match[1])}\n<!-- /fields -->"

    return re.sub(r"<!-- fields:(\w+) -->.*?<!-- /fields -->", table, text, flags=re.S)


if __name__ == "__main__":  # python -m trajectory.outputs.schema README.md docs/outputs.md
    import sys
    from pathlib import Path

    from ..inputs.conditions import refresh_readme_tables

    for arg in sys.argv[1:]:
        p = Path(arg)
        text = refresh_readme(p.read_text(encoding="utf-8"))
        p.write_text(refresh_readme_tables(text), encoding="utf-8")
