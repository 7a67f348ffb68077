"""A survey's own field names: the ``[inputs.fields]`` mapping, near-miss names, CSV coordinates and separators.

Survey layers rarely use routesag's names: a Shapefile cuts them at 10
characters, a CSV says ``Easting``. The mapping renames the file's fields to
routesag's; a field that looks like one of routesag's but is not mapped is
named in a warning, so a misspelt optional field never passes unnoticed.
"""
from __future__ import annotations

import csv
import difflib
import re

import pandas as pd

from routesag.errors import DataError

#: Shapefile (dBASE) field names are cut at this many characters.
DBF_NAME_LENGTH = 10
#: Coordinate column pairs recognised in a CSV without [inputs] x_column / y_column, in order of preference.
COORDINATE_PAIRS = (("x", "y"), ("easting", "northing"), ("east", "north"),
                    ("lon", "lat"), ("long", "lat"), ("longitude", "latitude"), ("lng", "lat"))
#: Pairs that hold degrees: a CSV with them and no [inputs] crs is taken as WGS 84 lat/lon.
DEGREE_PAIRS = {("lon", "lat"), ("long", "lat"), ("longitude", "latitude"), ("lng", "lat")}
SEPARATORS = ",;\t|"
_DECIMAL_COMMA = re.compile(r"^\s*[-+]?\d+(,\d+)?\s*$")


def _norm(name) -> str:
    return re.sub(r"[\s_\-.]", "", str(name)).lower()


def looks_like(column, field: str) -> bool:
    """Whether a file's column name is probably routesag's ``field`` (truncated, other case, underscores)."""
    col, want = _norm(column), _norm(field)
    if not col:
        return False
    if col == want or str(column).lower() == field[:DBF_NAME_LENGTH].lower():
        return True
    if len(col) >= 5 and want.startswith(col):
        return True
    return difflib.SequenceMatcher(None, col, want).ratio() >= 0.85


def apply_field_map(frame, mapping: dict, fields, where: str):
    """Rename the file's fields to routesag's; return the frame and warnings about unmapped look-alikes.

    Parameters
    ----------
    frame : pandas.DataFrame
        The layer as read.
    mapping : dict
        routesag field name -> the file's field name (``[inputs.fields]``);
        entries for fields of another layer are ignored.
    fields : sequence of str
        routesag's field names for this layer.
    where : str
        File (and layer) for messages.

    Raises
    ------
    DataError
        A mapped field the file does not have, naming the close ones it has.
    """
    mine = {ours: theirs for ours, theirs in (mapping or {}).items() if ours in fields and theirs}
    columns = [str(c) for c in frame.columns]
    problems = [f"{where}: [inputs.fields] {ours} = {theirs!r}: the file has no field {theirs!r}"
                f"{_close(theirs, columns)}" for ours, theirs in mine.items() if theirs not in columns]
    if problems:
        raise DataError(problems)
    shadowed = [ours for ours, theirs in mine.items() if ours in columns and ours != theirs]
    renamed = frame.drop(columns=shadowed).rename(columns={theirs: ours for ours, theirs in mine.items()})
    warnings = [f"{where}: field {ours!r} is not used: [inputs.fields] maps {ours} to {mine[ours]!r}"
                for ours in shadowed]
    warnings += near_miss_warnings(renamed.columns, fields, set(mine.values()), where)
    return renamed, warnings


def near_miss_warnings(columns, fields, mapped=(), where="") -> list[str]:
    """One warning per routesag field that is absent while a column looks like it."""
    present = {str(c) for c in columns}
    out = []
    for field in fields:
        if field in present:
            continue
        for column in sorted(present - set(mapped) - set(fields)):
            if looks_like(column, field):
                out.append(f"{where}: field {column!r} looks like routesag's {field!r} but is not used; "
                           f"if it is, map it: [inputs.fields] {field} = {column!r}")
    return out


def hint_for_missing(field: str, columns) -> str:
    """Advice for a missing required field: the look-alike to map, or the closest names."""
    alike = [str(c) for c in columns if looks_like(c, field)]
    if alike:
        return f" (found {alike[0]!r}: map it with [inputs.fields] {field} = {alike[0]!r})"
    return _close(field, columns) + f"; name the file's field with [inputs.fields] {field} = \"...\""


def _close(name: str, columns) -> str:
    close = difflib.get_close_matches(name, [str(c) for c in columns], n=2, cutoff=0.5)
    return f" (did you mean {' or '.join(map(repr, close))}?)" if close else ""


def sniff_separator(text: str) -> str:
    """The CSV field separator among , ; tab | (comma when the sample does not tell).

    A separator must split the header and every sampled row into the same
    number of fields; this keeps decimal commas (``500000,5``) in a
    semicolon file from passing for separators.
    """
    lines = [line for line in text.splitlines()[:50] if line.strip()]
    if len(lines) > 1 and not text.endswith("\n"):
        lines = lines[:-1]  # the sample may cut the last line
    steady = [sep for sep in SEPARATORS
              if lines and lines[0].count(sep) > 0 and len({line.count(sep) for line in lines}) == 1]
    if steady:
        return max(steady, key=lambda sep: lines[0].count(sep))
    try:
        return csv.Sniffer().sniff(text, delimiters=SEPARATORS).delimiter
    except csv.Error:
        return ","


def decimal_commas_to_numbers(frame: pd.DataFrame) -> pd.DataFrame:
    """Text columns whose every value is a number, some written with a decimal comma (``12,5``), become numbers."""
    out = frame.copy()
    for column in out.columns:
        if pd.api.types.is_numeric_dtype(out[column]):
            continue
        values = out[column].dropna().astype(str)
        if len(values) and values.str.match(_DECIMAL_COMMA).all() and values.str.contains(",").any():
            out[column] = pd.to_numeric(values.str.replace(",", ".", regex=False).reindex(out.index),
                                        errors="coerce")
    return out


def coordinate_columns(columns, x_column=None, y_column=None, where="") -> tuple[str, str, bool]:
    """The CSV's x and y column names, and whether they hold degrees (lon/lat).

    Given names are used as they are; otherwise the first pair of
    :data:`COORDINATE_PAIRS` found, case-insensitive.

    Raises
    ------
    DataError
        A named column that is missing, or no recognised pair.
    """
    names = [str(c) for c in columns]
    if x_column or y_column:
        missing = [(key, c) for key, c in (("x_column", x_column), ("y_column", y_column)) if c and c not in names]
        if missing or not (x_column and y_column):
            raise DataError([f"{where}: [inputs] {key} = {c!r}: no such column{_close(c, names)}"
                             for key, c in missing] or
                            [f"{where}: give both [inputs] x_column and y_column"])
        return x_column, y_column, False
    lower = {n.lower(): n for n in names}
    for x, y in COORDINATE_PAIRS:
        if x in lower and y in lower:
            return lower[x], lower[y], (x, y) in DEGREE_PAIRS
    pairs = ", ".join(f"{x}/{y}" for x, y in COORDINATE_PAIRS)
    raise DataError(f"{where}: no coordinate columns: expected one of {pairs} (any case), or name them with "
                    f"[inputs] x_column and y_column; columns: {', '.join(names)}")
