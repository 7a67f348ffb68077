"""`routesag run` keeps the conductors' stations out of memory: the summary reads their attribute columns only."""
import pyogrio
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.report import summary_text


def test_run_summary_never_reads_the_conductor_geometries(survey, monkeypatch):
    survey.write_text(survey.read_text().replace("ground_m = 7.5", "ground_m = 30.0"))  # violations to list
    out = survey.parent / "out.gpkg"
    expected = summary_text(routesag.run(survey, out=out, read_back=True), per_span=True)
    assert "violations: 0" not in expected
    reads = []
    real_read = pyogrio.read_dataframe

    def recording_read(path, layer=None, **kwargs):
        reads.append((layer, kwargs.get("read_geometry", True)))
        return real_read(path, layer=layer, **kwargs)

    monkeypatch.setattr(pyogrio, "read_dataframe", recording_read)
    result = CliRunner().invoke(main, ["run", str(survey), "--out", str(out), "--spans"])
    assert result.exit_code == 0, result.output
    assert result.output.rstrip("\n") == expected
    assert ("conductors", False) in reads  # the summary's table came from the file ...
    assert ("conductors", True) not in reads  # ... and never with its LineString Z stations
