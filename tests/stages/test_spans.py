"""Tension section ids: named by their end strain structures, so they do not depend on where a file starts."""
import numpy as np
import pandas as pd

from routesag.stages.spans import build_spans, summarise_sections

KINDS = ["strain", "suspension", "suspension", "strain", "suspension", "strain", "suspension", "suspension",
         "suspension", "strain"]


def structures(first: int = 0) -> pd.DataFrame:
    """Ten structures T11..T20 on a straight line, strain at T11, T14, T16 and T20; from index ``first`` on."""
    n = len(KINDS)
    frame = pd.DataFrame({"structure_id": [f"T{11 + i}" for i in range(n)], "seq": np.arange(n) * 10,
                          "line_id": "L1", "kind": KINDS, "x": np.arange(n) * 300.0, "y": 0.0,
                          "attach_z_m": 120.0})
    return frame.iloc[first:].reset_index(drop=True)


def section_of_spans(frame: pd.DataFrame) -> dict[str, str]:
    spans = build_spans(frame)
    return dict(zip(spans["span_id"], spans["section_id"]))


def test_sections_are_named_by_their_strain_structures():
    sections = summarise_sections(build_spans(structures()))
    assert sections["section_id"].tolist() == ["L1:T11-T14", "L1:T14-T16", "L1:T16-T20"]
    assert (sections["section_id"] == "L1:" + sections["from_id"] + "-" + sections["to_id"]).all()
    assert sections["n_spans"].tolist() == [3, 2, 4]


def test_cutting_the_line_at_another_start_keeps_the_shared_sections_ids():
    whole = section_of_spans(structures())
    strain_at = [i for i, kind in enumerate(KINDS) if kind == "strain"]
    for first in (2, 3, 6):  # a suspension start, a strain start, a start inside the last section
        cut = section_of_spans(structures(first))
        # Sections that start at a strain structure the cut file holds are whole in both files.
        shared = [span for span in cut if strain_at[np.searchsorted(strain_at, span_index(span), "right") - 1]
                  >= first]
        assert all(cut[span] == whole[span] for span in shared), first
        assert len(shared) == len(KINDS) - 1 - next(i for i in strain_at if i >= first)
        # A partial first section is named by the cut file's first structure: an id of its own.
        for span in set(cut) - set(shared):
            end = next(i for i in strain_at if i > first)
            assert cut[span] == f"L1:T{11 + first}-T{11 + end}" != whole[span]


def span_index(span_id: str) -> int:
    """Index in KINDS of a span's first structure (``L1:T13-T14`` -> 2)."""
    return int(span_id.removeprefix("L1:T").split("-")[0]) - 11
