"""``routesag stages``: every registered stage with what it requires and provides."""
import click

from routesag.cli.options import handle_errors


@click.command("stages")
@handle_errors
def stages_command():
    """List registered pipeline stages: built-in ones in chain order, then plugins."""
    from routesag.pipeline import BUILTIN_DISTRIBUTION, DEFAULT_CHAIN, available_stages

    def chain_order(item):
        name = item[0]
        return (0, DEFAULT_CHAIN.index(name), "") if name in DEFAULT_CHAIN else (1, 0, name)

    registry = available_stages()
    for name, stage in sorted(registry.items(), key=chain_order):
        dist = getattr(stage, "distribution", "?")
        origin = "built-in" if name in DEFAULT_CHAIN and dist == BUILTIN_DISTRIBUTION else "plugin"
        click.echo(f"{name}  [{origin}{', per section' if stage.per_section else ''}, from {dist}]")
        others = getattr(registry, "clashes", {}).get(name)
        if others:
            click.echo(f"    CLASH: also registered by {', '.join(others)}; a project must name the one it "
                       f"uses as distribution:{name}")
        click.echo(f"    requires: {', '.join(stage.requires) or '-'}")
        click.echo(f"    provides: {', '.join(stage.provides) or '-'}")
        if stage.description:
            click.echo(f"    {stage.description}")
