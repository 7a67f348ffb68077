"""The ``routesag`` command line: a click group whose commands come from entry points.

Built-in commands and plugin commands are both registered in the
``routesag.commands`` entry-point group. A command that fails to import is
replaced by a placeholder that reports the error only when it is used.
"""
from __future__ import annotations

import logging
from importlib.metadata import entry_points

import click

from routesag import __version__

COMMAND_GROUP = "routesag.commands"


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


@click.group(cls=PluginGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="routesag")
@click.option("-v", "--verbose", count=True, help="More output (repeat for debug).")
@click.option("-q", "--quiet", is_flag=True, help="Only errors.")
@click.pass_context
def main(ctx, verbose, quiet):
    """Conductor sag and ground-clearance screening for overhead lines.

    Results are an engineering screening aid: loads and required clearances come
    from the governing code and are confirmed by a licensed engineer.
    """
    level = logging.ERROR if quiet else (logging.WARNING, logging.INFO, logging.DEBUG)[min(verbose, 2)]
    logging.basicConfig(level=level, format="%(levelname)s: %(message)s")
    ctx.obj = {"verbose": verbose, "quiet": quiet}
