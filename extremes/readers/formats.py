"""Constants of the record readers: units, column-name patterns, file signatures."""
from __future__ import annotations

import re

#: divisors used for the metric units, so that 123 cm gives exactly the float 1.23
_UNIT_DIVISOR = {"m": 1.0, "cm": 100.0, "mm": 1000.0}
#: spellings of units attributes found in NetCDF files
_NETCDF_UNITS = {
    "m": "m", "meter": "m", "meters": "m", "metre": "m", "metres": "m",
    "cm": "cm", "centimeter": "cm", "centimeters": "cm", "centimetre": "cm", "centimetres": "cm",
    "mm": "mm", "millimeter": "mm", "millimeters": "mm", "millimetre": "mm", "millimetres": "mm",
    "ft": "ft", "foot": "ft", "feet": "ft", "international_foot": "ft",
}
_OFFSET_RE = re.compile(r"^([+-])(\d{2}):(\d{2})$")
_LEVEL_NAME_RE = re.compile(r"level|height|ssh|sea|elev|stage|^wl$|^h$|^z$|^value$|^obs", re.I)
_TIME_NAME_RE = re.compile(r"time|date|stamp|^t$", re.I)
_TIME_OF_DAY_RE = re.compile(r"^\s*\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?\s*$")
_SNIFF_BYTES = 1 << 16
_NETCDF_MAGIC = (b"CDF\x01", b"CDF\x02", b"CDF\x05", b"\x89HDF\r\n\x1a\n")


