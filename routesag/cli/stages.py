"""``routesag stages``: every registered stage with what it requires and provides."""
import click

from routesag.cli.options import handle_errors


@click.command("stages")
@handle_errors
def stages_command():
    """List registered pipeline stages: built-in ones in chain order, then plugins."""
    from routesag.pipeline import DEFAULT_CHAIN, available_stages

    def chain_order(item):
        name = item[0]
        return (0, DEFAULT_CHAIN.index(name), "") if name in DEFAULT_CHAIN else (1, 0, name)

    for name, stage in sorted(available_stages().items(), key=chain_order):
        origin = "built-in" if name in DEFAULT_CHAIN else "plugin"
        click.echo(f"{name}  [{origin}{', per section' if stage.per_section else ''}]")
        click.echo(f"    requires: {', '.join(stage.requires) or '-'}")
        click.echo(f"    provides: {', '.join(stage.provides) or '-'}")
        if stage.description:
            click.echo(f"    {stage.description}")
