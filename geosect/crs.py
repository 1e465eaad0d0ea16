"""The working CRS: read what users type, choose a UTM zone automatically, transform at the edges.

All geometry work happens in one projected, metric CRS.  Geographic input is
transformed into it when read; a geographic working CRS is refused.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from pyproj import CRS, Transformer
from pyproj.aoi import AreaOfInterest
from pyproj.database import query_utm_crs_info
from pyproj.exceptions import CRSError as _PyprojCRSError

from .errors import CRSError

__all__ = ["WorkingCRS", "parse_crs", "choose_working_crs", "to_lonlat", "from_lonlat", "transform"]


def parse_crs(text: str | int | CRS, *, file: str | None = None, key: str | None = None) -> CRS:
    """Read a CRS as users write it: ``"EPSG:32633"``, ``32633``, ``"32633"``, WKT or PROJ strings.

    >>> parse_crs("EPSG:32633").name
    'WGS 84 / UTM zone 33N'
    >>> parse_crs(4326).is_geographic
    True
    """
    if isinstance(text, CRS):
        return text
    value: str | int = text
    if isinstance(text, str) and text.strip().isdigit():
        value = int(text.strip())
    try:
        return CRS.from_user_input(value)
    except (_PyprojCRSError, TypeError, ValueError) as exc:
        raise CRSError(
            f"cannot read the CRS {str(text)[:80]!r} ({exc})",
            file=file,
            key=key,
            fix="write an EPSG code such as \"EPSG:32633\", or WKT; for the working CRS, \"auto\" picks the UTM "
            "zone of the data.",
        ) from None


@dataclass(frozen=True)
class WorkingCRS:
    """The project's working CRS and why it was chosen."""

    crs: CRS
    reason: str

    @property
    def name(self) -> str:
        return self.crs.name

    @property
    def code(self) -> str:
        auth = self.crs.to_authority()
        return f"{auth[0]}:{auth[1]}" if auth else self.crs.to_wkt()[:60]


def choose_working_crs(setting: str, lon: np.ndarray | None = None, lat: np.ndarray | None = None, *,
                       file: str | None = None) -> WorkingCRS:
    """The working CRS from the project setting.

    ``"auto"`` takes the WGS 84 UTM zone that contains the centre of the data
    (``lon``, ``lat`` in degrees; NaN ignored), looked up in the PROJ database
    with :func:`pyproj.database.query_utm_crs_info`.  Otherwise the setting is
    parsed with :func:`parse_crs`.  A geographic CRS is refused.
    """
    if setting.strip().lower() == "auto":
        if lon is None or lat is None:
            raise CRSError("crs = 'auto' needs data to choose from, and no point has valid coordinates",
                           file=file, key="project.crs", fix="state the working CRS, for example crs = \"EPSG:32633\".")
        lon = np.asarray(lon, float)
        lat = np.asarray(lat, float)
        ok = np.isfinite(lon) & np.isfinite(lat) & (np.abs(lat) <= 90) & (np.abs(lon) <= 180)
        if not ok.any():
            raise CRSError("crs = 'auto' needs points with valid coordinates, and there are none", file=file,
                           key="project.crs", fix="check the coordinate columns, or state the working CRS.")
        clon, clat = float(np.median(lon[ok])), float(np.median(lat[ok]))
        if abs(clat) > 84:
            raise CRSError(f"the data lie at latitude {clat:.1f}, outside the UTM zones", file=file,
                           key="project.crs", fix="state a polar projected CRS, e.g. \"EPSG:3413\" or \"EPSG:3031\".")
        infos = query_utm_crs_info(datum_name="WGS 84",
                                   area_of_interest=AreaOfInterest(clon, clat, clon, clat))
        # prefer the plain WGS 84 / UTM zone nnN|S codes (EPSG 326xx, 327xx)
        infos = sorted(infos, key=lambda i: (not i.code.startswith(("326", "327")), i.code))
        if not infos:  # pragma: no cover - PROJ database always has one
            raise CRSError("no UTM zone found for the data", file=file, key="project.crs",
                           fix="state the working CRS.")
        crs = CRS.from_epsg(int(infos[0].code))
        span = float(np.nanmax(lon[ok]) - np.nanmin(lon[ok]))
        reason = (f"auto: the UTM zone containing the centre of the data (lon {clon:.3f}, lat {clat:.3f}); "
                  f"the data span {span:.2f}° of longitude")
        if span > 6:
            reason += " (wider than one zone: consider stating a CRS suited to the whole area)"
        return WorkingCRS(crs, reason)
    crs = parse_crs(setting, file=file, key="project.crs")
    if not crs.is_projected:
        raise CRSError(
            f"the working CRS '{crs.name}' is {'geographic' if crs.is_geographic else 'not projected'}; "
            "geometry needs metres",
            file=file, key="project.crs",
            fix="choose a projected CRS in metres (e.g. a UTM zone, \"EPSG:32633\") or crs = \"auto\".",
        )
    unit = crs.axis_info[0].unit_name if crs.axis_info else "metre"
    if unit not in ("metre", "meter"):
        raise CRSError(f"the working CRS '{crs.name}' has axes in {unit}, not metres", file=file, key="project.crs",
                       fix="choose a projected CRS in metres.")
    return WorkingCRS(crs, "stated in the project file")


def transform(src: CRS, dst: CRS, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Transform coordinates from ``src`` to ``dst``, easting/longitude first (always_xy)."""
    t = Transformer.from_crs(src, dst, always_xy=True)
    xx, yy = t.transform(np.asarray(x, float), np.asarray(y, float))
    return np.asarray(xx, float), np.asarray(yy, float)


def to_lonlat(crs: CRS, e: np.ndarray, n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Working-CRS easting/northing to WGS 84 longitude/latitude (degrees)."""
    return transform(crs, CRS.from_epsg(4326), e, n)


def from_lonlat(crs: CRS, lon: np.ndarray, lat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """WGS 84 longitude/latitude (degrees) to working-CRS easting/northing."""
    return transform(CRS.from_epsg(4326), crs, lon, lat)
