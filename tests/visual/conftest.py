"""The demo, run once through `routesag demo` (GeoPackage and report beside it), for the report and style tests.

The demo is invented data.
"""
from pathlib import Path

import pytest
from click.testing import CliRunner

from routesag.cli import main
from routesag.visual.build import Report


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "routesag-demo.gpkg"
    result = CliRunner().invoke(main, ["demo", "--out", str(out)])
    assert result.exit_code == 0, result.output
    return out, result.output


@pytest.fixture(scope="session")
def demo_gpkg(demo_run) -> Path:
    return demo_run[0]


@pytest.fixture(scope="session")
def demo_report(demo_run) -> Report:
    """The report `routesag demo` built beside its GeoPackage."""
    gpkg, output = demo_run
    folder = gpkg.with_name("routesag-demo-report")
    assert f"report: {folder / 'index.html'}" in output
    return Report(folder, folder / "index.html", {}, sorted(p.name for p in folder.glob("overview_*.png")))


@pytest.fixture(scope="session")
def demo_results(demo_gpkg):
    from routesag.visual.results import read_results

    return read_results(demo_gpkg)
