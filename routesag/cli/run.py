"""``routesag run PROJECT.toml``."""
import click

from routesag.cli.options import (
    all_violations_option, fail_on_violation_option, finish, handle_errors, is_quiet, out_option,
    scheduler_option, units_option, workers_option,
)


@click.command("run")
@click.argument("project", type=click.Path(dir_okay=False))
@out_option
@fail_on_violation_option
@workers_option
@scheduler_option
@click.option("--spans", "per_span", is_flag=True, help="Also print the worst clearance of every span.")
@all_violations_option
@units_option
@handle_errors
def run_command(project, out, fail_on_violation, workers, scheduler, per_span, all_violations, units):
    """Compute conductors and clearances for PROJECT (a TOML project file)."""
    from routesag.api import run
    from routesag.cli.signals import terminate_as_interrupt
    from routesag.progress import section_progress

    with terminate_as_interrupt(), section_progress(is_quiet()) as on_section:
        result = run(project, out=out, workers=workers, scheduler=scheduler, on_section=on_section,
                     read_back=False)  # the summary needs no conductor geometry
    finish(result, fail_on_violation, per_span, all_violations, units)
