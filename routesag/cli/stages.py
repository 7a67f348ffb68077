"""``routesag stages``: every registered stage with what it requires and provides."""
import click

from routesag.cli.options import handle_errors


@click.command("stages")
@handle_errors
def stages_command():
    """List registered pipeline stages (built-in and plugins)."""
    from routesag.pipeline import DEFAULT_CHAIN, available_stages

    for name, stage in sorted(available_stages().items(), key=lambda kv: (kv[0] not in DEFAULT_CHAIN, kv[0])):
        origin = "built-in" if name in DEFAULT_CHAIN else "plugin"
        click.echo(f"{name}  [{origin}]")
        click.echo(f"    requires: {', '.join(stage.requires) or '-'}")
        click.echo(f"    provides: {', '.join(stage.provides) or '-'}")
        if stage.description:
            click.echo(f"    {stage.description}")
