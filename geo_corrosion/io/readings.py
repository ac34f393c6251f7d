"""Ingest: survey readings from CSV, GeoJSON and GeoPackage into one frame per survey.

Our CSV layout (``docs/file-formats.md``): a header row, then one reading a row,
with columns ``point_id, x, y, value`` and optionally ``temperature_c`` and
``note``; x and y in the level's local grid (``coords = "local"``, the default)
or in the site CRS (``coords = "site"``).  Files laid out differently are read
through a column mapping in the site file; semicolon separators and decimal
commas are handled.  Units are converted once, here, to the kind's canonical
unit; the raw value and unit are kept beside it.

Every reading frame follows one contract (see DEVELOPERS.md): ``reading_id``,
``survey_id``, ``level_id``, ``row``, ``where``, ``point_id``, ``x_local``,
``y_local``, ``geometry`` (site CRS), the kind's value column, ``raw_value``,
``raw_unit``, and ``value_source``.

Raw instrument readings: a kind may declare extra raw columns
(:attr:`~geo_corrosion.measurements.base.MeasurementKind.raw_columns`, such as
``voltage_v`` and ``current_a`` for resistivity), read as numbers when the file
has them (and mappable under ``[surveys.columns]``).  When the file has no
value column but the kind can derive the value from the raw columns present,
the value column is left NaN, ``value_source`` is ``"raw"`` (else ``"file"``)
and the kind's :meth:`derive` fills it in before the corrections
(``docs/raw-readings.md``).
"""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
from numpy.typing import NDArray

from geo_corrosion.config import SurveyConfig
from geo_corrosion.crs import LocalGrid
from geo_corrosion.errors import IngestError, SchemaError
from geo_corrosion.measurements import MeasurementKind

__all__ = ["read_readings", "OUR_COLUMNS", "READING_COLUMNS"]

#: Our column names and whether each is required.
OUR_COLUMNS = {"point_id": False, "x": True, "y": True, "value": True, "temperature_c": False,
               "note": False, "stability": False}
READING_COLUMNS = ["reading_id", "survey_id", "level_id", "row", "where", "point_id",
                   "x_local", "y_local", "raw_value", "raw_unit"]


#: A '.' read as a thousands mark in a decimal-comma file: no leading zero, groups of three,
#: and a decimal comma after them or at least two groups (common practice of such locales).
_THOUSANDS_DOT = r"[-+]?[1-9]\d{0,2}(?:(?:\.\d{3})+,\d+|(?:\.\d{3}){2,})"


def _rel(path: Path, root: Path | None) -> str:
    try:
        return str(path.relative_to(root)) if root else path.name
    except ValueError:
        return str(path)


def _read_csv(cfg: SurveyConfig, name: str) -> tuple[pd.DataFrame, list[int]]:
    text = cfg.path.read_text(encoding="utf-8-sig", errors="replace")
    if not text.strip():
        raise IngestError(f"{name}: the file is empty; expected a header row and readings")
    try:
        df = pd.read_csv(io.StringIO(text), sep=cfg.separator, dtype=str, keep_default_na=False,
                         skipinitialspace=True, quoting=csv.QUOTE_MINIMAL, skip_blank_lines=True)
    except pd.errors.ParserError as err:
        raise IngestError(f"{name}: cannot read as CSV with separator {cfg.separator!r}: "
                          f"{err}.{_separator_advice(text, cfg.separator, cfg)}") from err
    if df.empty:
        raise IngestError(f"{name}: the file has a header but no readings")
    _refuse_repeated_headers(text, cfg.separator, name)
    df.columns = [str(c).strip() for c in df.columns]
    df.attrs["separator_advice"] = _separator_advice(text, cfg.separator, cfg)
    # line numbers in the file (header is line 1), counting skipped blank lines
    lines = [i + 1 for i, ln in enumerate(text.splitlines()) if ln.strip()][1:]
    return df, lines[: len(df)]


#: Field separators a header row is tried with when the survey's own finds no column.
_SEPARATORS = (",", ";", "\t", "|")


