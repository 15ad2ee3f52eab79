"""Atomic writing of result files and folders.

Nothing is written over existing results unless the caller says ``overwrite=True``, and a run that fails
leaves no partial results behind: files are written to a temporary sibling and renamed into place, and a
results folder is assembled in a temporary sibling folder and renamed into place when complete.
"""
from __future__ import annotations

import contextlib
import logging
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

from extremes.errors import OutputError

logger = logging.getLogger(__name__)


def write_bytes_atomic(path: str | os.PathLike, data: bytes, *, overwrite: bool = False) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder, then rename.

    Parameters
    ----------
    path : path-like
        Destination file.
    data : bytes
        Content to write.
    overwrite : bool, keyword-only
        Replace an existing file. Without it an existing file raises :class:`OutputError`.

    Returns
    -------
    pathlib.Path
        The destination path.
    """
    path = Path(path)
    if path.exists() and not overwrite:
        raise OutputError(f"{path}: already exists; pass --overwrite to replace it")
    if path.is_dir():
        raise OutputError(f"{path}: is a folder, expected a file path")
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"{path}: folder {parent} does not exist")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes the file private; results are ordinary files
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
    return path


def write_text_atomic(path: str | os.PathLike, text: str, *, overwrite: bool = False) -> Path:
    """Write ``text`` (UTF-8) atomically; see :func:`write_bytes_atomic`."""
    return write_bytes_atomic(path, text.encode("utf-8"), overwrite=overwrite)


def check_output_folder(path: str | os.PathLike, *, overwrite: bool = False) -> Path:
    """Refuse early a results folder that exists and is not empty, unless ``overwrite``.

    Call this before any long computation so that a user learns at once that nothing would be written.
    """
    path = Path(path)
    if path.exists() and not path.is_dir():
        raise OutputError(f"{path}: exists and is not a folder")
    if path.is_dir() and any(path.iterdir()) and not overwrite:
        raise OutputError(f"{path}: folder already holds results; pass --overwrite to replace them")
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"{path}: parent folder {parent} does not exist")
    return path


@contextlib.contextmanager
def output_folder(path: str | os.PathLike, *, overwrite: bool = False) -> Iterator[Path]:
    """Assemble a results folder in a temporary sibling and move it into place on success.

    Yields the temporary folder to write into. On an exception the temporary folder is removed and
    ``path`` is left as it was. With ``overwrite`` an existing folder is replaced only once the new one is
    complete.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> base = pathlib.Path(tempfile.mkdtemp())
    >>> with output_folder(base / "study") as work:
    ...     _ = (work / "results.json").write_text("{}")
    >>> sorted(p.name for p in (base / "study").iterdir())
    ['results.json']
    """
    path = check_output_folder(path, overwrite=overwrite)
    parent = path.parent if str(path.parent) else Path(".")
    work = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".tmp", dir=parent))
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(work, 0o777 & ~umask)  # mkdtemp makes the folder private; results are ordinary files
    try:
        yield work
    except BaseException:
        shutil.rmtree(work, ignore_errors=True)
        raise
    old = None
    if path.exists():
        old = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".old", dir=parent))
        os.rmdir(old)
        os.replace(path, old)
    try:
        os.replace(work, path)
    except BaseException:
        if old is not None:
            os.replace(old, path)
        shutil.rmtree(work, ignore_errors=True)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    logger.info("wrote results folder %s", path)
