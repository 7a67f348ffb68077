"""Which CRS spans are measured in: the UTM zone of any longitude, and the scale distortion of a projected CRS.

A projected CRS in metres is not always a CRS in which a metre on the map is
a metre on the ground: Web Mercator (EPSG:3857) at 45 degrees north stretches
every distance by 1/cos(45 deg) = 1.414 (and more on the ellipsoid), so spans
and sags come out far too long. The scale factor is measured at the
structures; above :data:`MAX_SCALE_DISTORTION` the structures are reprojected
to a local conformal CRS, as lat/lon input is.
"""
from __future__ import annotations

import numpy as np
from pyproj import CRS, Proj
from pyproj.exceptions import CRSError, ProjError

#: Largest tolerated departure of the point scale factor from 1 (0.5 %): UTM stays within 0.1 % inside its zone
#: (scale 0.9996 on the central meridian, about 1.001 at the zone edge on the equator; common practice).
MAX_SCALE_DISTORTION = 0.005
#: UTM is defined from 80 deg S to 84 deg N; beyond, a transverse Mercator on the data's own meridian is used.
UTM_LATITUDES = (-80.0, 84.0)


def utm_zone(lon_deg: float) -> int:
    """UTM zone number 1..60 of a longitude [deg]; a zone's west edge belongs to it, 180 deg to zone 60.

    Zone n spans longitudes [-180 + 6 (n - 1), -180 + 6 n); longitude 180 (the same meridian as -180) is
    put in zone 60, whose east edge it is. The Norway and Svalbard exceptions are not applied: any zone
    near the line measures it equally well, and the standard zones keep the choice predictable.

    References
    ----------
    .. [1] J.P. Snyder, "Map Projections: A Working Manual", USGS Professional Paper 1395, 1987,
       p. 57-58 (UTM zones of 6 deg from 180 deg, zone 1 from 180 W to 174 W).
    """
    lon = float(lon_deg)
    if not -180.0 <= lon <= 180.0:
        raise ValueError(f"longitude {lon!r} is outside -180..180 degrees")
    return min(int((lon + 180.0) // 6.0) + 1, 60)


def centre_lon_lat(lon_deg, lat_deg) -> tuple[float, float]:
    """Middle of the points' longitude and latitude ranges [deg]; a line across the 180 deg meridian stays whole.

    Longitudes spread over more than 180 deg are taken as crossing the antimeridian: the western ones are
    counted from 180 E onwards (+360) and the middle is wrapped back into -180..180.
    """
    lon, lat = np.asarray(lon_deg, dtype=float), np.asarray(lat_deg, dtype=float)
    if np.ptp(lon) > 180.0:
        lon = np.where(lon < 0.0, lon + 360.0, lon)
    middle = (lon.min() + lon.max()) / 2.0
    if middle > 180.0:
        middle -= 360.0
    return float(middle), float((lat.min() + lat.max()) / 2.0)


def local_conformal_crs(lon_deg: float, lat_deg: float) -> tuple[CRS, str]:
    """A conformal CRS in metres for data centred at (lon, lat) and a short name saying which.

    WGS 84 UTM (zone by :func:`utm_zone`, north or south by the latitude) where UTM is defined, else a
    transverse Mercator with scale 1 on the data's own meridian (UTM's polar stereographic companion has a
    scale of 0.994 at the pole, beyond :data:`MAX_SCALE_DISTORTION`).
    """
    low, high = UTM_LATITUDES
    if low <= lat_deg <= high:
        zone = utm_zone(lon_deg)
        return CRS.from_epsg((32600 if lat_deg >= 0 else 32700) + zone), f"UTM zone {zone}"
    lon_0 = round(float(lon_deg), 6)
    crs = CRS.from_proj4(f"+proj=tmerc +lat_0=0 +lon_0={lon_0} +k=1 +x_0=0 +y_0=0 +datum=WGS84 +units=m")
    return crs, f"transverse Mercator on longitude {lon_0:g} (beyond UTM's latitudes)"


def scale_distortion(crs, lon_deg, lat_deg) -> float | None:
    """Largest |k - 1| of the CRS's meridian and parallel scale factors at the given points, or None.

    None when PROJ cannot give the factors (a CRS without a projection such as a local grid).

    References
    ----------
    .. [1] J.P. Snyder, "Map Projections: A Working Manual", USGS Professional Paper 1395, 1987,
       p. 20-24 (scale factors h along the meridian and k along the parallel).
    """
    try:
        factors = Proj(CRS.from_user_input(crs)).get_factors(np.asarray(lon_deg, dtype=float),
                                                            np.asarray(lat_deg, dtype=float))
    except (CRSError, ProjError, RuntimeError, TypeError):
        return None
    scales = np.concatenate([np.ravel(factors.meridional_scale), np.ravel(factors.parallel_scale)])
    scales = scales[np.isfinite(scales)]
    return float(np.max(np.abs(scales - 1.0))) if scales.size else None
