"""``routesag run PROJECT.toml``."""
import click

from routesag.cli.options import (
    all_violations_option, fail_on_violation_option, finish, handle_errors, out_option, units_option,
)


@click.command("run")
@click.argument("project", type=click.Path(dir_okay=False))
@out_option
@fail_on_violation_option
@click.option("--spans", "per_span", is_flag=True, help="Also print the worst clearance of every span.")
@all_violations_option
@units_option
@handle_errors
def run_command(project, out, fail_on_violation, per_span, all_violations, units):
    """Compute conductors and clearances for PROJECT (a TOML project file)."""
    from routesag.api import run

    finish(run(project, out=out), fail_on_violation, per_span, all_violations, units)
