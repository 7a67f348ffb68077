"""The demo run and its report, made once for the report and style tests (the demo is invented data)."""
from pathlib import Path

import pytest

from routesag.cli.demo import sample_project


@pytest.fixture(scope="session")
def demo_gpkg(tmp_path_factory) -> Path:
    import routesag

    out = tmp_path_factory.mktemp("demo") / "routesag-demo.gpkg"
    routesag.run(sample_project(), out=out)
    return out


@pytest.fixture(scope="session")
def demo_report(demo_gpkg, tmp_path_factory):
    from routesag.visual.build import build_report

    return build_report(demo_gpkg, tmp_path_factory.mktemp("report") / "report")


@pytest.fixture(scope="session")
def demo_results(demo_gpkg):
    from routesag.visual.results import read_results

    return read_results(demo_gpkg)
