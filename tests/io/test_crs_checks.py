"""The working CRS: UTM zone of any longitude (edges included) and the scale factor of a projected CRS."""
from __future__ import annotations

import math

import geopandas as gpd
import numpy as np
import pytest
import shapely
from pyproj import Geod

from routesag.io.crs_checks import centre_lon_lat, local_conformal_crs, scale_distortion, utm_zone
from routesag.io.structures import to_working_crs

# Zone n spans [-180 + 6 (n - 1), -180 + 6 n) degrees (Snyder 1987, USGS PP 1395, p. 57-58).
ZONE_EDGES = [(-180.0, 1), (-174.000001, 1), (-174.0, 2), (-0.000001, 30), (0.0, 31), (-0.0, 31),
              (5.999999, 31), (6.0, 32), (174.0, 60), (179.999999, 60), (180.0, 60)]


@pytest.mark.parametrize("lon, zone", ZONE_EDGES)
def test_utm_zone_at_the_edges(lon, zone):
    assert utm_zone(lon) == zone


def test_utm_zone_refuses_a_longitude_off_the_earth():
    with pytest.raises(ValueError):
        utm_zone(180.5)


@pytest.mark.parametrize("lon, lat, epsg", [(180.0, 10.0, 32660), (-180.0, 10.0, 32601), (180.0, -10.0, 32760),
                                            (15.0, 84.0, 32633), (15.0, -80.0, 32733)])
def test_local_crs_is_a_real_utm_zone(lon, lat, epsg):
    crs, _ = local_conformal_crs(lon, lat)
    assert crs.to_epsg() == epsg


def test_beyond_utm_latitudes_a_transverse_mercator_on_the_data_meridian():
    crs, name = local_conformal_crs(15.0, 85.0)
    assert crs.to_epsg() is None and "transverse Mercator on longitude 15" in name
    assert scale_distortion(crs, [15.0], [85.0]) < 1e-9


def test_centre_of_a_line_across_the_antimeridian():
    lon, lat = centre_lon_lat([179.99, -179.99], [10.0, 10.2])
    assert abs(abs(lon) - 180.0) < 1e-9 and lat == pytest.approx(10.1)
    assert centre_lon_lat([10.0, 20.0], [1.0, 3.0]) == (15.0, 2.0)


def lon_lat_line(points):
    return gpd.GeoDataFrame({"structure_id": [f"P{i}" for i in range(len(points))], "seq": range(len(points))},
                            geometry=shapely.points(points), crs="EPSG:4326")


def geodesic_m(a, b):
    """Ellipsoidal distance (Karney's algorithm in PROJ's Geod), the independent reference."""
    return Geod(ellps="WGS84").inv(a[0], a[1], b[0], b[1])[2]


@pytest.mark.parametrize("points", [
    [(179.998, 10.0), (-179.998, 10.001)],        # across the antimeridian
    [(180.0, -30.0), (179.996, -30.002)],         # on it
    [(-180.0, 45.0), (-179.996, 45.0)],
    [(15.0, 86.0), (15.02, 86.001)],              # beyond UTM
    [(5.9999, 60.0), (6.0031, 60.0)],             # across a zone edge
])
def test_spans_come_out_as_on_the_ellipsoid(points):
    gdf = lon_lat_line(points)
    out, crs, note = to_working_crs(gdf, "s.gpkg")
    measured = out.geometry.iloc[0].distance(out.geometry.iloc[1])
    # A conformal CRS near its centre line: scale within 0.1 % (UTM 0.9996..1.001, common practice).
    assert measured == pytest.approx(geodesic_m(*points), rel=1.5e-3), note


def test_web_mercator_scale_at_45_north_is_measured():
    # Spherical Mercator: k = sec(lat) (Snyder 1987, eq. 7-3); PROJ's ellipsoidal figure differs by < 0.3 %.
    assert 1.0 + scale_distortion("EPSG:3857", [15.0], [45.0]) == pytest.approx(1.0 / math.cos(math.radians(45)),
                                                                             rel=3e-3)
    assert scale_distortion("EPSG:32633", [15.0], [45.0]) == pytest.approx(4e-4, rel=1e-3)  # UTM k0 = 0.9996


@pytest.mark.parametrize("epsg", ["EPSG:3857", "EPSG:3395", "ESRI:54004", "EPSG:32636"])
def test_a_distorting_projected_crs_is_replaced(epsg):
    points = [(15.0, 45.0), (15.004, 45.001)]
    gdf = lon_lat_line(points).to_crs(epsg)
    out, crs, note = to_working_crs(gdf, "s.gpkg")
    assert crs.to_epsg() == 32633 and "scale factor" in note and "reprojected to EPSG:32633" in note
    measured = out.geometry.iloc[0].distance(out.geometry.iloc[1])
    assert measured == pytest.approx(geodesic_m(*points), rel=1.5e-3)


def test_a_projected_crs_with_a_true_scale_is_kept():
    gdf = lon_lat_line([(15.0, 45.0), (15.004, 45.001)]).to_crs("EPSG:32633")
    out, crs, note = to_working_crs(gdf, "s.gpkg")
    assert crs.to_epsg() == 32633 and "used as is" in note and out is gdf
    assert np.isfinite(out.geometry.x).all()
