"""Extreme-value analysis: samples (annual maxima, r-largest, peaks over threshold), distributions (GEV,
Gumbel, GPD, exponential), return levels with intervals, threshold choice, extremal index, non-stationary GEV
and goodness of fit. Shape parameters use the textbook sign (Coles 2001): shape > 0 is a heavy tail."""
from extremes.extremal.distributions import (  # noqa: F401
    FIT_METHODS, MODELS, GEVFit, GPDFit, exponential_loglik, fit_exponential, fit_gev, fit_gev_many, fit_gpd,
    fit_gpd_many, fit_gumbel, gev_cdf, gev_exceedance_probability, gev_loglik, gev_quantile, gev_return_level,
    gev_rlargest_loglik, gpd_exceedance_probability, gpd_exceedance_rate, gpd_loglik, gpd_return_level,
    gumbel_loglik, sample_lmoments, gev_lmoment_parameters, fit_gev_rlargest, fit_gev_rlargest_many,
)
from extremes.extremal.uncertainty import (  # noqa: F401
    BOOTSTRAP_METHODS, CI_METHODS, bootstrap_parameters, delta_standard_errors, gev_return_level_gradient,
    profile_intervals_many, return_levels,
)
