"""Extreme-value analysis.

Samples (annual maxima, r-largest, declustered peaks over threshold), distributions (GEV, Gumbel, GPD,
exponential) fitted by maximum likelihood or L-moments, return levels with profile-likelihood, delta-method or
bootstrap intervals, threshold choice, extremal index, non-stationary GEV and goodness of fit. Shape parameters
use the textbook sign (Coles 2001): shape > 0 is a heavy (Fréchet) tail, shape < 0 a bounded one.
"""
from extremes.extremal.dependence import extremal_index_intervals, extremal_index_runs
from extremes.extremal.diagnostics import GoodnessOfFit, aicc_table, anderson_darling, probability_plot
from extremes.extremal.direct import (
    PROFILE_PERIODS_YEARS,
    direct_annual_maxima,
    direct_peaks_over_threshold,
    direct_r_largest,
)
from extremes.extremal.distributions import (
    FIT_METHODS,
    MODELS,
    GEVFit,
    GPDFit,
    exponential_loglik,
    fit_exponential,
    fit_gev,
    fit_gev_many,
    fit_gev_rlargest,
    fit_gev_rlargest_many,
    fit_gpd,
    fit_gpd_many,
    fit_gumbel,
    gev_cdf,
    gev_exceedance_probability,
    gev_lmoment_parameters,
    gev_loglik,
    gev_quantile,
    gev_return_level,
    gev_rlargest_loglik,
    gpd_exceedance_probability,
    gpd_exceedance_rate,
    gpd_loglik,
    gpd_quantile,
    gpd_return_level,
    gumbel_loglik,
    sample_lmoments,
)
from extremes.extremal.nonstationary import NonStationaryGEVFit, fit_gev_nonstationary
from extremes.extremal.samples import (
    SAMPLE_METHODS,
    AnnualMaxima,
    Peaks,
    RLargest,
    annual_maxima,
    observed_years,
    peaks_over_threshold,
    r_largest,
    read_annual_maxima,
)
from extremes.extremal.threshold import (
    ThresholdChoice,
    mean_residual_life,
    parameter_stability,
    return_level_by_threshold,
    select_threshold,
    threshold_for_rate,
)
from extremes.extremal.uncertainty import (
    BOOTSTRAP_METHODS,
    CI_METHODS,
    bootstrap_parameters,
    delta_standard_errors,
    gev_return_level_gradient,
    profile_intervals_many,
    return_levels,
)

__all__ = [
    "FIT_METHODS", "MODELS", "CI_METHODS", "BOOTSTRAP_METHODS", "SAMPLE_METHODS",
    "GEVFit", "GPDFit", "NonStationaryGEVFit", "AnnualMaxima", "Peaks", "RLargest", "ThresholdChoice",
    "GoodnessOfFit",
    "annual_maxima", "r_largest", "peaks_over_threshold", "observed_years", "read_annual_maxima",
    "fit_gev", "fit_gumbel", "fit_gpd", "fit_exponential", "fit_gev_rlargest", "fit_gev_many", "fit_gpd_many",
    "fit_gev_rlargest_many", "fit_gev_nonstationary",
    "gev_loglik", "gumbel_loglik", "gpd_loglik", "exponential_loglik", "gev_rlargest_loglik",
    "gev_return_level", "gev_quantile", "gev_cdf", "gev_exceedance_probability", "gpd_return_level", "gpd_quantile",
    "gpd_exceedance_rate", "gpd_exceedance_probability", "sample_lmoments", "gev_lmoment_parameters",
    "return_levels", "delta_standard_errors", "gev_return_level_gradient", "bootstrap_parameters",
    "profile_intervals_many",
    "mean_residual_life", "parameter_stability", "return_level_by_threshold", "select_threshold",
    "threshold_for_rate",
    "extremal_index_runs", "extremal_index_intervals",
    "probability_plot", "anderson_darling", "aicc_table",
    "direct_annual_maxima", "direct_peaks_over_threshold", "direct_r_largest", "PROFILE_PERIODS_YEARS",
]
