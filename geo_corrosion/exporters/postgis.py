"""PostGIS exporter: every layer of a run (or of a whole portfolio) into PostgreSQL/PostGIS.

Layout (DEVELOPERS.md, "PostGIS"): **one schema per site**, named from the site id
(lower case, ``[a-z0-9_]``, at most 63 bytes, quoted everywhere).  In it:

- one table per layer of ``survey.gpkg``, named as the layer in lower case
  (``L2_repairs`` -> ``l2_repairs``), with the GeoPackage feature id as primary key
  ``fid``, the layer's columns and a ``geom`` column of the layer's geometry type in the
  site CRS's EPSG code as SRID, with a GiST index;
- ``quantities`` and ``condition_areas`` (the run's CSV tables, non-spatial, ``fid`` =
  data row number from 1);
- ``run_manifest``: one row, the whole ``run.json`` as ``jsonb`` and its key columns.

Every column whose name carries a unit has that unit as its column comment.  A run is
written in one transaction: the tables of the previous export of the same site (listed in
its ``run_manifest``) are dropped and created again, so a failure anywhere leaves the
previous export as it was.  The schema itself is kept (grants on it survive); a schema
not made by this module is never touched.

A site CRS without an EPSG code is refused with a message (PostGIS needs an SRID from
``spatial_ref_sys``; adding rows there needs a superuser and would be a guess).

psycopg 3 is imported only when a run is published: a normal run never needs PostgreSQL.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import re
import unicodedata
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.model.manifest import read_run_json

if TYPE_CHECKING:
    import pandas as pd
    import psycopg

    from geo_corrosion.model.results import RunResult

__all__ = ["DSN_ENV", "PostgisExporter", "PublishedRun", "expand_run_dirs", "safe_dsn",
           "schema_name", "write_runs_to_postgis"]

#: Environment variable the CLI and the exporter read the DSN from.
DSN_ENV = "GEO_CORROSION_DSN"
GPKG_NAME = "survey.gpkg"
MANIFEST_TABLE = "run_manifest"
#: The run's non-spatial tables: file -> table.
CSV_TABLES = {"quantities.csv": "quantities", "condition_areas.csv": "condition_areas"}
#: A portfolio writes each site's run to ``<out>/sites/<id>/``: published as ``<id>``.
PORTFOLIO_SITES = "sites"
#: The schema comment that marks a schema as written here (and so ours to replace).
SCHEMA_MARK = "geo_corrosion site export"
GEOM = "geom"
_MAX_IDENT = 63  # PostgreSQL's NAMEDATALEN - 1, in bytes

#: Column-name suffix -> unit, for the column comments (DEVELOPERS.md, "units").
_UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_kohm_cm", "kOhm.cm"), ("_ua_cm2", "uA/cm2"), ("_um_yr", "um/year"),
    ("_m2", "m2"), ("_ft2", "ft2"), ("_m3", "m3"), ("_ft3", "ft3"), ("_mm", "mm"),
    ("_cm", "cm"), ("_m", "m"), ("_ft", "ft"), ("_mv", "mV"), ("_deg", "degrees"),
    ("_pct", "percent"), ("_yr", "years"), ("_c", "degrees Celsius"),
)
_NAMED_UNITS = {
    "potential_mv": "mV vs CSE (copper/copper sulfate electrode)",
    "share_of_mapped_area": "fraction of the mapped area (0 to 1)",
    "share_covered": "fraction of the bay covered (0 to 1)",
    "value": "in the unit of column unit", "value_from": "in the unit of column unit",
    "value_to": "in the unit of column unit", "residual": "in the unit of column unit",
    "quantity": "in the unit of column unit", "unit_price": "in the currency of column currency",
    "amount": "in the currency of column currency",
    "raw_value": "in the unit of column raw_unit",
}


@dataclass(frozen=True)
class PublishedRun:
    """What one run became in the database."""

    run_dir: Path
    site_id: str
    schema: str
    #: table -> rows written
    tables: dict[str, int] = field(default_factory=dict)


def safe_dsn(dsn: str) -> str:
    """Return the DSN as ``postgresql://user@host:port/dbname``, never with its password."""
    from psycopg.conninfo import conninfo_to_dict

    try:
        d = conninfo_to_dict(dsn)
    except Exception:  # noqa: BLE001 - libpq's message may quote the password
        return "(a connection string that cannot be read)"
    user = f"{d['user']}@" if d.get("user") else ""
    host = str(d.get("host") or d.get("hostaddr") or "localhost")
    port = f":{d['port']}" if d.get("port") else ""
    db = f"/{d['dbname']}" if d.get("dbname") else ""
    return f"postgresql://{user}{host}{port}{db}"


