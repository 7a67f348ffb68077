"""``routesag sag-table PROJECT.toml``: stringing sag tables per tension section, for crews.

Long layout: one row per section, wire, condition, span and temperature (every
value). Wide layout: one row per span, one sag column per temperature, as a
crew reads it. CSV to a file (``--csv``, ``-`` for the terminal), or a terminal
table cut into blocks of columns that fit the screen.
"""
from __future__ import annotations

import io
import shutil
from pathlib import Path

import click
import numpy as np
import pandas as pd

from routesag.cli.options import handle_errors, is_quiet
from routesag.errors import OutputError
from routesag.units import c_to_f, f_to_c, m_to_ft, n_to_lbf

#: Decimals written per column kind: tensions to the newton, lengths to the millimetre.
DECIMALS = {"horizontal_tension_n": 0, "max_tension_n": 0, "catenary_m": 1, "temperature_c": 1,
            "horizontal_tension_lbf": 0, "max_tension_lbf": 0, "catenary_ft": 1, "temperature_f": 1}
LENGTH_DECIMALS = 3
#: Default temperature range per unit system: (from, to, step) [degC or degF].
DEFAULT_RANGE = {"si": (-20.0, 50.0, 5.0), "imperial": (0.0, 120.0, 10.0)}
MAX_TEMPERATURES = 200
#: Imperial columns of the long layout: SI column -> (imperial column, converter).
IMPERIAL = {"span_m": ("span_ft", m_to_ft), "dz_m": ("dz_ft", m_to_ft), "temperature_c": ("temperature_f", c_to_f),
            "horizontal_tension_n": ("horizontal_tension_lbf", n_to_lbf),
            "max_tension_n": ("max_tension_lbf", n_to_lbf), "sag_m": ("sag_ft", m_to_ft),
            "catenary_m": ("catenary_ft", m_to_ft)}
WIDE_KEYS = ["section_id", "wire", "condition", "kind", "span_id"]
COLUMN_WIDTH = 8


def sag_table_csv(table) -> str:
    """A table as CSV text, rounded for reading."""
    rounded = table.copy()
    for column in rounded.columns:
        if rounded[column].dtype.kind == "f":
            rounded[column] = rounded[column].round(DECIMALS.get(column, LENGTH_DECIMALS))
    return rounded.to_csv(index=False, lineterminator="\n")


def temperatures(start, stop, step, units: str) -> tuple[np.ndarray, np.ndarray]:
    """The table's temperatures in the shown unit and in degC; UsageError for an empty or huge range."""
    default = DEFAULT_RANGE[units]
    start, stop, step = (default[i] if v is None else float(v) for i, v in enumerate((start, stop, step)))
    if not step > 0 or stop < start:
        raise click.UsageError(f"temperatures --from {start:g} --to {stop:g} --step {step:g}: need step > 0 and "
                               "--to at least --from")
    count = int(np.floor((stop - start) / step + 1e-9)) + 1
    if count > MAX_TEMPERATURES:
        raise click.UsageError(f"{count} temperatures; at most {MAX_TEMPERATURES} (use a larger --step)")
    shown = np.round(start + step * np.arange(count), 9)
    return shown, (f_to_c(shown) if units == "imperial" else shown)


def in_units(table: pd.DataFrame, units: str, shown_temperatures) -> pd.DataFrame:
    """The long table in SI, or with every SI column replaced by its imperial one."""
    if units == "si":
        return table
    out = table.copy()
    for column, (name, convert) in IMPERIAL.items():
        out[column] = convert(out[column])
        out = out.rename(columns={column: name})
    # the temperatures the user asked for, not their round trip through degC
    grid = pd.Series(shown_temperatures, index=np.round(f_to_c(shown_temperatures), 6))
    out["temperature_f"] = grid.reindex(np.round(table["temperature_c"].to_numpy(), 6)).to_numpy()
    return out


def wide(table: pd.DataFrame, units: str) -> pd.DataFrame:
    """One row per section, wire, condition and span; one sag column per temperature."""
    sag, temp, span = (("sag_ft", "temperature_f", "span_ft") if units == "imperial" else
                       ("sag_m", "temperature_c", "span_m"))
    keys = table[WIDE_KEYS].fillna({"span_id": "ruling"})
    frame = table.assign(**{k: keys[k] for k in WIDE_KEYS})
    out = frame.pivot_table(index=WIDE_KEYS + [span], columns=temp, values=sag, sort=False).reset_index()
    unit = "F" if units == "imperial" else "C"
    out.columns = [c if isinstance(c, str) else f"{sag}_{c:g}{unit}" for c in out.columns]
    out.columns.name = None
    return out