def _other_separator(text: str, sep: str) -> str | None:
    """Return the separator the header row seems to use when it is not ``sep``, else None.

    A header that splits into more fields on another common separator than on ``sep`` was
    written with that one (common practice: loggers write ``;`` where the decimal is ``,``).
    """
    first = next((ln for ln in text.splitlines() if ln.strip()), "")

    def fields(s: str) -> int:
        return len(next(csv.reader([first], delimiter=s), []))

    best = max((s for s in _SEPARATORS if s != sep), key=fields)
    return best if fields(best) > max(fields(sep), 1) else None


def _separator_advice(text: str, sep: str, cfg: SurveyConfig) -> str:
    """Say which separator to set, when the header row holds another one; else ''."""
    other = _other_separator(text, sep)
    if other is None:
        return ""
    first = next((ln for ln in text.splitlines() if ln.strip()), "").strip()
    toml = '"\\t"' if other == "\t" else f"'{other}'"
    return (f" The header {first!r} is separated by {other!r}, not {sep!r}: set separator = "
            f"{toml} for survey {cfg.id!r} ({cfg.where}.separator)")


def _refuse_repeated_headers(text: str, sep: str, name: str) -> None:
    """Refuse a header row that names a column twice (pandas would rename one ``x.1``).

    Which of the two columns holds the readings cannot be told, so neither is guessed
    (the contract of issue 11: every bad input refused by name).

    Raises
    ------
    SchemaError
        Naming the file, the header and both column positions (1-based).
    """
    first = next((ln for ln in text.splitlines() if ln.strip()), "")
    header = next(csv.reader([first], delimiter=sep, skipinitialspace=True), [])
    seen: dict[str, int] = {}
    for pos, h in enumerate((h.strip() for h in header), start=1):
        if h and h in seen:  # empty headers (trailing separators) name no column
            raise SchemaError(
                f"{name} line 1: the header {h!r} is given twice, in columns {seen[h]} and {pos}; "
                "which one holds the readings cannot be told. Rename or remove one of them")
        seen[h] = pos


def _read_vector(cfg: SurveyConfig, name: str, site_crs: pyproj.CRS
                 ) -> tuple[pd.DataFrame, list[int]]:
    import pyogrio

    if cfg.path.stat().st_size == 0:
        raise IngestError(f"{name}: the file is empty")
    try:
        gdf = pyogrio.read_dataframe(cfg.path, layer=cfg.layer)
    except Exception as err:
        raise IngestError(f"{name}: cannot read point layer: {err}") from err
    if gdf.empty:
        raise IngestError(f"{name}: the layer holds no features")
    bad = [i + 1 for i, g in enumerate(gdf.geometry) if g is None or g.geom_type != "Point"]
    if bad:
        raise SchemaError(f"{name}: feature(s) {bad[:5]} are not points; readings must be points")
    if cfg.coords == "site":
        if gdf.crs is None:
            raise IngestError(f"{name}: the layer has no CRS; coords = \"site\" needs one")
        if not gdf.crs.equals(site_crs):
            gdf = gdf.to_crs(site_crs)
    df = pd.DataFrame(gdf.drop(columns="geometry")).astype(str)
    df["__x"] = gdf.geometry.x.astype(str)
    df["__y"] = gdf.geometry.y.astype(str)
    return df, list(range(1, len(df) + 1))


