"""``routesag sag-table PROJECT.toml``: stringing sag tables per tension section, as CSV."""
from pathlib import Path

import click

from routesag.cli.options import handle_errors
from routesag.errors import OutputError

#: Decimals written per column kind: tensions to the newton, lengths to the millimetre.
DECIMALS = {"horizontal_tension_n": 0, "max_tension_n": 0, "catenary_m": 1, "temperature_c": 1}
LENGTH_DECIMALS = 3


def sag_table_csv(table) -> str:
    """The sag table as CSV text, rounded for reading."""
    rounded = table.copy()
    for column in rounded.columns:
        if rounded[column].dtype.kind == "f":
            rounded[column] = rounded[column].round(DECIMALS.get(column, LENGTH_DECIMALS))
    return rounded.to_csv(index=False, lineterminator="\n")


@click.command("sag-table")
@click.argument("project", type=click.Path(dir_okay=False))
@click.option("--csv", "csv_path", type=click.Path(dir_okay=False), default=None,
              help="Write the table to this CSV file instead of printing it.")
@handle_errors
def sag_table_command(project, csv_path):
    """Sag and tension of the ruling span and every span, -20 to +50 C in 5 C steps (initial, bare wire).

    Nothing else is computed or written; `routesag run` also stores the table as the
    GeoPackage table sag_table.
    """
    from routesag.api import compute

    table = compute(project, ("sag_table",))["sag_table"]
    text = sag_table_csv(table)
    if csv_path is None:
        click.echo(text, nl=False)
        return
    try:
        Path(csv_path).write_text(text, encoding="utf-8")
    except OSError as exc:
        raise OutputError(f"cannot write the sag table to {csv_path}: {exc.strerror or exc}") from None
    if not click.get_current_context().find_root().obj.get("quiet"):
        click.echo(f"sag table: {len(table)} rows, {table['section_id'].nunique()} tension sections -> {csv_path}")