def _password(dsn: str) -> str | None:
    from psycopg.conninfo import conninfo_to_dict

    try:
        pw = conninfo_to_dict(dsn).get("password")
    except Exception:  # noqa: BLE001
        return None
    return str(pw) if pw else None


def _scrub(text: str, dsn: str) -> str:
    pw = _password(dsn)
    text = text.replace(dsn, safe_dsn(dsn))
    return text.replace(pw, "***") if pw else text


def _ident(text: str, *, prefix: str) -> str:
    """Lower-case ``[a-z0-9_]`` identifier of at most 63 bytes (a hash keeps long ones apart)."""
    ascii_ = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode()
    name = re.sub(r"_+", "_", re.sub(r"[^a-z0-9_]", "_", ascii_.lower())).strip("_")
    if not name or name[0].isdigit() or name.startswith("pg_"):
        name = f"{prefix}_{name}".rstrip("_")
    if len(name) > _MAX_IDENT:
        digest = hashlib.sha1(text.encode()).hexdigest()[:8]
        name = f"{name[:_MAX_IDENT - 9]}_{digest}"
    return name


def schema_name(site_id: str) -> str:
    """Return the schema of a site: its id in lower case, ``[a-z0-9_]``, at most 63 bytes."""
    return _ident(site_id, prefix="site")


def _site_id(manifest: Mapping[str, Any], run_dir: Path) -> str:
    """Return the site id of a run folder.

    run.json's ``site.id``; else, for a portfolio's ``sites/<id>/``, that ``<id>``; else the
    site folder's name (``site.folder``); else the run folder's name.
    """
    site = _mapping(manifest.get("site"))
    if isinstance(site.get("id"), str) and site["id"]:
        return str(site["id"])
    here = run_dir.resolve()
    if here.parent.name == PORTFOLIO_SITES:
        return here.name
    if isinstance(site.get("folder"), str) and site["folder"]:
        return Path(site["folder"]).name
    return here.name


def column_unit(name: str) -> str | None:
    """Return the unit a column's name carries (``area_m2`` -> ``m2``), or None."""
    if name in _NAMED_UNITS:
        return _NAMED_UNITS[name]
    for suffix, unit in _UNIT_SUFFIXES:
        if name.endswith(suffix) and len(name) > len(suffix):
            return unit
    return None


# -- reading a run folder ---------------------------------------------------------------------

@dataclass
class _Table:
    name: str
    source: str
    frame: pd.DataFrame
    geometry: str | None = None  # PostGIS geometry type, e.g. "MultiPolygon"
    comment: str = ""


@dataclass
class _Run:
    run_dir: Path
    site_id: str
    schema: str
    manifest: dict[str, Any]
    srid: int | None
    crs_text: str
    tables: list[_Table]


def _geometry_type(gdf: Any) -> str:
    import shapely

    geoms = gdf.geometry.values
    present = geoms[~(gdf.geometry.isna().to_numpy() | shapely.is_empty(geoms))]
    kinds = set(shapely.get_type_id(present).tolist())
    if len(kinds) != 1:
        return "Geometry"
    name = str(present[0].geom_type)
    return name + ("Z" if bool(shapely.has_z(present).any()) else "")


def _srid(crs: Any, where: str) -> int:
    import pyproj

    try:
        code = pyproj.CRS.from_user_input(crs).to_epsg()
    except pyproj.exceptions.CRSError as err:
        raise ExportError(f"{where}: its CRS cannot be read ({err})") from err
    if code is None:
        raise ExportError(
            f"{where}: the site CRS has no EPSG code, and PostGIS needs one as SRID; give the "
            "site an EPSG CRS (crs = \"EPSG:...\" in the site file) and run it again")
    return int(code)


