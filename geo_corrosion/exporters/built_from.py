"""Which repair layers each document of a run was built from, and a check before a rebuild.

The schedule, the drawing sheets, the report and the web map of a run are built from the
same repairs.  :func:`repair_checksums` gives the SHA-256 of each ``<level>_repairs`` layer
of a run's GeoPackage (its repair ids and outlines, so a GIS that rewrites the file without
changing a repair changes nothing); ``run.json`` records them per document
(``built_from``).  :func:`refuse_edited_repairs` refuses to rebuild the report or the web map
alone from a GeoPackage whose repairs were edited since: the tables would show the old
areas beside the new outlines.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import pyogrio
import shapely

from geo_corrosion.errors import ExportError
from geo_corrosion.model.manifest import MANIFEST_NAME, Manifest

__all__ = ["GPKG_NAME", "DOCUMENTS", "repair_checksums", "refuse_edited_repairs"]

GPKG_NAME = "survey.gpkg"
#: The documents built from the repairs, as ``run.json`` names them in ``built_from``.
DOCUMENTS = ("quantities", "drawings", "report", "webmap")


def repair_checksums(gpkg: str | Path) -> dict[str, str]:
    """Return the SHA-256 of each ``<level>_repairs`` layer of a GeoPackage, by layer name.

    The digest covers, in repair-id order, each repair's id and its outline as WKB
    (coordinates rounded to 1e-6 of the CRS unit); a GeoPackage without repairs gives ``{}``.

    Raises
    ------
    ExportError
        If the GeoPackage cannot be read.
    """
    path = Path(gpkg)
    try:
        names = [str(n) for n, _t in pyogrio.list_layers(path)]
        out: dict[str, str] = {}
        for name in sorted(n for n in names if n.endswith("_repairs")):
            df = pyogrio.read_dataframe(path, layer=name, columns=["repair_id"])
            h = hashlib.sha256()
            rows = sorted(zip(df["repair_id"].astype(str), df.geometry, strict=True),
                          key=lambda r: r[0])
            for rid, g in rows:
                wkb = b"" if g is None else shapely.set_precision(g, 1e-6).wkb
                h.update(rid.encode("utf-8") + b"\0" + wkb + b"\n")
            out[name] = h.hexdigest()
    except ExportError:
        raise
    except Exception as err:  # noqa: BLE001 - any reading error becomes one message
        raise ExportError(f"{path}: cannot be read ({err}); re-run `geo-corrosion run`") from err
    return out


def refuse_edited_repairs(run_dir: str | Path, man: Manifest, document: str) -> None:
    """Refuse to rebuild ``document`` when the run's repair layers changed since it was built.

    Raises
    ------
    ExportError
        Naming the GeoPackage, the layers that changed and the command to run
        (``geo-corrosion reprice RUN_DIR``).  A run without ``built_from`` (older) passes.
    """
    if man.built_from is None or document not in man.built_from:
        return
    folder = Path(run_dir)
    gpkg = folder / GPKG_NAME
    if not gpkg.is_file():
        return
    recorded = dict(man.built_from[document])
    now = repair_checksums(gpkg)
    changed = sorted(n for n in set(recorded) | set(now) if recorded.get(n) != now.get(n))
    if changed:
        raise ExportError(
            f"{gpkg}: the repairs of layer {', '.join(changed)} changed since {document} was "
            f"built (see {MANIFEST_NAME} built_from); rebuilding it alone would show the new "
            "outlines with the old areas. Run `geo-corrosion reprice "
            f"{folder}` to check the edits and rebuild the schedule, sheets, report and web "
            "map together (or undo the edit)")
