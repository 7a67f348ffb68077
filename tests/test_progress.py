"""Progress of a run: timing lines with -v, a section bar only on a terminal and never with -q."""
import io
import logging

from click.testing import CliRunner

from routesag.cli import main
from routesag.progress import section_progress


class Terminal(io.StringIO):
    """A stream that says it is a terminal (of unknown size, as a bare pseudo-terminal is)."""

    def isatty(self):
        return True


def test_verbose_logs_every_stage_and_section_with_its_time(survey, caplog):
    caplog.set_level(logging.INFO, logger="routesag")
    result = CliRunner().invoke(main, ["-v", "run", str(survey), "--workers", "1"])
    assert result.exit_code == 0, result.output
    lines = [r.getMessage() for r in caplog.records if r.name == "routesag"]
    for stage in ("read_inputs", "build_spans", "solve_tensions", "find_hotspots", "write_geopackage"):
        assert any(line.startswith(f"stage {stage}: ") and line.endswith(" s") for line in lines), stage
    for stage in ("build_conductors", "sample_terrain", "check_clearance"):
        assert any(line.startswith(f"stage {stage} (per section, 2 sections") for line in lines), stage
    assert [line.split(" in ")[0] for line in lines if line.startswith("section ")] == [
        "section A:P1-P3 done (1 of 2)", "section A:P3-P4 done (2 of 2)"]


def test_no_bar_when_stderr_is_not_a_terminal(survey):
    result = CliRunner().invoke(main, ["run", str(survey), "--workers", "1"])
    assert result.exit_code == 0, result.output
    assert "tension sections:" not in result.stderr and "section/s" not in result.stderr
    with section_progress(stream=io.StringIO()) as on_section:
        assert on_section is None


def test_bar_on_a_terminal_counts_sections_and_quiet_hides_it():
    stream = Terminal()
    with section_progress(stream=stream) as on_section:
        on_section("", 0, 3)
        for done, section in enumerate(["L:T1-T4", "L:T4-T9", "L:T9-T12"], start=1):
            on_section(section, done, 3)
    shown = stream.getvalue()
    assert "tension sections:" in shown and "0/3" in shown
    assert shown.endswith("\r")  # the bar clears itself when the run ends, leaving the summary alone
    with section_progress(quiet=True, stream=Terminal()) as on_section:
        assert on_section is None


def test_a_batch_gets_one_bar_per_project():
    stream = Terminal()
    with section_progress(stream=stream) as on_section:
        for total in (2, 5):
            on_section("", 0, total)
            for done in range(1, total + 1):
                on_section(f"S{done}", done, total)
    shown = stream.getvalue()
    assert "0/2" in shown and "0/5" in shown