def read_run_folder(run_dir: str | Path, *, site_id: str | None = None,
                    manifest: Mapping[str, Any] | None = None) -> _Run:
    """Read what a run folder publishes: its GeoPackage layers, CSV tables and manifest.

    Raises
    ------
    ExportError
        A missing or unreadable file (named), or a CRS without an EPSG code.
    """
    import pandas as pd
    import pyogrio

    run_dir = Path(run_dir)
    if not run_dir.is_dir():
        raise ExportError(f"{run_dir}: no such folder; give the output folder of a run")
    man = dict(manifest) if manifest is not None else read_run_json(run_dir)
    sid = site_id or _site_id(man, run_dir)
    gpkg = run_dir / GPKG_NAME
    if not gpkg.is_file():
        raise ExportError(f"{run_dir} holds no {GPKG_NAME}; run the site again with the "
                          "geopackage exporter")
    tables: list[_Table] = []
    srid: int | None = None
    crs_text = ""
    try:
        found = [(str(row[0]), row[1]) for row in pyogrio.list_layers(gpkg)]
        for layer, gtype in found:
            gdf = pyogrio.read_dataframe(gpkg, layer=layer, fid_as_index=True)
            if gtype is None:  # an attribute table (the GIS styles' layer_styles): no geometry
                tables.append(_Table(_ident(layer, prefix="layer"), f"{GPKG_NAME} table {layer}",
                                     gdf, comment=f"table {layer} of {GPKG_NAME}"))
                continue
            if gdf.crs is None:
                raise ExportError(f"{gpkg} layer {layer!r} has no CRS; run the site again")
            code = _srid(gdf.crs, f"{gpkg} layer {layer!r}")
            if srid is not None and code != srid:
                raise ExportError(f"{gpkg} layer {layer!r} is in EPSG:{code}, the others in "
                                  f"EPSG:{srid}; run the site again")
            srid, crs_text = code, f"EPSG:{code}"
            tables.append(_Table(_ident(layer, prefix="layer"), f"{GPKG_NAME} layer {layer}",
                                 gdf, geometry=_geometry_type(gdf),
                                 comment=f"layer {layer} of {GPKG_NAME}, site CRS EPSG:{code}"))
    except (pyogrio.errors.DataSourceError, pyogrio.errors.DataLayerError, OSError) as err:
        raise ExportError(f"{gpkg}: cannot be read ({err}); run the site again") from err
    for fname, tname in CSV_TABLES.items():
        path = run_dir / fname
        if not path.is_file():
            continue
        try:
            frame = pd.read_csv(path)
        except (OSError, ValueError) as err:
            raise ExportError(f"{path}: cannot be read ({err}); run the site again") from err
        frame.index = pd.RangeIndex(1, len(frame) + 1, name="fid")
        tables.append(_Table(tname, fname, frame, comment=f"{fname} of the run (fid: data row)"))
    seen: dict[str, str] = {MANIFEST_TABLE: "the run manifest"}
    for t in tables:
        if t.name in seen:
            raise ExportError(f"{run_dir}: {t.source} and {seen[t.name]} would both become "
                              f"table {t.name!r}; rename one of the levels")
        seen[t.name] = t.source
    return _Run(run_dir, sid, schema_name(sid), man, srid, crs_text, tables)


# -- SQL ------------------------------------------------------------------------------------

def _pg_type(series: pd.Series) -> str:
    from pandas.api import types as pt

    if pt.is_bool_dtype(series):
        return "boolean"
    if pt.is_integer_dtype(series):
        return "bigint"
    if pt.is_float_dtype(series):
        return "double precision"
    return "text"


def _column_values(series: pd.Series, pg_type: str) -> list[Any]:
    obj = series.astype(object)
    vals = obj.where(series.notna(), None).tolist()
    if pg_type == "text":
        return [None if v is None else str(v) for v in vals]
    if pg_type == "double precision":
        return [None if v is None or (isinstance(v, float) and math.isnan(v)) else float(v)
                for v in vals]
    return vals


