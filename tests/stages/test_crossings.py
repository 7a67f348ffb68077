"""Crossings layer: checks, buffering of lines, and the category of each station."""
import geopandas as gpd
import numpy as np
import pytest
import shapely
from pyproj import CRS

from routesag.errors import DataError
from routesag.io.crossings import check_crossings
from routesag.project import ClearanceRules
from routesag.stages.crossings import classify_points, empty_crossings

WORK = CRS.from_epsg(32633)
RULES = ClearanceRules(base_m={"ground": 7.0, "road": 9.0, "railway": 12.0, "water": 5.0})


def layer(geometries, crs=WORK, **fields):
    return gpd.GeoDataFrame(fields, geometry=list(geometries), crs=crs)


def box(x0, y0, x1, y1):
    return shapely.box(x0, y0, x1, y1)


def test_inside_a_crossing_takes_its_category_outside_is_ground():
    crossings = check_crossings(layer([box(10, -5, 20, 5)], category=["road"]), "x.gpkg", RULES, WORK)
    xy = np.array([[5.0, 0.0], [15.0, 0.0], [25.0, 0.0]])
    required, category = classify_points(xy, crossings, 7.0)
    assert category.tolist() == ["ground", "road", "ground"]
    assert required.tolist() == [7.0, 9.0, 7.0]


def test_overlap_takes_the_larger_requirement_even_below_ground():
    # Water (5.0 m) overlaps a railway (12.0 m): the railway governs where both apply, water elsewhere.
    areas = layer([box(0, -5, 20, 5), box(10, -5, 30, 5)], category=["water", "railway"])
    crossings = check_crossings(areas, "x.gpkg", RULES, WORK)
    required, category = classify_points(np.array([[5.0, 0], [15.0, 0], [25.0, 0]]), crossings, 7.0)
    assert category.tolist() == ["water", "railway", "railway"]
    assert required.tolist() == [5.0, 12.0, 12.0]


def test_line_is_buffered_by_half_its_width_with_flat_ends():
    line = shapely.LineString([(0, -50), (0, 50)])
    crossings = check_crossings(layer([line, shapely.LineString([(100, -50), (100, 50)])],
                                      category=["road", "road"], width_m=[8.0, np.nan]), "x.gpkg", RULES, WORK)
    required, category = classify_points(np.array([[3.9, 0], [4.1, 0], [0, 50.5], [104.9, 0], [105.1, 0]]),
                                         crossings, 7.0)
    # 8 m wide: inside up to 4 m from the axis; the second line uses the default width (10 m, README).
    assert category.tolist() == ["road", "ground", "ground", "road", "ground"]


def test_feature_required_m_overrides_category_and_adder_applies():
    rules = ClearanceRules(base_m=dict(RULES.base_m), voltage_kv=138.0, max_voltage_kv=145.0)
    areas = layer([box(0, 0, 1, 1), box(5, 0, 6, 1)], category=["road", "canal"], required_m=[np.nan, 6.5])
    crossings = check_crossings(areas, "x.gpkg", rules, WORK)
    adder = 0.01 * (145.0 / np.sqrt(3.0) - 22.0)  # NESC 232C1a summary (FIELD.md §6)
    assert crossings["required_m"].tolist() == pytest.approx([9.0 + adder, 6.5 + adder])


def test_reprojected_to_the_working_crs():
    areas = layer([box(0, -5, 20, 5)], category=["road"]).to_crs(4326)
    crossings = check_crossings(areas, "x.gpkg", RULES, WORK)
    assert crossings.crs == WORK
    assert crossings.geometry.iloc[0].area == pytest.approx(200.0, rel=1e-3)


@pytest.mark.parametrize("fields, geometry, message", [
    ({"kind": ["road"]}, box(0, 0, 1, 1), "missing required field 'category'"),
    ({"category": [""]}, box(0, 0, 1, 1), "feature 1 .*field 'category' is empty"),
    ({"category": ["surface"]}, box(0, 0, 1, 1), "category 'surface' is reserved"),
    ({"category": ["raod"]}, box(0, 0, 1, 1), "category 'raod' has no required clearance.*did you mean 'road'"),
    ({"category": ["road"]}, shapely.Point(0, 0), "feature 1 \\(category 'road'\\): geometry is Point"),
    ({"category": ["road"], "width_m": [-2.0]}, shapely.LineString([(0, 0), (1, 1)]),
     "field 'width_m' = -2 must be > 0"),
    ({"category": ["road"], "required_m": ["high"]}, box(0, 0, 1, 1), "field 'required_m' = 'high' is not a number"),
])
def test_bad_features_are_named(fields, geometry, message):
    with pytest.raises(DataError, match=f"crossings file x.gpkg: .*{message}"):
        check_crossings(layer([geometry], **fields), "x.gpkg", RULES, WORK)


