"""Process forecasts: comminution and throughput, flotation recovery, leach acid, testwork
reduction, calibration to testwork, and applying the forecasts to composites, blocks and domains.

Modules
-------
comminution  Bond's third law with Rowland's efficiency factors; Morrell's SMC-based method.
hardness     Default linear hardness models (Bond Wi, A×b, Mia) on mineral groups.
throughput   Power-limited throughput and the clay handling penalty.
flotation    Kinetic recovery models; Cu and Au rougher recovery; concentrate Cu grade.
acid         Stoichiometric acid factors from formulas; gangue and oxide Cu acid.
testwork     Two-product formula and flotation test checks.
join         Overlap join of testwork intervals to composites.
calibration  scikit-learn-style estimators fitted to testwork, CV by drill hole, intervals, JSON.
apply        Forecast columns for composites and blocks; domain aggregation.
"""

from geomet.forecast.acid import (
    ACID_REACTIONS,
    acid_factor_kg_per_kg,
    acid_per_kg_cu,
    gangue_acid_kg_t,
    oxide_cu_acid_kg_t,
)
from geomet.forecast.apply import (
    FORECAST_COLUMNS,
    PlantSettings,
    add_forecasts,
    domain_forecasts,
    forecast_columns,
    specific_energy_kwh_t,
)
from geomet.forecast.calibration import (
    AcidReactivityModel,
    ConcentrateModel,
    KineticRecoveryModel,
    LinearResponseModel,
    MonotoneBoostingModel,
    calibrate_response,
    conformal_quantile,
    fit_all,
    make_model,
    model_from_json,
    model_to_json,
)
from geomet.forecast.censored import background_ratio_frac, oxide_cu_below_detection
from geomet.forecast.comminution import (
    bond_ball_mill_energy,
    bond_specific_energy,
    morrell_specific_energy,
    morrell_stage_energy,
    rowland_ef3_diameter,
    rowland_ef4_oversize,
    rowland_ef5_fineness,
)
from geomet.forecast.flotation import (
    au_recovery_frac,
    clay_rate_factor,
    cu_recovery_frac,
    first_order_recovery,
    klimpel_recovery,
    n_cell_recovery,
    rougher_copper,
)
from geomet.forecast.join import overlap_join
from geomet.forecast.testwork import (
    reduce_flotation_tests,
    two_product_recovery_frac,
    two_product_yield_frac,
)
from geomet.forecast.throughput import (
    clay_limited_throughput,
    clay_penalty_frac,
    power_limited_throughput_tph,
)

__all__ = [
    "ACID_REACTIONS",
    "FORECAST_COLUMNS",
    "AcidReactivityModel",
    "ConcentrateModel",
    "KineticRecoveryModel",
    "LinearResponseModel",
    "MonotoneBoostingModel",
    "PlantSettings",
    "acid_factor_kg_per_kg",
    "acid_per_kg_cu",
    "add_forecasts",
    "au_recovery_frac",
    "background_ratio_frac",
    "bond_ball_mill_energy",
    "bond_specific_energy",
    "calibrate_response",
    "clay_limited_throughput",
    "clay_penalty_frac",
    "clay_rate_factor",
    "conformal_quantile",
    "cu_recovery_frac",
    "domain_forecasts",
    "first_order_recovery",
    "fit_all",
    "forecast_columns",
    "gangue_acid_kg_t",
    "klimpel_recovery",
    "make_model",
    "model_from_json",
    "model_to_json",
    "morrell_specific_energy",
    "morrell_stage_energy",
    "n_cell_recovery",
    "overlap_join",
    "oxide_cu_below_detection",
    "oxide_cu_acid_kg_t",
    "power_limited_throughput_tph",
    "reduce_flotation_tests",
    "rougher_copper",
    "rowland_ef3_diameter",
    "rowland_ef4_oversize",
    "rowland_ef5_fineness",
    "specific_energy_kwh_t",
    "two_product_recovery_frac",
    "two_product_yield_frac",
]
