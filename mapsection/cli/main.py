"""Entry point of the ``mapsection`` command.

Each command lives in its own module of this package (``mapsection/cli/<name>.py``)
and exposes a click command named ``command``; it is imported only when used.
"""

from __future__ import annotations

import importlib
import sys
import textwrap

import click

from .. import CAUTION, __version__
from ..errors import MapsectionError

# command name -> module holding it, in the order --help lists them
COMMANDS = {
    "profile": "profile",
    "dips": "dips",
    "axis": "axis",
    "build": "build",
    "check": "check",
    "demo": "demo",
    "view": "view",
}

HELP = f"""Draft geological cross-sections from a geologic map, a DEM and strike/dip data,
and the checks that show whether a section balances.

\b
{textwrap.fill("CAUTION: " + CAUTION, 78)}

Run 'mapsection COMMAND --help' for each command; the user guide is in docs/.
"""


class _LazyGroup(click.Group):
    def list_commands(self, ctx: click.Context) -> list[str]:
        return [n for n in COMMANDS if importlib.util.find_spec(f"{__package__}.{COMMANDS[n]}")]

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        if name not in COMMANDS:
            return None
        try:
            mod = importlib.import_module(f"{__package__}.{COMMANDS[name]}")
        except ModuleNotFoundError as exc:
            if exc.name == f"{__package__}.{COMMANDS[name]}":
                return None
            raise
        return mod.command

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
