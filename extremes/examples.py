"""Where the bundled example records of the invented harbour are.

The records live in the project's ``example_records/`` folder, which the package installs as
``extremes.example_records``. From a source checkout they are found beside the package.
"""
from __future__ import annotations

import importlib.resources
from pathlib import Path

from extremes.errors import DataError

#: the long hourly record the demo studies
DEMO_RECORD = "harbour_hourly.csv.gz"


def example_records_folder() -> Path:
    """Folder holding the example records (installed package data, or the checkout's folder)."""
    try:
        folder = Path(str(importlib.resources.files("extremes.example_records")))
        if folder.is_dir():
            return folder
    except ModuleNotFoundError:
        pass
    return Path(__file__).resolve().parents[1] / "example_records"


def example_record_path(name: str = DEMO_RECORD) -> Path:
    """Path of the bundled example record ``name``; :class:`DataError` if it is not there."""
    path = example_records_folder() / name
    if not path.is_file():
        raise DataError(f"example record {name!r} not found in {path.parent}; reinstall the package")
    return path