def _numbers(series: pd.Series, col: str, decimal: str, name: str, rows: list[int], unit_row: str,
             required: bool) -> np.ndarray:
    s = series.astype(str).str.strip()
    if decimal == ",":
        # '.' may only be a thousands mark here, and only where nothing else can be meant:
        # before a decimal comma (1.234,5) or in two or more groups (1.234.567).  A lone
        # '1.234' or '-0.400' may be a decimal point typed by mistake (the contract of
        # issue 11: read unambiguously or refuse, naming the row).
        dotted = s.str.contains(".", regex=False)
        thousands = s.str.fullmatch(_THOUSANDS_DOT)
        bad_dot = dotted & ~thousands.fillna(False)
        if bad_dot.any():
            i = int(np.flatnonzero(bad_dot.to_numpy())[0])
            raise SchemaError(
                f"{name} {unit_row} {rows[i]}: column {col!r} holds {series.iloc[i]!r} with a "
                "'.' although this survey's decimal separator is ','; whether the '.' is a "
                "decimal point or a thousands mark cannot be told. Write it with a decimal "
                "comma (or no thousands mark), or set decimal = \".\" for this file"
            )
        s = s.str.replace(".", "", regex=False).str.replace(",", ".", regex=False)
    blank = s.eq("") | s.str.lower().isin(["nan", "na", "none"])
    vals = pd.to_numeric(s.where(~blank), errors="coerce")
    bad = vals.isna() & ~blank
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        raise SchemaError(
            f"{name} {unit_row} {rows[i]}: column {col!r} holds {series.iloc[i]!r} where a number "
            f"belongs{' (decimal separator is ' + repr(decimal) + ')' if decimal else ''}; "
            f"{int(bad.sum())} such row(s) in all. Fix the file or its decimal/separator settings"
        )
    if required and blank.any():
        i = int(np.flatnonzero(blank.to_numpy())[0])
        raise SchemaError(f"{name} {unit_row} {rows[i]}: column {col!r} is empty; "
                          "a value is required")
    return vals.to_numpy(float)


def _stability_ranges(col: pd.Series, kind: MeasurementKind, unit: str, dec: str, name: str,
                      rows: Any, row_word: str) -> NDArray[np.float64]:
    """Range (max - min, canonical unit) of each reading's stability series.

    A cell holds the readings taken while the value settled, separated by spaces or ``|``
    (e.g. ``"-250 -262 -271"``), in the survey's unit; an empty cell gives NaN.
    """
    out = np.full(len(col), np.nan)
    for k, (cell, r) in enumerate(zip(col.astype(str), rows, strict=True)):
        text = cell.strip()
        if not text or text.lower() == "nan":
            continue
        parts = [p for p in re.split(r"[\s|]+", text) if p]
        if dec == "," and "." in text:
            raise SchemaError(
                f"{name} {row_word} {r}: stability series {cell!r} holds a '.' although this "
                "survey's decimal separator is ','; write its values with a decimal comma, or "
                "set decimal = \".\" for this file")
        try:
            vals = np.array([float(p.replace(",", ".") if dec == "," else p) for p in parts])
        except ValueError:
            raise SchemaError(
                f"{name} {row_word} {r}: stability series {cell!r} is not numbers separated by "
                "spaces or '|' (e.g. \"-250 -262 -271\")") from None
        canon = kind.to_canonical(vals, unit, where=f"{name} {row_word} {r}: ")
        out[k] = float(np.max(canon) - np.min(canon))
    return out


