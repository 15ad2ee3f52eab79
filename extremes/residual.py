r"""Non-tidal residual: observed level minus predicted tide, sample by sample.

The residual is polluted by small timing and phase errors of the prediction (METHODS sec. 8); the skew surge
(:mod:`extremes.skewsurge`) is not.

References
----------
.. [1] D. L. Pugh, *Tides, Surges and Mean Sea-Level*. Chichester, U.K.: Wiley, 1987.
"""
from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from extremes._levels import _check_level_series, _check_same_datum, _utc_index
from extremes.errors import DataError

__all__ = ["non_tidal_residual", "residual_from_prediction"]


def residual_from_prediction(level_m: pd.Series, predicted_m: Any) -> pd.Series:
    """Non-tidal residual: observed minus predicted tide, sample by sample.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index; NaN where missing. [m]
    predicted_m : pandas.Series or array-like
        Predicted astronomical tide at the same times (a Series is aligned on the index). [m]

    Returns
    -------
    pandas.Series
        NTR(t) = observed(t) - predicted(t) [1]_, named ``surge_m``, NaN where either is missing. [m]
    """
    level = _check_level_series(level_m)
    if isinstance(predicted_m, pd.Series):
        pred_index = _utc_index(predicted_m.index, "predicted_m")
        pred = pd.Series(predicted_m.to_numpy(dtype=float), index=pred_index).reindex(level.index)
        values = pred.to_numpy()
    else:
        values = np.asarray(predicted_m, dtype=float)
        if values.shape != level.shape:
            raise DataError(f"predicted_m has shape {values.shape}; expected {level.shape} like level_m")
    out = pd.Series(level.to_numpy() - values, index=level.index, name="surge_m")
    out.attrs = {**level.attrs, "units": "m", "quantity": "non-tidal residual"}
    return out


def non_tidal_residual(level_m: pd.Series, model: Any) -> pd.Series:
    """Non-tidal residual of a record against a fitted tide model.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index. [m]
    model : TideModel
        Fitted model; ``model.predict(times, include_mean=True)`` gives the predicted tide. [m]

    Returns
    -------
    pandas.Series
        Observed minus predicted, see :func:`residual_from_prediction`. [m]

    Raises
    ------
    DatumError
        If the series and the model name different datums.
    """
    level = _check_level_series(level_m)
    _check_same_datum(level, model)
    predicted = model.predict(level.index, include_mean=True)
    return residual_from_prediction(level, np.asarray(predicted, dtype=float))
