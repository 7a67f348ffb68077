"""``routesag conductors``: the catalog as an aligned table."""
from click.testing import CliRunner

from routesag.catalog import catalog
from routesag.cli import main


def test_lists_the_whole_catalog():
    result = CliRunner().invoke(main, ["conductors"])
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert len(lines) == 2 + len(catalog()) and lines[0].startswith("name")
    # Aligned: every row puts the code word column at the same place.
    at = lines[0].index("code word")
    assert lines[2 + [e.code_word for e in catalog()].index("Drake")][at:].startswith("Drake")


def test_search_and_no_match():
    result = CliRunner().invoke(main, ["conductors", "drake"])
    assert result.exit_code == 0 and len(result.output.splitlines()) == 3 and "28.14" in result.output
    result = CliRunner().invoke(main, ["conductors", "Drakke"])
    assert result.exit_code == 2 and "close matches: ACSR 795 kcmil 26/7 Drake" in result.output
