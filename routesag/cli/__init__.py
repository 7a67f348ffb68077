"""The ``routesag`` command line: a click group whose commands come from entry points.

Built-in commands and plugin commands are both registered in the
``routesag.commands`` entry-point group. A command that fails to import is
replaced by a placeholder that reports the error only when it is used.
"""
from __future__ import annotations

from importlib.metadata import entry_points

import click

from routesag import __version__
from routesag.cli import logs

COMMAND_GROUP = "routesag.commands"
#: Commands that end with a run summary listing the warnings.
SUMMARY_COMMANDS = ("run", "demo")


def _broken_command(name: str, error: BaseException) -> click.Command:
    @click.command(name=name, help=f"(failed to load: {error})")
    def broken():
        raise click.ClickException(f"command {name!r} failed to load: {type(error).__name__}: {error}")
    return broken


class PluginGroup(click.Group):
    """A group that adds every command registered in the entry-point group."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        for ep in entry_points(group=COMMAND_GROUP):
            try:
                command = ep.load()
            except Exception as exc:  # a broken plugin must never break the CLI
                command = _broken_command(ep.name, exc)
            self.add_command(command, ep.name)

    def parse_args(self, ctx, args):
        return super().parse_args(ctx, logs.hoist_global_flags(args))


@click.group(cls=PluginGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="routesag")
@click.option("-v", "--verbose", count=True,
              help="routesag's stage log; -vv: debug, other libraries too. Also after the command.")
@click.option("-q", "--quiet", is_flag=True, help="Only errors. Also after the command.")
@click.pass_context
def main(ctx, verbose, quiet):
    """Conductor sag and ground-clearance screening for overhead lines.

    Results are an engineering screening aid: loads and required clearances come
    from the governing code and are confirmed by a licensed engineer.
    """
    logs.configure(verbose, quiet, summary=ctx.invoked_subcommand in SUMMARY_COMMANDS)
    ctx.obj = {"verbose": verbose, "quiet": quiet}