def _local_unit(manifest: Mapping[str, Any]) -> str | None:
    units = {lv.get("georeference", {}).get("local_unit")
             for lv in (manifest.get("levels") or {}).values() if isinstance(lv, Mapping)}
    units.discard(None)
    return str(units.pop()) if len(units) == 1 else None


def _comment(col: str, local_unit: str | None) -> str | None:
    if col in ("x_local", "y_local"):
        return ("local survey grid coordinate, " + (local_unit if local_unit else
                "in the level's grid unit (run.json levels.<level>.georeference.local_unit)"))
    return column_unit(col)


#: Test hook: called with each table name before its rows are copied (a failure injected
#: here must leave the previous export intact).
_before_copy: Callable[[str], None] | None = None


def _write_table(cur: psycopg.Cursor[Any], schema: str, t: _Table, srid: int | None,
                 local_unit: str | None, crs_unit: str) -> int:
    import numpy as np
    import shapely
    from psycopg import sql

    cols = [c for c in t.frame.columns if c != "geometry"]
    types = {c: _pg_type(t.frame[c]) for c in cols}
    qt = sql.Identifier(schema, t.name)
    defs = [sql.SQL("fid bigint PRIMARY KEY")] + [
        sql.SQL("{} {}").format(sql.Identifier(c), sql.SQL(types[c])) for c in cols]
    if t.geometry is not None:
        defs.append(sql.SQL("{} geometry({}, {})").format(
            sql.Identifier(GEOM), sql.SQL(t.geometry), sql.Literal(srid)))
    cur.execute(sql.SQL("CREATE TABLE {} ({})").format(qt, sql.SQL(", ").join(defs)))
    cur.execute(sql.SQL("COMMENT ON TABLE {} IS {}").format(qt, sql.Literal(t.comment)))
    for c in cols:
        if (text := _comment(c, local_unit)) is not None:
            cur.execute(sql.SQL("COMMENT ON COLUMN {}.{} IS {}").format(
                qt, sql.Identifier(c), sql.Literal(text)))
    columns: list[list[Any]] = [[int(i) for i in t.frame.index]]
    columns += [_column_values(t.frame[c], types[c]) for c in cols]
    names = ["fid", *cols]
    if t.geometry is not None:
        geoms = shapely.set_srid(np.asarray(t.frame.geometry.values), srid or 0)
        columns.append(shapely.to_wkb(geoms, hex=True, include_srid=True).tolist())
        names.append(GEOM)
        cur.execute(sql.SQL("COMMENT ON COLUMN {}.{} IS {}").format(
            qt, sql.Identifier(GEOM), sql.Literal(f"site CRS EPSG:{srid}, unit {crs_unit}")))
    if _before_copy is not None:
        _before_copy(t.name)
    with cur.copy(sql.SQL("COPY {} ({}) FROM STDIN").format(
            qt, sql.SQL(", ").join(map(sql.Identifier, names)))) as copy:
        for row in zip(*columns, strict=True):
            copy.write_row(row)
    if t.geometry is not None:
        cur.execute(sql.SQL("CREATE INDEX ON {} USING GIST ({})").format(
            qt, sql.Identifier(GEOM)))
    return len(t.frame)


def _mapping(v: object) -> Mapping[str, Any]:
    return v if isinstance(v, Mapping) else {}


