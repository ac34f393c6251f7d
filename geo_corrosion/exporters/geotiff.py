"""GeoTIFF writer for kriged surfaces and their kriging variance.

Files are tiled (256 x 256), DEFLATE-compressed (floating-point predictor),
carry internal overviews, a nodata value, the CRS, a description (the band
name) and a unit per band.  They are written to a temporary file in the target
folder and moved into place with ``os.replace``, so a reader never sees a
half-written file.
"""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Any

import affine
import numpy as np
import rasterio
from numpy.typing import NDArray
from rasterio.enums import Resampling

from geo_corrosion._io import atomic_write
from geo_corrosion.errors import ExportError

__all__ = ["write_geotiff"]

_BLOCK = 256


def _to_rasterio_crs(crs: Any) -> rasterio.crs.CRS | None:
    if crs is None:
        return None
    if isinstance(crs, rasterio.crs.CRS):
        return crs
    try:
        if hasattr(crs, "to_wkt"):
            return rasterio.crs.CRS.from_wkt(crs.to_wkt())
        return rasterio.crs.CRS.from_user_input(crs)
    except Exception as err:  # rasterio raises its own CRSError
        raise ExportError(f"cannot use CRS {crs!r} for a GeoTIFF: {err}") from err


def _overview_factors(width: int, height: int) -> list[int]:
    factors: list[int] = []
    f = 2
    while min(width, height) // f >= 1 and (f == 2 or max(width, height) / f >= _BLOCK / 4):
        factors.append(f)
        f *= 2
    return factors


def write_geotiff(
    path: str | os.PathLike[str],
    bands: dict[str, NDArray[np.float64]],
    *,
    transform: affine.Affine,
    crs: Any,
    nodata: float = -9999.0,
    units: dict[str, str],
    tags: dict[str, Any] | None = None,
    dtype: str = "float32",
    overwrite: bool = True,
) -> Path:
    """Write 2-D arrays as the bands of one GeoTIFF.

    Parameters
    ----------
    path : path-like
        Output file (``.tif``).
    bands : dict of str to ndarray
        Band description -> ``(rows, cols)`` array, row 0 at the top; NaN is written as nodata.
    transform : affine.Affine
        Pixel to CRS coordinates (upper-left corner convention).
    crs : pyproj.CRS, rasterio CRS, str or None
        Coordinate reference system; None writes no CRS (local survey grid).
    nodata : float
        Nodata value.
    units : dict of str to str
        Unit of every band (e.g. ``{"potential_mv": "mV"}``).
    tags : dict, optional
        Dataset tags (values are written as strings).
    dtype : str
        Raster data type (``"float32"`` or ``"float64"``).
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    Path
        The written file.

    Raises
    ------
    ExportError
        On empty or mismatched bands, a missing unit, an existing file
        without ``overwrite``, or a write failure.
    """
    out = Path(path)
    if not bands:
        raise ExportError(f"{out}: no band to write")
    arrays = {k: np.asarray(v) for k, v in bands.items()}
    shapes = {a.shape for a in arrays.values()}
    if len(shapes) != 1 or len(next(iter(shapes))) != 2:
        raise ExportError(f"{out}: bands must be 2-D arrays of one shape, got {sorted(shapes)}")
    missing = [k for k in arrays if k not in units]
    if missing:
        raise ExportError(f"{out}: no unit given for band(s) {missing}; pass units={{name: unit}}")
    if out.exists() and not overwrite:
        raise ExportError(f"{out} exists; pass overwrite=True to replace it")
    if not out.parent.is_dir():
        raise ExportError(f"{out}: folder {out.parent} does not exist")
    if not math.isfinite(nodata):
        raise ExportError(f"{out}: nodata must be a finite number, got {nodata}")
    height, width = next(iter(shapes))
    profile = {
        "driver": "GTiff",
        "width": width,
        "height": height,
        "count": len(arrays),
        "dtype": dtype,
        "crs": _to_rasterio_crs(crs),
        "transform": transform,
        "nodata": nodata,
        "tiled": True,
        "blockxsize": _BLOCK,
        "blockysize": _BLOCK,
        "compress": "deflate",
        "predictor": 3,
        "BIGTIFF": "IF_SAFER",
    }
    def write(tmp: Path) -> None:
        with rasterio.Env(GDAL_TIFF_INTERNAL_MASK=True):
            with rasterio.open(tmp, "w", **profile) as dst:
                for i, (name, arr) in enumerate(arrays.items(), start=1):
                    a = np.where(np.isfinite(arr), arr, nodata).astype(dtype)
                    dst.write(a, i)
                    dst.set_band_description(i, name)
                    dst.set_band_unit(i, units[name])
                if tags:
                    dst.update_tags(**{str(k): str(v) for k, v in tags.items()})
                factors = _overview_factors(width, height)
                if factors:
                    dst.build_overviews(factors, Resampling.average)
                    dst.update_tags(ns="rio_overview", resampling="average")

    atomic_write(out, write, what="GeoTIFF")
    return out
