"""Entry point of the ``mapsection`` command.

Each command lives in its own module of this package (``mapsection/cli/<name>.py``)
and exposes a click command named ``command``; it is imported only when used: the
command list of ``mapsection --help`` comes from :data:`COMMANDS`, so the group's help
imports no command, no check and no heavy library.
"""

from __future__ import annotations

import importlib
import sys
import textwrap

import click

from .. import __version__
from ..caution import CAUTION
from ..errors import MapsectionError

# command name -> (module holding it, the first sentence of its help), in the order --help
# lists them (tests/test_imports.py keeps the sentences equal to the commands' own help)
COMMANDS = {
    "profile": ("profile", "Sample the DEM along a section line and write the profile as CSV."),
    "dips": ("dips", "Project the bedding attitudes within a corridor into the section plane."),
    "axis": ("axis", "Fold axis of the bedding: the pi-axis of the pole orientation tensor "
                     "(Woodcock 1977)."),
    "column": ("column", "Measure each unit's thickness from the map: contacts on the DEM "
                         "fitted by planes."),
    "build": ("build", "Construct the draft section of each section line of a project and "
                       "write its outputs."),
    "check": ("check", "Run the topography, restoration, area-balance and kinematics tests "
                       "and print a table."),
    "demo": ("demo", "Build every section of the sample area (invented data) into OUTDIR, "
                     "and its flawed variant."),
    "view": ("view", "Open the section page: draw and move section lines on the map, watch the "
                     "section redraw."),
}

HELP = f"""Draft geological cross-sections from a geologic map, a DEM and strike/dip data,
and the checks that show whether a section balances.

\b
{textwrap.fill("CAUTION: " + CAUTION, 78)}

Run 'mapsection COMMAND --help' for each command; the user guide is in docs/.
"""


# Commands that can run for long: their progress is shown from the start (see _progress).
_LONG = ("build", "check", "demo")


def _short(text: str, limit: int) -> str:
    """A command's first sentence, cut at a word to ``limit`` characters ("..." added)."""
    if len(text) <= limit:
        return text
    cut = text[: max(limit - 3, 1)].rsplit(" ", 1)[0]
    return cut.rstrip(" ,;:") + "..."


class _LazyGroup(click.Group):
    def resolve_command(self, ctx: click.Context, args: list[str]):
        if args and args[0] in _LONG and not {"-h", "--help"} & set(args[1:]):
            from ._progress import start_progress

            start_progress(ctx)  # before the command's libraries are imported
        return super().resolve_command(ctx, args)

    def list_commands(self, ctx: click.Context) -> list[str]:
        return [n for n in COMMANDS
                if importlib.util.find_spec(f"{__package__}.{COMMANDS[n][0]}")]

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        if name not in COMMANDS:
            return None
        module = f"{__package__}.{COMMANDS[name][0]}"
        try:
            mod = importlib.import_module(module)
        except ModuleNotFoundError as exc:
            if exc.name == module:
                return None
            raise
        return mod.command

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        """The command list from :data:`COMMANDS`, as click lays it out, importing none."""
        names = self.list_commands(ctx)
        if not names:
            return
        limit = formatter.width - 6 - max(len(n) for n in names)
        rows = [(n, _short(COMMANDS[n][1], limit)) for n in names]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except MapsectionError as exc:
            if ctx.obj and ctx.obj.get("debug"):
                raise
            click.echo(f"mapsection: error: {exc}", err=True)
            ctx.exit(2)
        except click.exceptions.NoArgsIsHelpError:
            raise
        except click.UsageError as exc:
            # A mistyped command line is bad input too: one line, exit code 2.
            path = exc.ctx.command_path if exc.ctx is not None else "mapsection"
            why = exc.format_message().rstrip(".")
            click.echo(f"mapsection: error: {path}: {why} (see '{path} --help')", err=True)
            ctx.exit(2)
        except (KeyboardInterrupt, click.exceptions.Exit, click.ClickException, click.Abort):
            raise
        except BrokenPipeError:  # output piped into e.g. `head`, which stopped reading
            sys.stderr.close()
            ctx.exit(1)
        except Exception as exc:  # an unexpected failure: still one line unless --debug
            if ctx.obj and ctx.obj.get("debug"):
                raise
            first = str(exc).splitlines()[0] if str(exc) else ""
            click.echo(
                f"mapsection: internal error: {type(exc).__name__}: {first} (rerun with --debug)",
                err=True,
            )
            ctx.exit(3)


@click.group(
    "mapsection",
    cls=_LazyGroup,
    help=HELP,
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.version_option(__version__, prog_name="mapsection")
@click.option("--debug", is_flag=True, help="Show full tracebacks on errors.")
@click.pass_context
def cli(ctx: click.Context, debug: bool) -> None:
    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug


def main() -> None:  # pragma: no cover - console script shim
    sys.exit(cli())
