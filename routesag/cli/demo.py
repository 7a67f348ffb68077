"""``routesag demo``: the main job on the bundled sample survey."""
from pathlib import Path

import click

from routesag.cli.options import (
    all_violations_option, fail_on_violation_option, finish, handle_errors, is_quiet, units_option,
)

DEFAULT_OUT = "routesag-demo.gpkg"


def sample_project() -> Path:
    """The bundled sample survey's project file; generated into a user cache if the folder is absent."""
    here = Path(__file__).resolve().parents[2] / "sample_survey" / "project.toml"
    if here.is_file():
        return here
    from routesag.sample import write_sample_survey

    folder = Path.home() / ".cache" / "routesag" / "sample_survey"
    if not (folder / "project.toml").is_file():
        folder.mkdir(parents=True, exist_ok=True)
        write_sample_survey(folder)
    return folder / "project.toml"


@click.command("demo")
@click.option("-o", "--out", type=click.Path(dir_okay=False), default=DEFAULT_OUT, show_default=True,
              help="Output GeoPackage.")
@fail_on_violation_option
@all_violations_option
@units_option
@handle_errors
def demo_command(out, fail_on_violation, all_violations, units):
    """Run the bundled sample survey; write routesag-demo.gpkg and its report folder here."""
    from routesag.api import run

    from routesag.visual.build import build_report

    project = sample_project()
    if not is_quiet():
        click.echo(f"sample survey: {project.parent}")
    result = run(project, out=Path(out).resolve())
    report = build_report(result.path, report_folder(result.path))
    if not is_quiet():
        click.echo(f"report: {report.index}")
    finish(result, fail_on_violation, per_span=True, all_violations=all_violations, units=units)


def report_folder(geopackage: Path) -> Path:
    """The demo's report folder, beside its GeoPackage: ``routesag-demo.gpkg`` -> ``routesag-demo-report/``."""
    return geopackage.with_name(f"{geopackage.stem}-report")
