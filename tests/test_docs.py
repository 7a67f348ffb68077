"""DEVELOPERS.md's stage table stays true to the code: every built-in stage, its phase, requires and provides."""
import re
from pathlib import Path

from routesag.pipeline import assemble_chain, split_phases

DEVELOPERS = Path(__file__).resolve().parents[1] / "DEVELOPERS.md"


def documented_stages() -> list[tuple[str, str, list[str], list[str]]]:
    rows = []
    for line in DEVELOPERS.read_text().splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == 4 and cells[1] in ("start", "section", "finish"):
            # "attachments (structure x wire, at rest)": the dataset name is the first word of each entry.
            names = [[re.sub(r"\s*\(.*", "", d).strip() for d in re.split(r",\s*(?![^()]*\))", c)]
                     for c in cells[2:]]
            rows.append((cells[0], cells[1], *names))
    return rows


def test_stage_table_matches_the_built_in_chain():
    phases = split_phases(assemble_chain())
    code = [(s.name, phase, list(s.requires), list(s.provides))
            for phase, stages in (("start", phases.start), ("section", phases.section), ("finish", phases.finish))
            for s in stages]
    assert documented_stages() == code