def _manifest_table(cur: psycopg.Cursor[Any], run: _Run, tables: Mapping[str, str]) -> None:
    from psycopg import sql
    from psycopg.types.json import Jsonb

    qt = sql.Identifier(run.schema, MANIFEST_TABLE)
    cur.execute(sql.SQL(
        "CREATE TABLE {} (site_id text PRIMARY KEY, site_name text, owner text, "
        "project_number text, crs text, srid integer, report_units text, levels text[], "
        "created_utc timestamptz, exported_utc timestamptz NOT NULL DEFAULT now(), "
        "geo_corrosion_version text, run_dir text, tables jsonb NOT NULL, "
        "manifest jsonb NOT NULL)").format(qt))
    cur.execute(sql.SQL("COMMENT ON TABLE {} IS {}").format(qt, sql.Literal(
        "the run manifest (run.json as jsonb) and its key columns; tables: table -> source")))
    m = run.manifest
    site = _mapping(m.get("site"))
    project = _mapping(site.get("project"))
    created = m.get("created_utc")
    try:
        created_at = datetime.fromisoformat(created) if isinstance(created, str) else None
    except ValueError:
        created_at = None
    versions = _mapping(m.get("versions"))
    cur.execute(sql.SQL(
        "INSERT INTO {} (site_id, site_name, owner, project_number, crs, srid, report_units, "
        "levels, created_utc, geo_corrosion_version, run_dir, tables, manifest) "
        "VALUES (%s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s)").format(qt), (
        run.site_id, site.get("name"), site.get("owner"), project.get("number"),
        site.get("crs") or run.crs_text, run.srid, site.get("report_units"),
        [str(k) for k in (m.get("levels") or {})], created_at, versions.get("geo_corrosion"),
        str(run.run_dir.resolve()), Jsonb(dict(tables)), Jsonb(m)))


def _previous_tables(cur: psycopg.Cursor[Any], schema: str) -> list[str] | None:
    """Tables of the previous export (None: the schema does not exist).

    Raises
    ------
    ExportError
        The schema exists and was not made here.
    """
    from psycopg import sql

    cur.execute("SELECT obj_description(oid, 'pg_namespace') FROM pg_namespace "
                "WHERE nspname = %s", (schema,))
    row = cur.fetchone()
    if row is None:
        return None
    if not (isinstance(row[0], str) and row[0].startswith(SCHEMA_MARK)):
        raise ExportError(
            f"schema {schema!r} exists and was not written by geo-corrosion; give the site "
            "another id (--site-id) or drop that schema yourself")
    cur.execute("SELECT to_regclass(%s)", (f'"{schema}"."{MANIFEST_TABLE}"',))
    reg = cur.fetchone()
    if reg is None or reg[0] is None:
        return []
    cur.execute(sql.SQL("SELECT tables FROM {}").format(sql.Identifier(schema, MANIFEST_TABLE)))
    names: list[str] = [MANIFEST_TABLE]
    for (tables,) in cur.fetchall():
        names += [str(k) for k in (tables or {})]
    return names


def _publish(conn: psycopg.Connection[Any], run: _Run) -> PublishedRun:
    from psycopg import sql

    local_unit = _local_unit(run.manifest)
    site = _mapping(run.manifest.get("site"))
    crs_unit = str(site.get("crs_unit") or "")
    counts: dict[str, int] = {}
    with conn.transaction(), conn.cursor() as cur:
        cur.execute("SELECT pg_advisory_xact_lock(hashtextextended(%s, 0))",
                    (f"geo_corrosion:{run.schema}",))
        previous = _previous_tables(cur, run.schema)
        qs = sql.Identifier(run.schema)
        if previous is None:
            cur.execute(sql.SQL("CREATE SCHEMA {}").format(qs))
        for name in previous or []:
            cur.execute(sql.SQL("DROP TABLE IF EXISTS {}").format(
                sql.Identifier(run.schema, name)))
        cur.execute(sql.SQL("COMMENT ON SCHEMA {} IS {}").format(qs, sql.Literal(
            f"{SCHEMA_MARK}: site {run.site_id} (replaced as a whole by the next export)")))
        for t in run.tables:
            counts[t.name] = _write_table(cur, run.schema, t, run.srid, local_unit, crs_unit)
        _manifest_table(cur, run, {t.name: t.source for t in run.tables})
        counts[MANIFEST_TABLE] = 1
    return PublishedRun(run.run_dir, run.site_id, run.schema, counts)


def check_dsn(dsn: str) -> None:
    """Check that a DSN can be read (before any folder is read or server asked).

    Raises
    ------
    ExportError
        It cannot (libpq's message is not shown: it may quote part of the password).
    """
    try:
        import psycopg
        from psycopg.conninfo import conninfo_to_dict
    except ImportError as err:
        raise ExportError("publishing to PostGIS needs psycopg 3: pip install "
                          "'geo_corrosion[scale]'") from err
    try:
        conninfo_to_dict(dsn)
    except psycopg.Error:
        raise ExportError(
            "the DSN cannot be read as a PostgreSQL connection string; give "
            "postgresql://user@host:port/dbname or key=value pairs such as "
            "'host=... port=... dbname=... user=...'") from None


