"""The command line: a thin typer layer that parses options, calls the core
and hands the result to the one renderer. Heavy modules (pandas, numpy,
rapidfuzz) are imported inside the commands that need them."""

import os
import sys

import typer
from typer.core import TyperGroup

from picker.errors import PickerError


class _Commands(TyperGroup):
    """Turns our own errors into one line on stderr and exit code 2."""

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except PickerError as exc:
            typer.echo(f"Error: {exc}", err=True)
            raise typer.Exit(2) from None


app = typer.Typer(
    cls=_Commands,
    help="Choose the discrete transistors of a battery product's power path from your "
         "own parts catalogue, at your own worst-case corners.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,  # plain help: start-up does not pay for rich's help renderer
    context_settings={"help_option_names": ["-h", "--help"]},
)
catalog_app = typer.Typer(help="Check, browse and update the parts catalogue.",
                          no_args_is_help=True, rich_markup_mode=None)
app.add_typer(catalog_app, name="catalog")


@app.callback()
def _everywhere(no_cache: bool = typer.Option(
        False, "--no-cache", help="Parse the catalogue CSV again rather than use the cache of "
        "large catalogues (also: PICKER_NO_CACHE=1).")) -> None:
    from picker.cli import common

    common.USE_CACHE = not (no_cache or os.environ.get("PICKER_NO_CACHE", "") not in ("", "0"))


# Each module registers its commands on import: one line per module.
from picker.cli import catalog_cmd  # noqa: E402,F401
from picker.cli import choose_cmd  # noqa: E402,F401
from picker.cli import import_cmd  # noqa: E402,F401
from picker.cli import lineup_cmd  # noqa: E402,F401
from picker.cli import report_cmd  # noqa: E402,F401
from picker.cli import review_cmd  # noqa: E402,F401


def _listing(group: typer.Typer) -> typer.Typer:
    """A copy of `group` whose commands take no options: all that `--help`
    at the top lists (name and summary), and much quicker for typer to build
    than every option of every command. The same help comes out (a test
    compares the two)."""
    import copy
    import inspect

    light = copy.copy(group)
    light.registered_commands = []
    for info in group.registered_commands:
        stub = copy.copy(info)
        stub.name = info.name or typer.main.get_command_name(info.callback.__name__)
        stub.help = inspect.getdoc(info.callback) if info.help is None else info.help
        stub.callback = _no_options
        light.registered_commands.append(stub)
    light.registered_groups = []
    for info in group.registered_groups:
        sub = copy.copy(info)
        sub.typer_instance = _listing(info.typer_instance)
        light.registered_groups.append(sub)
    return light


def _no_options() -> None:
    """Stands in for a command in `_listing`; never run."""


def main() -> None:
    """Console entry point: our errors exit 2 in one line; a bug exits 3.

    It leaves through `_leave`: once a command has printed its answer and
    closed its files there is nothing left to do, but Python would still take
    apart every module it loaded, which for pandas and numpy takes about a
    tenth of a second."""
    try:
        _run()
    except SystemExit as done:
        _leave(done.code)
    _leave(0)


def _leave(code) -> None:
    """Flush what was printed and end the process with exit status `code`
    (None: 0; a text: printed to stderr, status 1, as SystemExit does),
    without the interpreter's teardown. Every file picker writes is closed
    (and synced) by `safe_io` before a command returns, and its threads have
    ended."""
    if code is not None and not isinstance(code, int):
        print(code, file=sys.stderr)
        code = 1
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # a reader that went away, or a closed stream
            pass
    os._exit(code or 0)


def _run() -> None:
    try:
        if sys.argv[1:] in (["--help"], ["-h"]):
            _listing(app)()  # prints the help and exits
        app()
    except PickerError as exc:  # raised outside a command (e.g. while parsing)
        typer.echo(f"Error: {exc}", err=True)
        sys.exit(2)
    except KeyboardInterrupt:
        sys.exit(130)
    except Exception as exc:  # noqa: BLE001 - a bug: say so briefly, keep the details on request
        if os.environ.get("PICKER_DEBUG"):
            raise
        typer.echo(f"picker: internal error ({type(exc).__name__}: {exc}); "
                   "run again with PICKER_DEBUG=1 for the details and report it", err=True)
        sys.exit(3)
