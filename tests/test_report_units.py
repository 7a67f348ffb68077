"""[report] units = "imperial": the summary shows feet, pounds-force and degrees F beside SI; files stay SI."""
import re

import pyogrio
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.report import summary_text

M_PER_FT = 0.3048  # exact (NIST SP 811, Appendix B.8)
PAIR = re.compile(r"(-?\d+\.\d+) m \((-?\d+\.\d+) ft\)")


def test_imperial_summary_shows_feet_beside_metres(survey):
    text = survey.read_text().replace("ground_m = 7.5", "ground_m = 30.0")
    survey.write_text(text + '\n[report]\nunits = "imperial"\n')
    result = routesag.run(survey)
    text = summary_text(result)
    pairs = PAIR.findall(text)
    assert len(pairs) > 5
    for metres, feet in pairs:
        assert abs(float(metres) / M_PER_FT - float(feet)) <= 0.05 + 0.005 / M_PER_FT
    assert "conductor 90 C (194 F)" in text  # 90 C = 194 F (t/F = 1.8 t/C + 32)
    assert "m / ft" in summary_text(result, per_span=True)
    si = summary_text(result, units="si")
    assert " ft" not in si and PAIR.search(si) is None
    # the GeoPackage stays SI
    conductors = pyogrio.read_dataframe(result.path, layer="conductors")
    assert "min_clearance_m" in conductors and not any(c.endswith("_ft") for c in conductors.columns)


def test_units_flag_on_the_command_line(survey):
    result = CliRunner().invoke(main, ["run", str(survey), "--units", "imperial"])
    assert result.exit_code == 0, result.output
    assert PAIR.search(result.stdout)
    plain = CliRunner().invoke(main, ["run", str(survey)])
    assert PAIR.search(plain.stdout) is None


def test_tensions_in_pounds_force(survey):
    survey.write_text(survey.read_text().replace("horizontal_tension_kn = 30.0", "from_limits = true")
                      + '\n[[limits]]\nload_case = "cold"\nmax_percent_rts = 25.0\n')
    text = summary_text(routesag.run(survey), units="imperial")
    found = re.findall(r"(\d+\.\d+) kN \((\d+) lbf\)", text)
    assert found
    for kn, lbf in found:
        assert abs(float(kn) * 1e3 / 4.4482216152605 - float(lbf)) <= 0.5 + 5 / 4.448  # NIST SP 811 B.8
