"""Allowance for uncertain rise on the fitted curve: Hunter's check values (METHODS sec. 11) on a Gumbel curve,
and scipy quadrature of the exact expected exceedances on GPD curves (heavy and bounded tails)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from extremes.curves import DENSE_PERIODS_YEARS as P
from extremes.curves import ReturnLevelCurve
from extremes.errors import DataError
from extremes.sealevel.allowance import allowance_on_curve, normal_rise_nodes


def _gumbel(scale):
    # Gumbel annual maxima: -ln(1 - AEP) = exp(-(z - mu)/lambda) exactly (Coles 2001 eq. 3.10)
    level = 2.0 - scale * np.log(-np.log1p(-1.0 / P))
    return ReturnLevelCurve(method="annual-maxima", periods_years=P, level_m=level, lower_m=None, upper_m=None,
                            period_definition="1/AEP")


@pytest.mark.parametrize("mean, sd, scale, expected", [(0.5, 0.15, 0.1, 0.6125), (0.5, 0.2, 0.1, 0.700),
                                                       (0.8, 0.3, 0.15, 1.100)])
def test_gumbel_curve_gives_hunters_check_values(mean, sd, scale, expected):
    # METHODS sec. 11 [C]: A = m + s^2 / (2 lambda)
    a = allowance_on_curve(_gumbel(scale), mean_m=mean, sd_m=sd)
    assert a.allowance_m == pytest.approx(expected, abs=5e-4)
    assert a.closed_form_m == pytest.approx(expected, abs=5e-4) and a.gumbel_scale_m == pytest.approx(scale, rel=1e-3)
    assert a.rise_form == "normal" and a.to_dict()["used"] == "allowance_m"


def test_sample_form_matches_normal_form():
    rng = np.random.default_rng(1)
    samples = rng.normal(0.5, 0.2, 200_000)
    a = allowance_on_curve(_gumbel(0.1), rise_samples_m=samples)
    assert a.allowance_m == pytest.approx(0.700, abs=3e-3)  # METHODS sec. 11: Monte Carlo 2e5 draws 0.6999
    nodes, w = normal_rise_nodes(0.5, 0.2)
    assert np.sum(w * nodes) == pytest.approx(0.5) and np.sqrt(np.sum(w * (nodes - 0.5) ** 2)) == pytest.approx(0.2)


@pytest.mark.parametrize("shape", [0.2, -0.2])
def test_gpd_curve_matches_quadrature_and_differs_from_closed_form(shape):
    # curve of a GPD tail (rate nu above u, 1/rate periods); truth: E[E(z0 + A - D)] = E(z0) for D ~ N(0.5, 0.2^2)
    # solved by scipy.integrate.quad and scipy.optimize.brentq on the exact rate formula (Coles 2001 eq. 4.12)
    u, sigma, nu = 1.5, 0.15, 2.0

    def rate(z):
        return nu * np.maximum(1.0 + shape * (z - u) / sigma, 1e-12) ** (-1.0 / shape)

    level = u + sigma / shape * ((nu * P) ** shape - 1.0)
    curve = ReturnLevelCurve(method="peaks-over-threshold", periods_years=P, level_m=level, lower_m=None,
                             upper_m=None, period_definition="1/rate")
    z0 = float(curve.level_at([100.0])[0])

    def gap(a):
        return integrate.quad(lambda d: rate(z0 + a - d) * stats.norm.pdf(d, 0.5, 0.2), -1.1, 2.1, limit=200)[0] \
            - rate(z0)

    truth = optimize.brentq(gap, -1.5, 2.5)
    a = allowance_on_curve(curve, mean_m=0.5, sd_m=0.2)
    assert a.allowance_m == pytest.approx(truth, abs=3e-3)
    # the closed form with the local Gumbel slope errs: low for the heavy tail (non-conservative), high for the
    # bounded one
    if shape > 0:
        assert a.closed_form_m < truth - 0.005
    else:
        assert a.closed_form_m > truth + 0.05


def test_allowance_rejects_bad_input():
    with pytest.raises(DataError, match="give rise_samples_m"):
        allowance_on_curve(_gumbel(0.1))
    with pytest.raises(DataError, match="finite"):
        allowance_on_curve(_gumbel(0.1), rise_samples_m=[0.1, np.nan])
