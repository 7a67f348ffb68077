"""``routesag run PROJECT.toml``."""
import click

from routesag.cli.options import fail_on_violation_option, finish, handle_errors, out_option


@click.command("run")
@click.argument("project", type=click.Path(dir_okay=False))
@out_option
@fail_on_violation_option
@click.option("--spans", "per_span", is_flag=True, help="Also print the worst clearance of every span.")
@handle_errors
def run_command(project, out, fail_on_violation, per_span):
    """Compute conductors and clearances for PROJECT (a TOML project file)."""
    from routesag.api import run
    from routesag.cli.signals import terminate_as_interrupt

    with terminate_as_interrupt():
        result = run(project, out=out)
    finish(result, fail_on_violation, per_span)
