"""``routesag conductors [TEXT]``: list or search the conductor catalog."""
import click

from routesag.cli.options import EXIT_BAD_INPUT, CommandError, handle_errors

#: (header, attribute, format) of each table column.
COLUMNS = (
    ("name", "name", "{}"), ("code word", "code_word", "{}"), ("type", "type", "{}"),
    ("stranding", "stranding", "{}"), ("d [mm]", "diameter_mm", "{:.2f}"), ("A [mm2]", "area_mm2", "{:.1f}"),
    ("m [kg/m]", "mass_kg_m", "{:.4f}"), ("RTS [kN]", "rated_strength_kn", "{:.2f}"),
    ("E [GPa]", "modulus_gpa", "{:g}"), ("alpha [1e-6/C]", "expansion_per_c", "{:.1f}"),
    ("source", "source", "{}"),
)
#: Shown scaled: the expansion coefficient in millionths per degree.
SCALE = {"expansion_per_c": 1e6}


def catalog_table(entries) -> str:
    """The entries as an aligned text table: text columns left, numbers right."""
    cells = [[fmt.format(getattr(e, attr) * SCALE.get(attr, 1) if fmt != "{}" else getattr(e, attr))
              for _, attr, fmt in COLUMNS] for e in entries]
    headers = [h for h, _, _ in COLUMNS]
    widths = [max(len(r[i]) for r in [headers] + cells) for i in range(len(COLUMNS))]
    numeric = [fmt != "{}" for _, _, fmt in COLUMNS]

    def line(row):
        return "  ".join(c.rjust(w) if n else c.ljust(w) for c, w, n in zip(row, widths, numeric)).rstrip()
    return "\n".join([line(headers), line(["-" * w for w in widths])] + [line(r) for r in cells])


@click.command("conductors")
@click.argument("text", nargs=-1)
@handle_errors
def conductors_command(text):
    """List the conductor catalog, or the entries matching TEXT (every word must match).

    Use a name or code word in a project file: [conductor] name = "Drake".
    """
    from routesag.catalog import close_matches, search

    query = " ".join(text)
    found = search(query)
    if found:
        click.echo(catalog_table(found))
        return
    close = close_matches(query)
    hint = f"; close matches: {', '.join(e.label for e in close)}" if close else ""
    raise CommandError(f"no conductor in the catalog matches {query!r}{hint}", EXIT_BAD_INPUT)
