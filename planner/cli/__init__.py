"""Command line: ``planner plan``, ``planner new``, ``planner climate``, ``planner life``,
``planner evidence``.

Each command lives in its own module of this package and is imported only when
used, so ``planner --help`` stays fast. Errors the user can fix are
:class:`planner.errors.InputError`: one line on stderr, exit code 2, and a
traceback only with ``--debug``. An output that cannot be written is
:class:`planner.errors.OutputError` (exit code 4); Ctrl-C exits 130, SIGTERM 143 and
SIGHUP 129, each after removing the temporary files of an unfinished write.
"""

from __future__ import annotations

import importlib
import sys
import traceback

import click

from planner import __version__
from planner.cli.streams import finish_output, guarded_streams
from planner.cli.terminal import Stopped, console_warnings, printable, stop_on_signals
from planner.errors import InputError, OutputError

EXIT_OK = 0
EXIT_BAD_INPUT = 2
EXIT_INFEASIBLE = 3
EXIT_WRITE_FAILED = 4
EXIT_INTERRUPTED = 130  # 128 + SIGINT, as shells report Ctrl-C (common practice)

_COMMANDS = {
    "plan": ("planner.cli.plan", "plan_command"),
    "new": ("planner.cli.new", "new_command"),
    "climate": ("planner.cli.climate", "climate_command"),
    "life": ("planner.cli.life", "life_command"),
    "evidence": ("planner.cli.evidence", "evidence_command"),
}


def _set_root_flag(ctx, param, value):
    """Record --quiet / --debug given after a sub-command on the root context."""
    if value:
        root = ctx.find_root()
        root.ensure_object(dict)
        root.obj[param.name] = True
    return value


#: Options accepted both before and after the sub-command (``planner --quiet plan X`` and
#: ``planner plan X --quiet``): name -> help text.
SHARED_FLAGS = {"quiet": "No progress bar and no summary on the console.",
                "debug": "Show a traceback for errors."}


def _with_shared_flags(command: click.Command) -> click.Command:
    have = {p.name for p in command.params}
    for name, text in SHARED_FLAGS.items():
        if name not in have:
            command.params.append(click.Option([f"--{name}"], is_flag=True, expose_value=False,
                                               callback=_set_root_flag, help=text))
    return command


class _LazyGroup(click.Group):
    def list_commands(self, ctx):
        return sorted(_COMMANDS)

    def get_command(self, ctx, name):
        if name not in _COMMANDS:
            return None
        module_name, attr = _COMMANDS[name]
        return _with_shared_flags(getattr(importlib.import_module(module_name), attr))

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except (InputError, OutputError) as err:
            if ctx.obj and ctx.obj.get("debug"):
                traceback.print_exc()
            for line in err.lines() if isinstance(err, InputError) else [str(err)]:
                click.echo(f"error: {printable(line)}", err=True)
            ctx.exit(EXIT_BAD_INPUT if isinstance(err, InputError) else EXIT_WRITE_FAILED)
        except KeyboardInterrupt:
            click.echo("interrupted; unfinished outputs were removed", err=True)
            ctx.exit(EXIT_INTERRUPTED)
        except Stopped as err:
            click.echo(f"{err}; unfinished outputs were removed", err=True)
            ctx.exit(err.exit_code)


@click.group(cls=_LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", prog_name="planner")
@click.option("--quiet", is_flag=True, help=SHARED_FLAGS["quiet"])
@click.option("--debug", is_flag=True, help=SHARED_FLAGS["debug"])
@click.pass_context
def cli(ctx, quiet, debug):
    """Plan batteries for remote, unattended sites: chemistry, oversizing, charge
    voltage and replacement visits at the lowest lifetime cost.

    \b
    Example:
      planner plan scenarios/quick.toml --quiet
    """
    ctx.ensure_object(dict)
    ctx.obj["quiet"] = quiet
    ctx.obj["debug"] = debug


def main(argv=None):
    """Console entry point: the command, then its exit code (see README's table).

    Closed or failing standard streams keep the documented codes (planner.cli.streams).
    """
    with guarded_streams(), stop_on_signals(), console_warnings():
        try:
            cli.main(args=argv, prog_name="planner")
            code = EXIT_OK
        except SystemExit as done:
            code = done.code
        except OutputError as err:  # standard output failing outside a command (--help)
            click.echo(f"error: {printable(err)}", err=True)
            code = EXIT_WRITE_FAILED
        code = finish_output(code)
    sys.exit(code)


def options(ctx: click.Context) -> dict:
    """The group's options (quiet, debug) seen from a sub-command."""
    root = ctx.find_root()
    return root.obj or {}


def progress_enabled(ctx: click.Context) -> bool:
    """A progress bar only on a terminal and without --quiet."""
    return not options(ctx).get("quiet") and sys.stderr.isatty()


__all__ = ["main"]