def test_missing_crs_is_refused_unless_given():
    areas = layer([box(0, 0, 1, 1)], crs=None, category=["road"])
    with pytest.raises(DataError, match="no CRS"):
        check_crossings(areas, "x.gpkg", RULES, WORK)
    assert len(check_crossings(areas, "x.gpkg", RULES, WORK, default_crs="EPSG:32633")) == 1


def test_no_crossings_means_ground_everywhere():
    required, category = classify_points(np.zeros((3, 2)), empty_crossings(WORK), 7.0)
    assert set(category) == {"ground"} and set(required) == {7.0}


def site_grid() -> CRS:
    """A local engineering CRS in metres: PROJ cannot relate it to any earth CRS."""
    return CRS.from_wkt('ENGCRS["site grid",EDATUM["site"],CS[Cartesian,2],AXIS["x",east,LENGTHUNIT["metre",1]],'
                        'AXIS["y",north,LENGTHUNIT["metre",1]]]')


def test_projected_metres_labelled_lat_lon_are_refused_not_lost():
    # UTM metres read as degrees cannot be placed: the road must not turn into an empty area.
    areas = layer([box(500010, 5600000, 500020, 5600010), box(10, 50, 10.001, 50.001)],
                  crs="EPSG:4326", category=["road", "railway"])
    with pytest.raises(DataError) as info:
        check_crossings(areas, "x.gpkg", RULES, WORK, layer="crossings")
    assert info.value.problems == [
        "crossings file x.gpkg, layer 'crossings': feature 1 (category 'road'): coordinates cannot be placed in "
        "the working CRS 'WGS 84 / UTM zone 33N' from the layer's CRS EPSG:4326; check the layer's CRS "
        "(projected metres labelled as lat/lon?)"]


@pytest.mark.parametrize("layer_crs, work", [(site_grid(), WORK), (WORK, site_grid())])
def test_crs_that_cannot_be_related_is_a_data_error(layer_crs, work):
    areas = layer([box(0, 0, 10, 10)], crs=layer_crs, category=["road"])
    with pytest.raises(DataError, match=r"crossings file x.gpkg, layer 'roads': CRS '.*' cannot be transformed to "
                                        r"the working CRS '.*' \(.*\); give the crossings layer the structures' CRS"):
        check_crossings(areas, "x.gpkg", RULES, work, layer="roads")


def test_same_local_grid_as_the_structures_is_used_as_is():
    grid = site_grid()
    crossings = check_crossings(layer([box(0, 0, 10, 10)], crs=grid, category=["road"]), "x.gpkg", RULES, grid)
    assert crossings.geometry.iloc[0].area == 100.0


def test_feature_without_area_is_refused():
    collapsed = shapely.Polygon([(0, 0), (10, 0), (20, 0)])
    zero_length = shapely.LineString([(5, 5), (5, 5)])
    areas = layer([box(0, 0, 1, 1), collapsed, zero_length], category=["road", "water", "railway"])
    with pytest.raises(DataError) as info:
        check_crossings(areas, "x.gpkg", RULES, WORK)
    assert [p.split(": ")[1] for p in info.value.problems] == ["feature 2 (category 'water')",
                                                                "feature 3 (category 'railway')"]
    assert all("geometry has no area in the working CRS" in p for p in info.value.problems)


def test_a_layer_far_from_the_line_is_flagged():
    """A layer in the wrong (but valid) CRS lands far away: warn instead of silently applying no rule."""
    from routesag.stages.crossings import far_from_line

    structures = np.array([[0.0, 0.0], [300.0, 0.0]])
    near = check_crossings(layer([box(100, -5, 110, 5)], category=["road"]), "x.gpkg", RULES, WORK)
    far = check_crossings(layer([box(100, 5e5, 110, 5e5 + 10)], category=["road"]), "x.gpkg", RULES, WORK)
    assert far_from_line(near, structures) is None
    assert "none of its 1 features lies within 1000 m of the line" in far_from_line(far, structures)
    assert far_from_line(empty_crossings(WORK), structures) is None
