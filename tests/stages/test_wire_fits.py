"""One section's wire points: assignment to span and wire, fits, and the section's as-found tension."""
import numpy as np
import pandas as pd
import pytest

from routesag.physics.catenary import catenary_z
from routesag.stages.wire_fits import fit_section, section_estimates

C_M, W_N_M = 1400.0, 15.0


def section_rows():
    rows = []
    for k, (xa, xb) in enumerate([(0.0, 300.0), (300.0, 620.0)]):
        for wire, y in (("A", 0.0), ("B", -5.0)):
            rows.append({"span_id": f"L:{k}-{k + 1}", "from_id": str(k), "to_id": str(k + 1), "section_id": "L:S0",
                         "wire": wire, "x0": xa, "y0": y, "z0": 150.0, "x1": xb, "y1": y, "z1": 150.0 + 4 * k,
                         "span_m": xb - xa})
    return pd.DataFrame(rows)


def test_points_of_two_wires_in_two_spans_give_four_good_fits_and_one_tension():
    rng = np.random.default_rng(3)
    spans = section_rows()
    xs, ys, zs = [], [], []
    for _, r in spans.iterrows():
        along = rng.uniform(6.0, r["span_m"] - 6.0, 200)
        xs.append(r["x0"] + along)
        ys.append(r["y0"] + rng.normal(0, 0.1, along.size))
        zs.append(r["z0"] + catenary_z(along, r["span_m"], r["z1"] - r["z0"], C_M) + rng.normal(0, 0.03, along.size))
    # jumper points at structure 1 (inside the 5 m gap) and one point between the wires (ambiguous with 3 m reach)
    xs.append(np.array([301.0, 150.0])); ys.append(np.array([0.0, -2.5])); zs.append(np.array([150.0, 140.0]))
    fits, catenaries, counts = fit_section(spans, np.concatenate(xs), np.concatenate(ys), np.concatenate(zs),
                                           {"A": W_N_M, "B": W_N_M}, search_m=3.0)
    assert list(fits["quality"]) == ["good"] * 4
    np.testing.assert_allclose(fits["horizontal_tension_n"], C_M * W_N_M, rtol=0.01)
    assert counts == {"unmatched": 1, "ambiguous": 1}
    estimates = section_estimates(fits, catenaries, {"A": W_N_M, "B": W_N_M})
    assert list(estimates["wire"]) == ["A", "B"]
    np.testing.assert_allclose(estimates["as_found_tension_n"], C_M * W_N_M, rtol=0.01)
    assert (estimates["as_found_spread_percent"] < 2.0).all()


def test_a_span_without_points_fails_and_is_left_out_of_the_estimate():
    spans = section_rows()
    fits, catenaries, counts = fit_section(spans, np.empty(0), np.empty(0), np.empty(0), {"A": W_N_M, "B": W_N_M})
    assert (fits["quality"] == "failed").all()
    estimates = section_estimates(fits, catenaries, {"A": W_N_M, "B": W_N_M})
    assert estimates["as_found_tension_n"].isna().all() and (estimates["n_good_fits"] == 0).all()