def read_readings(
    cfg: SurveyConfig,
    kind: MeasurementKind,
    grid: LocalGrid,
    site_crs: pyproj.CRS,
    *,
    root: Path | None = None,
) -> gpd.GeoDataFrame:
    """Read one survey file into the reading frame contract.

    Parameters
    ----------
    cfg : SurveyConfig
        The survey's entry in the site file.
    kind : MeasurementKind
        Its measurement kind (unit conversion).
    grid : LocalGrid
        The level's local grid tie (local <-> site coordinates).
    site_crs : pyproj.CRS
    root : Path, optional
        Site folder, to name files relative to it in messages.

    Raises
    ------
    IngestError, SchemaError, UnitError
        Missing or empty file, missing column, text where numbers belong, wrong unit.
    """
    name = _rel(cfg.path, root)
    if not cfg.path.is_file():
        raise IngestError(f"{cfg.where}: survey file not found: {name}")
    suffix = cfg.path.suffix.lower()
    if suffix in (".csv", ".txt"):
        df, rows = _read_csv(cfg, name)
        row_word = "line"
        xy_default = ("x", "y")
    elif suffix in (".geojson", ".json", ".gpkg", ".shp"):
        df, rows = _read_vector(cfg, name, site_crs)
        row_word = "feature"
        xy_default = ("__x", "__y")
    else:
        raise IngestError(f"{name}: unknown file type {suffix!r}; use .csv, .geojson or .gpkg")
    raw_cols = tuple(c for c in kind.raw_columns if c not in OUR_COLUMNS)
    known = (*OUR_COLUMNS, *raw_cols)
    unknown = set(cfg.columns) - set(known)
    if unknown:
        raise IngestError(
            f"{cfg.where}.columns: unknown column key(s) {sorted(unknown)}; our columns are "
            f"{', '.join(known)}"
        )
    mapping = {k: cfg.columns.get(k, k) for k in known}
    if row_word == "feature":
        mapping["x"] = cfg.columns.get("x", xy_default[0])
        mapping["y"] = cfg.columns.get("y", xy_default[1])
    present_raw = [c for c in raw_cols if mapping[c] in df.columns]
    from_raw = mapping["value"] not in df.columns and kind.can_derive(present_raw, cfg)
    for ours, theirs in mapping.items():
        if ours == "value" and from_raw:
            continue
        if ours in OUR_COLUMNS and OUR_COLUMNS[ours] and theirs not in df.columns:
            hint = ""
            if ours == "value" and raw_cols:
                hint = (f" {kind.name} readings may instead give raw instrument columns "
                        f"({', '.join(raw_cols)}; see docs/raw-readings.md)")
                if present_raw:
                    hint += f"; the file has {', '.join(present_raw)}, which is not enough"
            advice = str(df.attrs.get("separator_advice", ""))
            if advice:
                raise SchemaError(f"{name} line 1: column {theirs!r} (for {ours}) is missing."
                                  f"{advice}")
            raise SchemaError(
                f"{name}: column {theirs!r} (for {ours}) is missing; the file has columns "
                f"{', '.join(c for c in df.columns if not c.startswith('__'))}. Add "
                f"`{ours} = \"<column>\"` under [surveys.columns] for survey {cfg.id!r}.{hint}"
            )
    dec = cfg.decimal if row_word == "line" else "."
    x = _numbers(df[mapping["x"]], mapping["x"], dec, name, rows, row_word, True)
    y = _numbers(df[mapping["y"]], mapping["y"], dec, name, rows, row_word, True)
    raw = (np.full(len(df), np.nan) if from_raw else
           _numbers(df[mapping["value"]], mapping["value"], dec, name, rows, row_word, False))
    where_u = f"{name}: "
    value = kind.to_canonical(raw, cfg.unit, where=where_u)
    if cfg.coords == "local":
        xl, yl = x, y
        X, Y = grid.to_site(x, y)
    else:
        X, Y = x, y
        xl, yl = grid.to_local(x, y)
    pid = (df[mapping["point_id"]].astype(str).str.strip() if mapping["point_id"] in df.columns
           else pd.Series([""] * len(df)))
    out = pd.DataFrame({
        "reading_id": [f"{cfg.id}:{r}" for r in rows],
        "survey_id": cfg.id,
        "level_id": cfg.level,
        "row": rows,
        "where": [f"{name} {row_word} {r}" for r in rows],
        "point_id": pid.to_numpy(),
        "x_local": xl,
        "y_local": yl,
        kind.value_column: value,
        "raw_value": raw,
        "raw_unit": "" if from_raw else cfg.unit,
        "value_source": "raw" if from_raw else "file",
    })
    for col in present_raw:
        out[col] = _numbers(df[mapping[col]], mapping[col], dec, name, rows, row_word, False)
    if mapping["temperature_c"] in df.columns:
        out["temperature_c"] = _numbers(df[mapping["temperature_c"]], mapping["temperature_c"], dec,
                                        name, rows, row_word, False)
    if mapping["note"] in df.columns:
        out["note"] = df[mapping["note"]].astype(str).to_numpy()
    if mapping["stability"] in df.columns:
        out["stability_range"] = _stability_ranges(df[mapping["stability"]], kind, cfg.unit,
                                                   dec, name, rows, row_word)
    return gpd.GeoDataFrame(out, geometry=gpd.points_from_xy(X, Y), crs=site_crs)
