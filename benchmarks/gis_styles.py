"""Time the GIS styles against the GeoPackage they style (sample site; medians of 3).

``PYTHONPATH=$PWD python benchmarks/gis_styles.py [SITE]`` prints, for the sample site:
the GeoPackage exporter's layers alone, ``write_layer_styles`` (grid layers and the
``layer_styles`` table), and the ``qgis-project`` exporter (raster ``.qml`` and
``survey.qgs``), each a median of 3 in seconds, and the styles' share of the GeoPackage
time.  No timing is asserted anywhere.
"""

from __future__ import annotations

import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

from geo_corrosion.exporters import gpkg as gpkg_module
from geo_corrosion.exporters.gpkg import GeoPackageExporter
from geo_corrosion.exporters.qgis_project import QgisProjectExporter
from geo_corrosion.exporters.qgis_styles import write_layer_styles
from geo_corrosion.exporters.rasters import GeoTiffExporter
from geo_corrosion.pipeline import check, process


def main() -> None:
    """Run the site once, then time the exporters three times each."""
    site = sys.argv[1] if len(sys.argv) > 1 else "sample_sites/millbrook_garage"
    import warnings

    warnings.simplefilter("ignore")
    s, flags = check(site)
    result = process(s, flags)
    layers, styles, project = [], [], []
    for _ in range(3):
        out = Path(tempfile.mkdtemp(prefix="gc_bench_"))
        try:
            gpkg_module.write_layer_styles = lambda *_a: {}  # type: ignore[assignment]
            t0 = time.perf_counter()
            GeoPackageExporter().export(result, out)
            layers.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            write_layer_styles(out / "survey.gpkg", result)
            styles.append(time.perf_counter() - t0)
            GeoTiffExporter().export(result, out)
            t0 = time.perf_counter()
            QgisProjectExporter().export(result, out)
            project.append(time.perf_counter() - t0)
        finally:
            gpkg_module.write_layer_styles = write_layer_styles
            shutil.rmtree(out, ignore_errors=True)
    m = [statistics.median(x) for x in (layers, styles, project)]
    print(f"geopackage layers   median {m[0]:.2f} s")
    print(f"layer styles + grid median {m[1]:.2f} s  ({m[1] / m[0]:.2f} x the layers)")
    print(f"qgis-project        median {m[2]:.2f} s  ({m[2] / m[0]:.2f} x the layers)")


if __name__ == "__main__":
    main()
