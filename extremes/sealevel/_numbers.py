"""Small helpers shared by the sea-level-rise modules."""
from __future__ import annotations

import logging
import math

import numpy as np

logger = logging.getLogger(__name__)



def _clean(values) -> list:
    """Finite floats, None for anything else (strict JSON)."""
    return [None if not math.isfinite(float(v)) else float(v) for v in np.atleast_1d(values)]