def terminal_text(table: pd.DataFrame, units: str, width: int | None = None) -> str:
    """Blocks of one section, wire and condition: spans as rows, temperatures as columns, cut to the width."""
    width = width or shutil.get_terminal_size((100, 24)).columns
    sag, temp, span, tension = (("sag_ft", "temperature_f", "span_ft", "horizontal_tension_lbf")
                                if units == "imperial" else
                                ("sag_m", "temperature_c", "span_m", "horizontal_tension_n"))
    length, force, degrees = ("ft", "lbf", "F") if units == "imperial" else ("m", "kN", "C")
    scale = 1.0 if units == "imperial" else 1e-3
    blocks = []
    for (section, wire, condition), group in table.groupby(["section_id", "wire", "condition"], sort=False):
        temps = list(dict.fromkeys(group[temp]))
        rows = list(dict.fromkeys(zip(group["kind"], group["span_id"].fillna("ruling"))))
        label_width = max(12, *(len(str(s)) for _, s in rows)) + 2
        per_block = max(1, (width - label_width - COLUMN_WIDTH) // COLUMN_WIDTH)
        state = "as strung" if condition == "initial" else "after creep"
        head = (f"section {section}, wire {wire}, {condition} ({state}): "
                f"sag [{length}] at conductor temperature [deg{degrees}], horizontal tension H [{force}]")
        lines = [head]
        for first in range(0, len(temps), per_block):
            chunk = temps[first:first + per_block]
            lines.append(f"{'span':<{label_width}}{'[' + length + ']':>{COLUMN_WIDTH}}"
                         + "".join(f"{t:>{COLUMN_WIDTH}g}" for t in chunk))
            for kind, span_id in rows:
                part = group[(group["kind"] == kind) & (group["span_id"].fillna("ruling") == span_id)]
                sags = part.set_index(temp)[sag]
                lines.append(f"{span_id:<{label_width}}{part[span].iloc[0]:>{COLUMN_WIDTH}.1f}"
                             + "".join(f"{sags[t]:>{COLUMN_WIDTH}.2f}" for t in chunk))
            ruling = group[group["kind"] == "ruling"].set_index(temp)[tension]
            lines.append(f"{'H':<{label_width}}{'':>{COLUMN_WIDTH}}"
                         + "".join(f"{ruling[t] * scale:>{COLUMN_WIDTH}.{1 if scale != 1 else 0}f}" for t in chunk))
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks) + "\n"


@click.command("sag-table")
@click.argument("project", type=click.Path(dir_okay=False))
@click.option("--csv", "csv_path", type=click.Path(dir_okay=False, allow_dash=True), default=None,
              help="Write CSV to this file ('-': print CSV) instead of the terminal table.")
@click.option("--from", "t_from", type=float, default=None,
              help="Lowest conductor temperature [degC; degF with --units imperial]. Default -20 C / 0 F.")
@click.option("--to", "t_to", type=float, default=None, help="Highest temperature. Default 50 C / 120 F.")
@click.option("--step", type=float, default=None, help="Temperature step. Default 5 C / 10 F.")
@click.option("--spans", "which", type=click.Choice(["all", "ruling"]), default="all", show_default=True,
              help="Every span with its section's ruling span, or the ruling spans only.")
@click.option("--layout", type=click.Choice(["long", "wide"]), default=None,
              help="long: a row per span and temperature; wide: a row per span, a column per temperature. "
                   "Default: long for CSV, wide on the terminal.")
@click.option("--units", type=click.Choice(["si", "imperial"]), default=None,
              help="si (m, N, degC) or imperial (ft, lbf, degF). Default [report] units, else si.")
@click.option("--condition", type=click.Choice(["initial", "final", "both"]), default="initial",
              show_default=True, help="As strung, after creep (needs creep_allowance_c), or both.")
@handle_errors
def sag_table_command(project, csv_path, t_from, t_to, step, which, layout, units, condition):
    """Sag and tension of the ruling span and every span per tension section (bare wire, no wind).

    Nothing else is computed or written; `routesag run` also stores the default table
    (-20 to +50 C, initial) as the GeoPackage table sag_table.
    """
    from routesag.api import compute
    from routesag.stages.sag_table import sag_table

    data = compute(project, ("sections", "wire_spans", "tensions"))
    units = units or data["project"].settings.get("report", {}).get("units", "si")
    shown, celsius = temperatures(t_from, t_to, step, units)
    conditions = ("initial", "final") if condition == "both" else (condition,)
    table = sag_table(data["project"], data["sections"], data["wire_spans"], data["tensions"], celsius, conditions)
    if which == "ruling":
        table = table[table["kind"] == "ruling"].reset_index(drop=True)
    table = in_units(table, units, shown)
    layout = layout or ("long" if csv_path else "wide")
    if csv_path is None:
        click.echo(terminal_text(table, units) if layout == "wide" else _long_text(table), nl=False)
        return
    text = sag_table_csv(wide(table, units) if layout == "wide" else table)
    if csv_path == "-":
        click.echo(text, nl=False)
        return
    try:
        Path(csv_path).write_text(text, encoding="utf-8")
    except OSError as exc:
        raise OutputError(f"cannot write the sag table to {csv_path}: {exc.strerror or exc}") from None
    if not is_quiet():
        click.echo(f"sag table: {text.count(chr(10)) - 1} rows, {table['section_id'].nunique()} tension sections "
                   f"({layout}, {units}) -> {csv_path}")


def _long_text(table: pd.DataFrame) -> str:
    """The long table as aligned text, rounded as the CSV."""
    rounded = pd.read_csv(io.StringIO(sag_table_csv(table)))
    return rounded.to_string(index=False, na_rep="") + "\n"
