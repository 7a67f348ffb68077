"""Hotspots: single-linkage merging of violations, governing values, ranking."""
import pandas as pd
import pytest

from routesag.stages.hotspots import cluster_labels, merge_hotspots


def violations(rows, wire=False):
    columns = ["x", "y", "deficit_m", "load_case", "category", "span_id"] + (["wire"] if wire else [])
    frame = pd.DataFrame(rows, columns=columns)
    return frame.assign(station_m=frame["x"], clearance_m=7.0 - frame["deficit_m"], required_m=7.0,
                        conductor_z_m=100.0)


def test_single_linkage_chains_neighbours():
    # 0-8-16 is one chain within 10 m although 0 and 16 are 16 m apart; 40 and 50, exactly 10 m apart, merge.
    labels = cluster_labels([0.0, 8.0, 16.0, 40.0, 50.0], [0.0] * 5, 10.0)
    assert labels[0] == labels[1] == labels[2]
    assert labels[3] == labels[4] != labels[0]


def test_merged_hotspot_keeps_worst_and_counts_all():
    v = violations([
        (0.0, 0.0, 0.5, "hot", "ground", "s1", "A"),
        (6.0, 0.0, 1.5, "ice", "road", "s1", "B"),
        (12.0, 0.0, 0.2, "hot", "ground", "s1", "C"),
        (200.0, 0.0, 0.9, "hot", "surface", "s2", "A"),
    ], wire=True)
    hotspots = merge_hotspots(v, 10.0)
    assert len(hotspots) == 2
    first, second = hotspots.iloc[0], hotspots.iloc[1]
    assert (first["rank"], first["deficit_m"], first["load_case"], first["category"], first["wire"]) == \
        (1, 1.5, "ice", "road", "B")
    assert first["n_violations"] == 3
    assert first["load_cases"] == "ice, hot" and first["wires"] == "B, A, C"
    assert first["categories"] == "road, ground"
    assert (first["x"], first["y"]) == (6.0, 0.0)  # at the governing violation
    assert (second["rank"], second["n_violations"], second["category"]) == (2, 1, "surface")


def test_without_wire_column_there_is_no_wire():
    v = violations([(0.0, 0.0, 0.5, "hot", "ground", "s1"), (3.0, 0.0, 0.7, "cold", "ground", "s1")])
    hotspots = merge_hotspots(v, 10.0)
    assert "wire" not in hotspots.columns
    assert len(hotspots) == 1 and hotspots["deficit_m"].iloc[0] == pytest.approx(0.7)


def test_merge_distance_matters():
    v = violations([(0.0, 0.0, 0.5, "hot", "ground", "s1"), (15.0, 0.0, 0.7, "hot", "ground", "s1")])
    assert len(merge_hotspots(v, 10.0)) == 2
    assert len(merge_hotspots(v, 20.0)) == 1


def test_no_violations_no_hotspots():
    hotspots = merge_hotspots(pd.DataFrame(), 10.0)
    assert len(hotspots) == 0 and "rank" in hotspots.columns


def test_listed_values_are_the_distinct_ones_worst_first_per_hotspot():
    # reference: per hotspot, the distinct values in the worst-first order, as the violations list them
    import numpy as np

    rng = np.random.default_rng(5)
    n = 300
    rows = [(float(x), 0.0, float(d), str(rng.choice(["hot", "ice", "wind"])), str(rng.choice(["ground", "road"])),
             f"s{int(x // 50)}", str(rng.choice(["A", "B", "C"])))
            for x, d in zip(rng.uniform(0, 3000, n), rng.uniform(0, 3, n))]
    v = violations(rows, wire=True)
    hotspots = merge_hotspots(v, 12.0)
    labels = cluster_labels(v["x"].to_numpy(), v["y"].to_numpy(), 12.0)
    for hotspot in hotspots.itertuples():
        group = labels[int(np.flatnonzero((v["x"] == hotspot.x).to_numpy())[0])]
        members = v[labels == group].sort_values(["deficit_m", "span_id", "load_case", "station_m"],
                                                   ascending=[False, True, True, True], kind="stable")
        assert hotspot.load_cases == ", ".join(dict.fromkeys(members["load_case"]))
        assert hotspot.wires == ", ".join(dict.fromkeys(members["wire"]))
        assert hotspot.span_ids == ", ".join(dict.fromkeys(members["span_id"]))
        assert hotspot.n_violations == len(members)
    assert len(hotspots) > 20 and (hotspots["n_violations"] > 1).any()
