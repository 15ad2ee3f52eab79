"""extremes: design still-water levels from long tide-gauge records.

The package reads and quality-controls a gauge record, separates the astronomical tide from the surge,
fits extreme-value models, combines tide and surge by joint probability into still-water return levels,
applies sea-level-rise offsets and writes a study a reviewing engineer can follow.

Still water only: wave set-up, run-up and freeboard come on top. Local codes and licensed professional
practice govern any design level.
"""
import logging

__version__ = "0.1.0"

logging.getLogger(__name__).addHandler(logging.NullHandler())

__all__ = ["__version__"]
