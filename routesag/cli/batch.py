"""``routesag batch PROJECT...``: several project files through one worker pool or cluster."""
import click

from routesag.cli.options import (
    EXIT_VIOLATION, fail_on_violation_option, handle_errors, is_quiet, scheduler_option, workers_option,
)


@click.command("batch")
@click.argument("projects", nargs=-1, required=True, type=click.Path(dir_okay=False))
@fail_on_violation_option
@workers_option
@scheduler_option
@handle_errors
def batch_command(projects, fail_on_violation, workers, scheduler):
    """Run several PROJECTS (TOML project files), each to its own [output] path, on one engine.

    Every project file is checked first: if any is invalid, nothing runs (exit 2). Without --workers or
    --scheduler the first project's [engine] table decides.
    """
    from routesag.api import run_batch
    from routesag.progress import section_progress
    from routesag.report import summary_text

    def report(result):
        if not is_quiet():
            click.echo(f"== {result.project.path}")
            click.echo(summary_text(result))

    with section_progress(is_quiet()) as on_section:
        results = run_batch(projects, workers=workers, scheduler=scheduler, on_section=on_section, on_result=report)
    if fail_on_violation and any(len(r.layers["clearance_violations"]) for r in results):
        raise click.exceptions.Exit(EXIT_VIOLATION)
