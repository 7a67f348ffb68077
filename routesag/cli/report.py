"""``routesag report RESULTS.gpkg --out DIR``."""
import click

from routesag.cli.options import handle_errors


@click.command("report")
@click.argument("results", type=click.Path(dir_okay=False))
@click.option("-o", "--out", "folder", type=click.Path(file_okay=False), default="report", show_default=True,
              help="Folder for index.html, profiles and overview.")
@click.option("--all", "all_spans", is_flag=True, help="A profile for every span, not only those with findings.")
@handle_errors
def report_command(results, folder, all_spans):
    """Build an HTML report (span profiles, plan overview, tables) from a results GeoPackage."""
    from routesag.visual.build import build_report

    report = build_report(results, folder, all_spans=all_spans)
    if not click.get_current_context().find_root().obj.get("quiet"):
        click.echo(f"report: {report.index} ({len(report.profiles)} profile(s), "
                   f"{len(report.overviews)} overview page(s))")
