"""Command-line interface: a thin click layer over the library.

Each subcommand lives in its own module of this package and is loaded only when it is called, so that
``extremes --help`` starts fast. Errors raised on purpose by the library (:class:`ExtremesError`) become a
one-line message and exit status 1; invalid options exit with status 2 (click's usage errors); anything
unexpected becomes a one-line message and exit status 1. ``--debug`` shows the full traceback instead.
"""
from __future__ import annotations

import contextlib
import importlib
import importlib.util
import logging
import sys
import warnings

import click

from extremes import __version__
from extremes.errors import ExtremesError, ExtremesWarning

#: subcommand name -> module (in this package) that defines ``command``
COMMANDS: dict[str, str] = {
    "demo": "demo_cmd",
    "inspect": "inspect_cmd",
    "tide": "tide_cmd",
    "fit": "fit_cmd",
    "run": "run_cmd",
    "rerun": "rerun_cmd",
    "batch": "batch_cmd",
}


class _LazyGroup(click.Group):
    """A click group that imports a subcommand's module only when that subcommand is used."""

    def list_commands(self, ctx):
        names = [n for n, mod in COMMANDS.items() if importlib.util.find_spec(f"{__name__}.{mod}")]
        return sorted(names + list(self.commands))

    def get_command(self, ctx, name):
        if name in self.commands:
            return self.commands[name]
        module = COMMANDS.get(name)
        if module is None or importlib.util.find_spec(f"{__name__}.{module}") is None:
            return None
        return importlib.import_module(f"{__name__}.{module}").command

    def invoke(self, ctx):
        try:
            with _warnings_to_log():
                return super().invoke(ctx)
        except (click.ClickException, click.exceptions.Exit, click.Abort, KeyboardInterrupt):
            raise
        except ExtremesError as err:
            if ctx.find_root().meta.get("extremes.debug"):
                raise
            raise click.ClickException(_one_line(err)) from err
        except Exception as err:  # noqa: BLE001 - the CLI's last line of defence, never a traceback
            if ctx.find_root().meta.get("extremes.debug"):
                raise
            raise click.ClickException(
                f"internal error ({type(err).__name__}): {_one_line(err)}; rerun with --debug for details"
            ) from err


@contextlib.contextmanager
def _warnings_to_log():
    """The library's warnings (suspicious but valid input) go to the log on stderr, once each, and never stop a
    command, whatever warning filters the caller set."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ExtremesWarning)
        try:
            yield
        finally:
            log = logging.getLogger("extremes")
            for message in dict.fromkeys(str(w.message) for w in caught
                                         if issubclass(w.category, ExtremesWarning)):
                log.warning("%s", message)


def _one_line(err: BaseException) -> str:
    text = " ".join(str(err).split())
    return text or type(err).__name__


@click.group(cls=_LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", prog_name="extremes")
@click.option("-v", "--verbose", count=True, help="More log messages on stderr (repeatable).")
@click.option("-q", "--quiet", count=True, help="Fewer log messages on stderr (repeatable).")
@click.option("--debug", is_flag=True, help="Show full tracebacks on errors.")
@click.pass_context
def cli(ctx: click.Context, verbose: int, quiet: int, debug: bool) -> None:
    """Design still-water levels from a tide-gauge record.

    Still water only: wave set-up, run-up and freeboard come on top; local codes and licensed professional
    practice govern any design level.
    """
    ctx.meta["extremes.debug"] = debug
    level = max(logging.DEBUG, min(logging.CRITICAL, 30 - 10 * (verbose - quiet)))
    logger = logging.getLogger("extremes")
    logger.setLevel(level)
    if not any(getattr(h, "_extremes_cli", False) for h in logger.handlers):
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("%(levelname)s: %(message)s"))
        handler._extremes_cli = True  # type: ignore[attr-defined]
        logger.addHandler(handler)


def main(argv: list[str] | None = None) -> None:
    """Entry point of the ``extremes`` console script and of ``python -m extremes``."""
    cli.main(args=argv, prog_name="extremes")


__all__ = ["cli", "main", "COMMANDS"]