def connect(dsn: str, *, connect_timeout: int = 10) -> psycopg.Connection[Any]:
    """Open a connection and check that the database has PostGIS.

    Raises
    ------
    ExportError
        Cannot connect, or no PostGIS (the message names the DSN without its password and
        says what to do).
    """
    try:
        import psycopg
    except ImportError as err:
        raise ExportError("publishing to PostGIS needs psycopg 3: pip install "
                          "'geo_corrosion[scale]'") from err
    check_dsn(dsn)
    where = safe_dsn(dsn)
    try:
        conn = psycopg.connect(dsn, connect_timeout=connect_timeout)
    except psycopg.Error as err:
        reason = _scrub(str(err).strip().splitlines()[0] if str(err).strip() else
                        type(err).__name__, dsn)
        raise ExportError(
            f"cannot connect to PostgreSQL at {where}: {reason}; check that the server runs "
            "and accepts connections there, and the user, password (or ~/.pgpass) and "
            "database name") from None
    with conn.cursor() as cur:
        cur.execute("SELECT extversion FROM pg_extension WHERE extname = 'postgis'")
        has = cur.fetchone()
    conn.rollback()
    if has is None:
        conn.close()
        raise ExportError(
            f"the database at {where} has no PostGIS extension; ask its owner to run "
            "`CREATE EXTENSION postgis;` in it (Debian: package postgresql-15-postgis-3)")
    return conn


def expand_run_dirs(paths: Iterable[str | Path],
                    progress: Callable[[str], None] | None = None) -> list[Path]:
    """Return the run folders named: each path itself, or a portfolio's ``sites/*/`` runs.

    A folder without ``run.json`` that holds ``sites/`` (a portfolio's output) stands for
    every ``sites/<id>/`` with a ``run.json``; a site there without one (its run failed) is
    left out and named through ``progress``.
    """
    out: list[Path] = []
    for p in map(Path, paths):
        sites = p / PORTFOLIO_SITES
        if (p / "run.json").is_file() or not sites.is_dir():
            out.append(p)
            continue
        for d in sorted(x for x in sites.iterdir() if x.is_dir()):
            if (d / "run.json").is_file():
                out.append(d)
            elif progress:
                progress(f"skipped {d}: no run.json (its run did not finish)")
    return out


def write_runs_to_postgis(
    run_dirs: str | Path | Iterable[str | Path],
    dsn: str | None = None,
    *,
    site_ids: Sequence[str] | None = None,
    connect_timeout: int = 10,
    progress: Callable[[str], None] | None = None,
) -> list[PublishedRun]:
    """Write every layer of one or many run folders to PostgreSQL/PostGIS.

    Each run goes to the schema of its site (:func:`schema_name`), in its own transaction:
    a run published again replaces its previous export as a whole, and a failure leaves
    the previous export of that site as it was.  All folders are read and checked before
    the database is touched.

    Parameters
    ----------
    run_dirs : path or iterable of paths
        Output folders of ``geo-corrosion run``, a portfolio's ``sites/<id>/``, or a
        portfolio's output folder (all its finished sites, :func:`expand_run_dirs`).
    dsn : str, optional
        libpq connection string or URI; default the ``GEO_CORROSION_DSN`` variable.
    site_ids : sequence of str, optional
        One id per run folder; default run.json's ``site.id``, else ``<id>`` of a
        portfolio's ``sites/<id>/``, else the site folder's name.
    connect_timeout : int
        Seconds.
    progress : callable, optional
        Called with one line per run published.

    Returns
    -------
    list of PublishedRun

    Raises
    ------
    ExportError
        A folder that cannot be read, two folders of one site, no connection, no PostGIS,
        no permission, or a failed write (named, with the DSN without its password; the
        runs published before it stay published, each whole).
    """
    dirs = expand_run_dirs([run_dirs] if isinstance(run_dirs, str | os.PathLike) else
                           run_dirs, progress)
    if site_ids is not None and len(site_ids) != len(dirs):
        raise ExportError(f"{len(site_ids)} site ids for {len(dirs)} run folders; give one "
                          "per folder or none")
    dsn = dsn or os.environ.get(DSN_ENV)
    if not dsn:
        raise ExportError(f"no database given: pass a DSN (--dsn postgresql://user@host/db) "
                          f"or set {DSN_ENV}")
    check_dsn(dsn)
    runs = [read_run_folder(d, site_id=site_ids[i] if site_ids else None)
            for i, d in enumerate(dirs)]
    by_schema: dict[str, Path] = {}
    for r in runs:
        if r.schema in by_schema:
            raise ExportError(f"{by_schema[r.schema]} and {r.run_dir} would both be published "
                              f"as schema {r.schema!r}; give each its own site id")
        by_schema[r.schema] = r.run_dir
    return _publish_all(runs, dsn, connect_timeout=connect_timeout, progress=progress)


