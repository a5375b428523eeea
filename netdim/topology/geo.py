"""Distances on the Earth's surface between sites given by longitude and latitude."""

from __future__ import annotations

import math

__all__ = ["EARTH_RADIUS_KM", "great_circle_km", "valid_lonlat"]

#: Mean radius of the Earth in km (IUGG mean radius R1 of the GRS 80 ellipsoid [1]_).
EARTH_RADIUS_KM = 6371.0088


def great_circle_km(lon1: float, lat1: float, lon2: float, lat2: float,
                    radius: float = EARTH_RADIUS_KM) -> float:
    """Great-circle distance in km between two points given in decimal degrees.

    Parameters
    ----------
    lon1, lat1, lon2, lat2 : float
        Longitude and latitude of the two points, in degrees.
    radius : float
        Radius of the sphere, km (default :data:`EARTH_RADIUS_KM`).

    Returns
    -------
    float
        The distance along the sphere, km.

    Notes
    -----
    The central angle is computed as ``atan2`` of its sine and cosine, the special case of
    Vincenty's inverse formula for a sphere [2]_: accurate for every pair of points,
    including nearly equal and nearly antipodal ones (where the arc-cosine form loses
    digits). A sphere is within about 0.5 % of the ellipsoid's geodesic distance; fibre
    routes are longer than either.

    References
    ----------
    .. [1] H. Moritz, "Geodetic Reference System 1980", Bulletin Geodesique 54(3):395-405,
       1980.
    .. [2] T. Vincenty, "Direct and inverse solutions of geodesics on the ellipsoid with
       application of nested equations", Survey Review 23(176):88-93, 1975.

    Examples
    --------
    >>> round(great_circle_km(0.0, 0.0, 90.0, 0.0), 3)  # a quarter of the equator
    10007.557
    """
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dl = math.radians(lon2 - lon1)
    s1, c1 = math.sin(p1), math.cos(p1)
    s2, c2 = math.sin(p2), math.cos(p2)
    sdl, cdl = math.sin(dl), math.cos(dl)
    num = math.hypot(c2 * sdl, c1 * s2 - s1 * c2 * cdl)
    den = s1 * s2 + c1 * c2 * cdl
    return radius * math.atan2(num, den)


def valid_lonlat(lon, lat) -> bool:
    """True when ``lon`` is a finite number in [-180, 180] and ``lat`` one in [-90, 90]."""
    return (isinstance(lon, float) and isinstance(lat, float)
            and math.isfinite(lon) and math.isfinite(lat)
            and -180.0 <= lon <= 180.0 and -90.0 <= lat <= 90.0)
