"""Point-cloud objects on the span profile: a marker per vegetation/building violation and a link to its wire point.

Checked on the figure's artists, not pixels; the demo (invented data) has a tree grown into one span.
"""
import shapely

from routesag.visual import palette
from routesag.visual.profiles import draw_profile, profile_wire

CLOUD = ["vegetation", "building"]


def _cloud_violations(results, span_id):
    frame = results["clearance_violations"]
    wire = profile_wire(results, span_id)
    return frame[(frame["span_id"].astype(str) == span_id) & (frame["wire"].astype(str) == wire)
                 & frame["category"].isin(CLOUD)]


def _by_gid(fig, gid):
    return [line for line in fig.axes[0].get_lines() if line.get_gid() == gid]


def _cloud_span(results):
    frame = results["clearance_violations"]
    return str(frame[frame["category"] == "vegetation"]["span_id"].iloc[0])


def test_each_vegetation_violation_has_its_point_at_its_station_and_height(demo_results):
    span_id = _cloud_span(demo_results)
    mine = _cloud_violations(demo_results, span_id)
    assert len(mine) and set(mine["category"]) == {"vegetation"}
    fig = draw_profile(demo_results, span_id)
    markers, links = _by_gid(fig, "cloud_object"), _by_gid(fig, "cloud_link")
    assert len(markers) == len(mine) and len(links) == len(mine)
    span = demo_results["spans"][demo_results["spans"]["span_id"].astype(str) == span_id].iloc[0]
    start, end = list(span.geometry.coords)[0], list(span.geometry.coords)[-1]
    chord = shapely.LineString([start[:2], end[:2]])
    drawn = sorted((float(m.get_xdata()[0]), float(m.get_ydata()[0])) for m in markers)
    expected = sorted((chord.project(shapely.Point(v["surface_x"], v["surface_y"])), float(v["surface_z"]))
                      for _, v in mine.iterrows())
    for (x, z), (x_want, z_want) in zip(drawn, expected, strict=True):
        assert abs(x - x_want) < 0.5 and abs(z - z_want) < 1e-6
    assert all(m.get_color() == palette.CLOUD_OBJECT != palette.SURFACE for m in markers)
    # Each link runs from the violation's wire point to its object point.
    ends = [(*link.get_xdata(), *link.get_ydata()) for link in links]
    for _, v in mine.iterrows():
        at = chord.project(shapely.Point(v["surface_x"], v["surface_y"]))
        assert any(abs(x0 - v["station_m"]) < 1e-6 and abs(x1 - at) < 0.5 and z0 == v["conductor_z_m"]
                   and z1 == v["surface_z"] for x0, x1, z0, z1 in ends)
    labels = fig.axes[0].get_legend_handles_labels()[1]
    assert labels.count("point-cloud vegetation") == 1


def test_a_span_without_point_cloud_violations_has_no_cloud_artists(demo_results):
    frame = demo_results["clearance_violations"]
    other = next(s for s in demo_results["spans"]["span_id"].astype(str)
                 if not len(_cloud_violations(demo_results, s)) and s in set(frame["span_id"].astype(str)))
    fig = draw_profile(demo_results, other)
    assert not _by_gid(fig, "cloud_object") and not _by_gid(fig, "cloud_link")
    assert not any("point-cloud" in label for label in fig.axes[0].get_legend_handles_labels()[1])