def _publish_all(runs: Sequence[_Run], dsn: str, *, connect_timeout: int,
                 progress: Callable[[str], None] | None) -> list[PublishedRun]:
    import psycopg

    where = safe_dsn(dsn)
    done: list[PublishedRun] = []
    conn = connect(dsn, connect_timeout=connect_timeout)
    try:
        for run in runs:
            try:
                done.append(_publish(conn, run))
            except (psycopg.Error, ExportError, OSError) as err:
                raise ExportError(_failure(err, run, where, dsn, done)) from None
            if progress:
                pub = done[-1]
                progress(f"published {run.run_dir} as schema {pub.schema!r} at {where}: "
                         f"{len(pub.tables)} tables, {sum(pub.tables.values())} rows")
    finally:
        conn.close()
    return done


def _failure(err: Exception, run: _Run, where: str, dsn: str,
             done: Sequence[PublishedRun]) -> str:
    import psycopg

    text = _scrub(str(err).strip().splitlines()[0] if str(err).strip() else
                  type(err).__name__, dsn)
    if isinstance(err, ExportError):
        msg = f"cannot publish {run.run_dir} at {where}: {text}"
    elif isinstance(err, psycopg.errors.InsufficientPrivilege):
        msg = (f"cannot publish {run.run_dir} at {where}: permission denied ({text}); grant "
               "the user CREATE on the database (GRANT CREATE ON DATABASE ... TO ...), or "
               f"ownership of schema {run.schema!r}, or publish as a user who may")
    elif isinstance(err, psycopg.errors.DependentObjectsStillExist):
        msg = (f"cannot publish {run.run_dir} at {where}: {text}; a view or constraint of "
               f"your own uses a table of schema {run.schema!r}, which publishing replaces: "
               "drop it, publish, then create it again")
    else:
        msg = f"cannot publish {run.run_dir} at {where}: {text}"
    msg += f"; the previous export of site {run.site_id!r} is unchanged"
    if done:
        msg += f" ({len(done)} run(s) before it were published)"
    return msg


class PostgisExporter(Exporter):
    """Publish the run to PostGIS at the end of a run (asked by name; DSN from the env)."""

    name: ClassVar[str] = "postgis"
    description: ClassVar[str] = (f"every layer, the tables and the manifest to PostgreSQL/"
                                  f"PostGIS (asked by name; DSN from {DSN_ENV})")
    default: ClassVar[bool] = False
    run_last: ClassVar[bool] = True

    def __init__(self, dsn: str | None = None) -> None:
        self.dsn = dsn

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Publish the layers the other exporters wrote into ``out_dir``; write no file."""
        from geo_corrosion.model.manifest import json_default, result_manifest

        dsn = self.dsn or os.environ.get(DSN_ENV)
        if not dsn:
            raise ExportError(f"the postgis exporter needs a database: set {DSN_ENV} to a "
                              "DSN such as postgresql://user@host/db")
        man = json.loads(json.dumps(result_manifest(result).to_json(), default=json_default))
        run = read_run_folder(out_dir, manifest=man)
        _publish_all([run], dsn, connect_timeout=10, progress=None)
        return []
