"""NetCDF records (CF conventions): a water-level variable on a UTC time coordinate."""
from __future__ import annotations

import logging
import re
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.readers.formats import _NETCDF_UNITS
from extremes.readers.text import _short

logger = logging.getLogger(__name__)


# ----------------------------------------------------------------------------------------------------------
# NetCDF
# ----------------------------------------------------------------------------------------------------------
def _read_netcdf(path: Path, *, variable, units, offset, utc_offset):
    import xarray as xr

    source = str(path)
    try:
        dataset = xr.open_dataset(path, engine="netcdf4")
    except Exception as err:  # noqa: BLE001 - any backend failure is a bad file to the user
        raise DataError(f"{source}: cannot be read as NetCDF ({_short(err)})") from None
    with dataset:
        def on_time(name):
            var = dataset[name]
            return (var.ndim == 1 and np.issubdtype(dataset[var.dims[0]].dtype, np.datetime64)
                    and np.issubdtype(var.dtype, np.number))

        names = [str(n) for n in dataset.data_vars]
        if variable is not None:
            if variable not in dataset.variables:
                raise DataError(f"{source}: no variable named {variable!r}; available variables: "
                                f"{', '.join(map(repr, names))}")
            if not on_time(variable):
                raise DataError(f"{source}: variable {variable!r} is not a 1-D numeric variable on a time "
                                f"coordinate (dims {dataset[variable].dims})")
            chosen = variable
        else:
            candidates = [n for n in names if on_time(n)]
            if not candidates:
                raise DataError(f"{source}: no 1-D numeric variable on a time coordinate among "
                                f"{', '.join(map(repr, names)) or 'no variables'}")
            if len(candidates) > 1:
                def levelish(n):
                    std = str(dataset[n].attrs.get("standard_name", ""))
                    return (std.startswith(("sea_surface_height", "water_surface_height", "sea_level"))
                            or bool(re.search(r"water_level|sea_level|waterlevel|ssh", n + " " + std, re.I)))
                named = [n for n in candidates if levelish(n)]
                if len(named) != 1:
                    raise DataError(f"{source}: several variables on time ({', '.join(map(repr, candidates))}); "
                                    f"choose one with --variable NAME")
                candidates = named
            chosen = candidates[0]
        var = dataset[chosen]
        attr_units = var.attrs.get("units")
        if attr_units is not None:
            key = str(attr_units).strip().lower()
            if key not in _NETCDF_UNITS:
                raise DataError(f"{source}: variable {chosen!r} has units {attr_units!r}; expected one of m, "
                                f"cm, mm, ft (or their spelled-out names)")
            file_units = _NETCDF_UNITS[key]
            if units != "m" and units != file_units:
                raise DataError(f"{source}: --units {units} contradicts the units attribute {attr_units!r} of "
                                f"variable {chosen!r}")
        else:
            file_units = units
        times = pd.DatetimeIndex(var[var.dims[0]].values)
        values = np.asarray(var.values, dtype=float)
    if times.isna().any():
        raise DataError(f"{source}: variable {chosen!r}: the time coordinate holds missing values")
    if times.tz is None:
        if offset is not None:
            index = (times - offset).tz_localize("UTC")
            applied = utc_offset
        else:
            index = times.tz_localize("UTC")
            applied = "+00:00 (CF time units)"
    else:
        index = times.tz_convert("UTC")
        applied = "from stamps"
    index = index.rename("time")
    if len(index) == 0:
        raise DataError(f"{source}: variable {chosen!r} holds no values")
    meta = {"format": "netcdf", "variable": chosen, "units_attribute": attr_units,
            "utc_offset_applied": applied}
    return pd.Series(values, index=index), file_units, meta


