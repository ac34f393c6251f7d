#!/usr/bin/env python3
"""Compare two run folders of ``geo-corrosion run`` and tell whether they are the same.

Usage::

    python .ci/compare_runs.py BEFORE_DIR AFTER_DIR [--atol 1e-9] [--rtol 1e-9] [--show N]
                               [--mask REGEX ...] [--only GLOB ...]

Each file is compared by what it holds rather than by its bytes, so that two runs of the
same code compare equal although some outputs carry timestamps, random ids or library
versions:

* ``*.tif`` (rasterio): shape, band count, dtype, transform, CRS, nodata, band descriptions
  and pixels (nodata/NaN positions equal, valid values within tolerance);
* ``*.gpkg`` (pyogrio): layer names, and per layer geometry type, CRS, row count, columns,
  attribute values and geometries (``shapely.equals_exact`` within ``atol``);
* ``*.csv``: row by row, cell by cell, numbers within tolerance;
* ``*.xlsx`` (openpyxl): sheet names and every cell value (formulas as their text);
* ``*.dxf`` (ezdxf): header variables (less the volatile ones), the layer table, and per
  layout or block and layer the entities (type, attributes, coordinates, text), sorted so
  that their order does not matter; handles are ignored;
* ``run.json`` (and any ``*.json``): recursively, numbers within tolerance, ignoring the
  volatile keys of the manifest; each difference is reported by its JSON path;
* ``report.html``: the visible text, the embedded images (by decoded pixels) and the
  markup, after masking;
* other ``*.html`` (the web map): the text after masking, with embedded images compared by
  decoded pixels rather than by their base64 text;
* ``*.pdf`` (pypdf): page count, page sizes and the text of each page after masking;
* ``*.png`` (Pillow): size, mode and pixels;
* anything else: bytes.

Masking replaces, before any text is compared: ISO dates and times, version strings
(``1.4.5``, ``v0.20.0``), 32-digit hexadecimal ids (folium's element ids such as
``map_3f2a...``) and whatever the ``--mask`` expressions match. In text, two lines that differ
only in numbers within tolerance count as equal.

Exit status: 0 when the folders are the same, 1 when anything differs (a file that differs,
is missing, is extra or cannot be read), 2 on bad usage.
"""

from __future__ import annotations

import argparse
import base64
import csv
import difflib
import fnmatch
import hashlib
import io
import json
import math
import re
import sys
from collections import Counter
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import numpy as np

#: Keys of ``run.json`` whose values change from one run to the next (JSON paths, list
#: indices written ``[]``).
VOLATILE_JSON_PATHS = frozenset({
    "$.created_utc",
    "$.elapsed_s",
    "$.versions",
    # wall time of each stage and exporter (geo_corrosion._timing), absent from older runs
    "$.timings",
    # per-file checksums or sizes of the outputs, should the manifest ever carry them
    "$.files[].sha256",
    "$.files[].md5",
    "$.files[].bytes",
    "$.files[].size",
})

#: GeoPackage columns that hold the time a row was written (layer, column): the standard
#: ``layer_styles`` table's ``update_time``.
VOLATILE_GPKG_COLUMNS = frozenset({("layer_styles", "update_time")})

#: DXF header variables that hold dates, timers, GUIDs or the handle seed.
VOLATILE_DXF_HEADER = frozenset({
    "$TDCREATE", "$TDUCREATE", "$TDUPDATE", "$TDUUPDATE", "$TDINDWG", "$TDUSRTIMER",
    "$FINGERPRINTGUID", "$VERSIONGUID", "$HANDSEED",
})

#: Built-in masks: (name, pattern, replacement); applied in this order.
BUILTIN_MASKS: tuple[tuple[str, re.Pattern[str], str], ...] = (
    ("timestamp", re.compile(
        r"(?<!\d)\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?"
        r"(?:Z|[+-]\d{2}:?\d{2}|\s?UTC)?)?(?!\d)"), "<timestamp>"),
    ("time", re.compile(r"(?<![\d:])\d{2}:\d{2}:\d{2}(?:\.\d+)?(?![\d:])"), "<time>"),
    # x.y.z with optional pre/post-release part; never a section number such as §5.1.1
    ("version", re.compile(
        r"(?<![\w.§])v?\d+\.\d+\.\d+(?:[.+-]?(?:a|b|rc|dev|post)\d*)*(?!\w|\.\d)"), "<version>"),
    ("hex id", re.compile(r"(?<![0-9a-fA-F])[0-9a-f]{32}(?![0-9a-fA-F])"), "<id>"),
)

_NUMBER = re.compile(r"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?")
_CSV_NUMBER = re.compile(r"\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*|\s*[-+]?(?:nan|inf)\s*",
                         re.IGNORECASE)
_DATA_URL = re.compile(r"data:([\w.+-]+/[\w.+-]+);base64,([A-Za-z0-9+/=\\]+)")
_CLIP = 150


class UnreadableError(Exception):
    """A file could not be read or parsed."""


@dataclass(frozen=True)
class Options:
    """Settings of one comparison.

    Parameters
    ----------
    atol : float
        Absolute tolerance of numbers.
    rtol : float
        Relative tolerance of numbers.
    show : int
        At most this many detail lines (differing text lines, entities, JSON paths) per file.
    masks : tuple of re.Pattern
        Further text to mask (``--mask``), replaced by ``<masked>``.
    """

    atol: float = 1e-9
    rtol: float = 1e-9
    show: int = 10
    masks: tuple[re.Pattern[str], ...] = ()


@dataclass
class Result:
    """The outcome for one file.

    Parameters
    ----------
    status : str
        ``same``, ``differs``, ``unreadable``, ``missing`` (only in BEFORE) or ``extra``
        (only in AFTER).
    reason : str
        Short reason, empty when the file is the same.
    details : list of str
        Further lines (a diff excerpt, differing entities or JSON paths).
    """

    status: str
    reason: str = ""
    details: list[str] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        """Whether the file is the same in both folders."""
        return self.status == "same"


SAME = "same"


def _same() -> Result:
    return Result(SAME)


def _differs(reasons: Sequence[str], details: Sequence[str] = ()) -> Result:
    return Result("differs", "; ".join(reasons), list(details))


def _finish(reasons: Sequence[str], details: Sequence[str] = ()) -> Result:
    return _differs(reasons, details) if reasons else _same()


def _limit(lines: Sequence[str], n: int) -> list[str]:
    """Keep the first ``n`` lines, with a note of how many more there are."""
    out = list(lines[:n])
    if len(lines) > n:
        out.append(f"... and {len(lines) - n} more")
    return out


def _differ(n: int, noun: str, plural: str | None = None) -> str:
    """Say ``1 pixel differs`` or ``3 pixels differ``."""
    return f"{n} {noun} differs" if n == 1 else f"{n} {plural or noun + 's'} differ"


def _plain(v: object) -> object:
    """Turn numpy scalars into Python ones (for readable messages)."""
    return v.item() if isinstance(v, np.generic) else v


def _load(fn: Callable[[Path], Any], before: Path, after: Path) -> tuple[Any, Any]:
    """Read both files with ``fn``, naming the side that failed."""
    out = []
    for side, path in (("BEFORE", before), ("AFTER", after)):
        try:
            out.append(fn(path))
        except ImportError as exc:
            raise UnreadableError(f"needs {exc.name or exc} (not installed)") from exc
        except Exception as exc:  # any parser error means the file is unreadable
            msg = str(exc).replace(str(path), path.name) or type(exc).__name__
            raise UnreadableError(f"{side}: {type(exc).__name__}: {msg}") from exc
    return out[0], out[1]


# --------------------------------------------------------------------------------------
# numbers and values


def close(a: float, b: float, opts: Options) -> bool:
    """Tell whether two numbers are equal within tolerance (NaN equals NaN).

    Parameters
    ----------
    a, b : float
        The numbers.
    opts : Options
        Tolerances.

    Returns
    -------
    bool
        ``|a - b| <= atol + rtol * max(|a|, |b|)``, or both NaN, or equal infinities.
    """
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    if math.isinf(a) or math.isinf(b):
        return a == b
    return abs(a - b) <= opts.atol + opts.rtol * max(abs(a), abs(b))


def _is_number(v: object) -> bool:
    numeric = isinstance(v, int | float | np.integer | np.floating)
    return numeric and not isinstance(v, bool | np.bool_)


def values_equal(a: object, b: object, opts: Options) -> bool:
    """Tell whether two scalar values are equal: numbers within tolerance, others exactly.

    Parameters
    ----------
    a, b : object
        Scalars (numbers, strings, None, booleans, dates).
    opts : Options
        Tolerances.

    Returns
    -------
    bool
        Whether they are equal; ``None`` and NaN are equal to themselves only.
    """
    if _is_number(a) and _is_number(b):
        return close(float(a), float(b), opts)
    if a is None or b is None:
        return a is None and b is None
    try:
        return bool(a == b)
    except Exception:  # e.g. an ambiguous comparison
        return repr(a) == repr(b)


def _flat(v: object) -> list[object]:
    """Return the leaves of nested tuples and lists."""
    if isinstance(v, tuple | list):
        return [leaf for x in v for leaf in _flat(x)]
    return [v]


def _nested_equal(a: object, b: object, opts: Options) -> bool:
    fa, fb = _flat(a), _flat(b)
    return len(fa) == len(fb) and all(values_equal(x, y, opts) for x, y in zip(fa, fb, strict=True))


def _round_key(v: object) -> object:
    """Make a sort key of a nested value, floats rounded (order independent of noise)."""
    if isinstance(v, tuple | list):
        return tuple(_round_key(x) for x in v)
    if isinstance(v, float):
        return round(v, 6) + 0.0
    return v


# --------------------------------------------------------------------------------------
# text


def mask_text(text: str, opts: Options) -> str:
    """Replace the volatile parts of a text.

    Parameters
    ----------
    text : str
        The text.
    opts : Options
        Its ``masks`` are applied after the built-in ones.

    Returns
    -------
    str
        The text with ISO dates and times, version strings, 32-digit hexadecimal ids and the
        ``--mask`` matches replaced by placeholders.
    """
    for _name, pattern, repl in BUILTIN_MASKS:
        text = pattern.sub(repl, text)
    for pattern in opts.masks:
        text = pattern.sub("<masked>", text)
    return text


def _lines_close(a: str, b: str, opts: Options) -> bool:
    """Whether two lines differ only in numbers within tolerance."""
    if a == b:
        return True
    if _NUMBER.sub("#", a) != _NUMBER.sub("#", b):
        return False
    na, nb = _NUMBER.findall(a), _NUMBER.findall(b)
    return len(na) == len(nb) and all(close(float(x), float(y), opts)
                                      for x, y in zip(na, nb, strict=True))


def _clip(line: str, at: int = 0) -> str:
    """Cut a window of a long line around column ``at``."""
    if len(line) <= _CLIP:
        return line
    start = max(0, min(at - 40, len(line) - _CLIP))
    head = "..." if start else ""
    tail = "..." if start + _CLIP < len(line) else ""
    return f"{head}{line[start:start + _CLIP]}{tail}"


def _first_diff(a: str, b: str) -> int:
    n = min(len(a), len(b))
    for i in range(n):
        if a[i] != b[i]:
            return i
    return n


def text_diff(a: Sequence[str], b: Sequence[str], opts: Options) -> tuple[int, list[str]]:
    """Compare two sequences of lines.

    Lines that differ only in numbers within tolerance count as equal.

    Parameters
    ----------
    a, b : sequence of str
        Lines of BEFORE and AFTER.
    opts : Options
        Tolerances and ``show``.

    Returns
    -------
    count : int
        Number of differing lines (the larger side of each differing block).
    excerpt : list of str
        A unified-diff-like excerpt of at most ``show`` differing lines (long lines are
        clipped around their first difference).
    """
    if list(a) == list(b):
        return 0, []
    sm = difflib.SequenceMatcher(None, a, b, autojunk=False)
    count = 0
    excerpt: list[str] = []
    shown = 0
    for tag, i1, i2, j1, j2 in sm.get_opcodes():
        if tag == "equal":
            continue
        if tag == "replace" and i2 - i1 == j2 - j1 and all(
                _lines_close(a[i1 + k], b[j1 + k], opts) for k in range(i2 - i1)):
            continue
        count += max(i2 - i1, j2 - j1)
        if shown >= opts.show:
            continue
        excerpt.append(f"@@ BEFORE line {i1 + 1}, AFTER line {j1 + 1} @@")
        for k in range(max(i2 - i1, j2 - j1)):
            la = a[i1 + k] if i1 + k < i2 else None
            lb = b[j1 + k] if j1 + k < j2 else None
            at = _first_diff(la, lb) if la is not None and lb is not None else 0
            if la is not None and shown < opts.show:
                excerpt.append("-" + _clip(la, at))
                shown += 1
            if lb is not None and shown < opts.show:
                excerpt.append("+" + _clip(lb, at))
                shown += 1
    return count, excerpt


def _text_result(what: str, a: Sequence[str], b: Sequence[str], opts: Options,
                 reasons: list[str], details: list[str]) -> None:
    n, excerpt = text_diff(a, b, opts)
    if n:
        reasons.append(f"{what}: {_differ(n, 'line')}")
        details.extend(excerpt)


# --------------------------------------------------------------------------------------
# images


def _pixels(data: bytes) -> tuple[str, tuple[int, int], np.ndarray]:
    from PIL import Image

    with Image.open(io.BytesIO(data)) as im:
        im.load()
        return im.mode, im.size, np.asarray(im)


def image_diff(a: bytes, b: bytes, opts: Options) -> str | None:
    """Compare two images by their decoded pixels.

    Parameters
    ----------
    a, b : bytes
        Encoded images (PNG or any format Pillow reads).
    opts : Options
        Unused (pixels are compared exactly); kept for a uniform signature.

    Returns
    -------
    str or None
        None when the pixels are the same, else a short reason (size, mode, or the count
        of differing pixels and the largest difference).
    """
    if a == b:
        return None
    mode_a, size_a, pa = _pixels(a)
    mode_b, size_b, pb = _pixels(b)
    if size_a != size_b:
        return f"size {size_a[0]}x{size_a[1]} vs {size_b[0]}x{size_b[1]}"
    if mode_a != mode_b:
        return f"mode {mode_a} vs {mode_b}"
    if np.array_equal(pa, pb):
        return None
    d = np.abs(pa.astype(np.int64) - pb.astype(np.int64))
    per_pixel = d.reshape(d.shape[0], d.shape[1], -1).max(axis=2)
    return f"{_differ(int((per_pixel > 0).sum()), 'pixel')} (max abs diff {int(d.max())})"


def _data_urls(text: str) -> tuple[str, list[tuple[str, bytes]]]:
    """Replace embedded ``data:`` URLs by numbered placeholders and decode them."""
    found: list[tuple[str, bytes]] = []

    def repl(m: re.Match[str]) -> str:
        mime = m.group(1)
        try:
            raw = base64.b64decode(m.group(2).replace("\\/", "/"), validate=False)
        except (ValueError, TypeError):
            raw = m.group(2).encode()
        found.append((mime, raw))
        return f"data:{mime};base64,<embedded #{len(found)}>"

    return _DATA_URL.sub(repl, text), found


def _compare_embedded(a: list[tuple[str, bytes]], b: list[tuple[str, bytes]], opts: Options,
                      reasons: list[str], details: list[str]) -> None:
    if len(a) != len(b):
        reasons.append(f"{len(a)} vs {len(b)} embedded images")
        return
    bad = []
    for k, ((ma, ra), (mb, rb)) in enumerate(zip(a, b, strict=True), 1):
        if ma != mb:
            bad.append(f"embedded #{k}: {ma} vs {mb}")
        elif ra == rb:
            continue
        elif ma.startswith("image/") and ma != "image/svg+xml":
            try:
                why = image_diff(ra, rb, opts)
            except Exception as exc:  # undecodable: fall back on the bytes
                why = f"bytes differ (not decodable: {type(exc).__name__})"
            if why:
                bad.append(f"embedded #{k} ({ma}): {why}")
        else:
            ha, hb = hashlib.sha256(ra).hexdigest()[:12], hashlib.sha256(rb).hexdigest()[:12]
            bad.append(f"embedded #{k} ({ma}): sha256 {ha} vs {hb}")
    if bad:
        reasons.append(f"{_differ(len(bad), 'embedded image')} (of {len(a)})")
        details.extend(_limit(bad, opts.show))


# --------------------------------------------------------------------------------------
# comparators, one per kind of file


def compare_raster(before: Path, after: Path, opts: Options) -> Result:
    """Compare two GeoTIFFs: metadata and pixels.

    Parameters
    ----------
    before, after : Path
        The rasters.
    opts : Options
        Tolerances.

    Returns
    -------
    Result
        Differs on shape, band count, dtype, CRS, transform, nodata, band descriptions, or
        pixels (NaN/nodata positions, or valid values beyond tolerance: the count of
        differing pixels and the largest absolute difference are reported).
    """

    def read(path: Path) -> dict[str, Any]:
        import rasterio

        with rasterio.open(path) as src:
            return {"shape": (src.count, src.height, src.width), "dtypes": src.dtypes,
                    "crs": src.crs, "transform": tuple(src.transform)[:6], "nodata": src.nodata,
                    "descriptions": src.descriptions, "data": src.read()}

    a, b = _load(read, before, after)
    reasons = []
    if a["shape"] != b["shape"]:
        return _differs([f"shape (bands, rows, cols) {a['shape']} vs {b['shape']}"])
    if a["dtypes"] != b["dtypes"]:
        reasons.append(f"dtype {a['dtypes']} vs {b['dtypes']}")
    if a["crs"] != b["crs"]:
        reasons.append(f"CRS {a['crs']} vs {b['crs']}")
    if not _nested_equal(a["transform"], b["transform"], opts):
        reasons.append(f"transform {a['transform']} vs {b['transform']}")
    if not values_equal(a["nodata"], b["nodata"], opts):
        reasons.append(f"nodata {a['nodata']} vs {b['nodata']}")
    if a["descriptions"] != b["descriptions"]:
        reasons.append(f"band descriptions {a['descriptions']} vs {b['descriptions']}")

    def valid(arr: np.ndarray, nodata: float | None) -> np.ndarray:
        ok = np.ones(arr.shape, dtype=bool)
        if arr.dtype.kind in "fc":
            ok &= ~np.isnan(arr)
        if nodata is not None and not math.isnan(nodata):
            ok &= arr != nodata
        return ok

    da, db = a["data"], b["data"]
    va, vb = valid(da, a["nodata"]), valid(db, b["nodata"])
    both = va & vb
    fa, fb = da[both].astype(np.float64), db[both].astype(np.float64)
    eq = np.isclose(fa, fb, rtol=opts.rtol, atol=opts.atol, equal_nan=True)
    n_mask = int((va != vb).sum())
    n_val = int((~eq).sum())
    if n_mask or n_val:
        diff = np.abs(fa - fb)
        finite = diff[np.isfinite(diff)]
        mx = float(finite.max()) if finite.size else 0.0
        parts = []
        if n_val:
            parts.append(f"{_differ(n_val, 'pixel')} beyond tolerance (max abs diff {mx:.6g})")
        if n_mask:
            parts.append(f"{_differ(n_mask, 'pixel')} in nodata/NaN position")
        reasons.append(", ".join(parts))
    return _finish(reasons)


def _layer_frames(path: Path) -> dict[str, Any]:
    import pyogrio

    out = {}
    for name, geom_type in pyogrio.list_layers(path):
        df = pyogrio.read_dataframe(path, layer=name)
        out[str(name)] = (geom_type, df)
    return out


def _column_mismatch(ca: Any, cb: Any, opts: Options) -> np.ndarray:
    """Boolean array: which cells of two equally long columns differ."""
    a, b = ca.to_numpy(), cb.to_numpy()
    if a.dtype.kind in "iuf" and b.dtype.kind in "iuf":
        fa, fb = a.astype(np.float64), b.astype(np.float64)
        return ~(np.isclose(fa, fb, rtol=opts.rtol, atol=opts.atol, equal_nan=True)
                 | ((fa == fb) & np.isinf(fa)))
    return np.array([not values_equal(_scalar(x), _scalar(y), opts)
                     for x, y in zip(a, b, strict=True)], dtype=bool)


def _scalar(v: object) -> object:
    """None for any missing value (None, NaN, NaT, pd.NA)."""
    if v is None:
        return None
    try:
        import pandas as pd

        if pd.api.types.is_scalar(v) and pd.isna(v):
            return None
    except (TypeError, ValueError):
        pass
    return v


def compare_gpkg(before: Path, after: Path, opts: Options) -> Result:
    """Compare two GeoPackages layer by layer.

    Parameters
    ----------
    before, after : Path
        The GeoPackages.
    opts : Options
        Tolerances; geometries are compared with ``shapely.equals_exact(tolerance=atol)``.

    Returns
    -------
    Result
        Differs on the layer names (or their order), and per layer on geometry type, CRS,
        row count, columns, attribute values or geometries; the first differing
        layer/row/column is named, the others follow as details.
    """
    import shapely

    a, b = _load(_layer_frames, before, after)
    reasons: list[str] = []
    problems: list[str] = []
    only_a, only_b = sorted(set(a) - set(b)), sorted(set(b) - set(a))
    if only_a:
        problems.append(f"layers only in BEFORE: {', '.join(only_a)}")
    if only_b:
        problems.append(f"layers only in AFTER: {', '.join(only_b)}")
    common = [n for n in a if n in b]
    if not only_a and not only_b and list(a) != list(b):
        problems.append("layer order differs")
    for name in common:
        (ta, da), (tb, db) = a[name], b[name]
        if ta != tb:
            problems.append(f"layer {name}: geometry type {ta} vs {tb}")
        crs_a, crs_b = getattr(da, "crs", None), getattr(db, "crs", None)
        if crs_a != crs_b:
            problems.append(f"layer {name}: CRS {crs_a} vs {crs_b}")
        if len(da) != len(db):
            problems.append(f"layer {name}: {len(da)} vs {len(db)} rows")
            continue
        if list(da.columns) != list(db.columns):
            problems.append(f"layer {name}: columns {list(da.columns)} vs {list(db.columns)}")
            continue
        geom_col = da.geometry.name if hasattr(da, "geometry") else None
        for col in da.columns:
            if (name, col) in VOLATILE_GPKG_COLUMNS:
                continue
            if col == geom_col:
                ga, gb = da[col].to_numpy(), db[col].to_numpy()
                both_none = shapely.is_missing(ga) & shapely.is_missing(gb)
                bad = ~(both_none | shapely.equals_exact(ga, gb, tolerance=opts.atol))
            else:
                bad = _column_mismatch(da[col], db[col], opts)
            if bad.any():
                i = int(np.flatnonzero(bad)[0])
                va, vb = _plain(da[col].iloc[i]), _plain(db[col].iloc[i])
                if col == geom_col:
                    va, vb = _clip(str(va), 0), _clip(str(vb), 0)
                problems.append(f"layer {name} row {i} column {col}: {va!r} vs {vb!r}"
                                f" ({_differ(int(bad.sum()), 'row')} in this column)")
    if problems:
        reasons.append(problems[0])
        if len(problems) > 1:
            reasons.append(f"{len(problems) - 1} more differences")
    return _finish(reasons, _limit(problems[1:], opts.show))


def _csv_rows(path: Path) -> list[list[str]]:
    with path.open(newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


def _csv_line(row: Sequence[str]) -> str:
    """Write a row back as one CSV line (quoted as needed)."""
    buf = io.StringIO()
    csv.writer(buf, lineterminator="").writerow(row)
    return buf.getvalue()


def _cell_equal(a: str, b: str, opts: Options) -> bool:
    if a == b:
        return True
    if _CSV_NUMBER.fullmatch(a) and _CSV_NUMBER.fullmatch(b):
        return close(float(a), float(b), opts)
    return False


def compare_csv(before: Path, after: Path, opts: Options) -> Result:
    """Compare two CSV files row by row, numbers within tolerance.

    Parameters
    ----------
    before, after : Path
        The CSV files.
    opts : Options
        Tolerances and ``show``.

    Returns
    -------
    Result
        Differs on the row count or any cell; the first differing row and column is
        named and the differing rows are shown as ``-``/``+`` lines.
    """
    a, b = _load(_csv_rows, before, after)
    header = a[0] if a else []
    reasons: list[str] = []
    details: list[str] = []
    if len(a) != len(b):
        reasons.append(f"{len(a)} vs {len(b)} rows")
    bad_rows = 0
    for i, (ra, rb) in enumerate(zip(a, b, strict=False)):
        if len(ra) == len(rb) and all(_cell_equal(x, y, opts) for x, y in zip(ra, rb, strict=True)):
            continue
        bad_rows += 1
        if bad_rows == 1:
            j = next((k for k, (x, y) in enumerate(zip(ra, rb, strict=False))
                      if not _cell_equal(x, y, opts)), min(len(ra), len(rb)))
            col = header[j] if j < len(header) else f"#{j + 1}"
            va = ra[j] if j < len(ra) else "<none>"
            vb = rb[j] if j < len(rb) else "<none>"
            reasons.append(f"row {i + 1} column {col}: {va!r} vs {vb!r}")
        if len(details) < opts.show:
            details.append(f"@@ row {i + 1} @@")
            details.append("-" + _clip(_csv_line(ra)))
            details.append("+" + _clip(_csv_line(rb)))
    if bad_rows > 1:
        reasons.append(_differ(bad_rows, "row"))
    for i in range(min(len(a), len(b)), max(len(a), len(b))):
        if len(details) >= opts.show:
            break
        row = a[i] if i < len(a) else b[i]
        details.append(("-" if i < len(a) else "+") + _clip(_csv_line(row)))
    return _finish(reasons, details)


def _sheets(path: Path) -> dict[str, list[tuple[Any, ...]]]:
    import openpyxl

    wb = openpyxl.load_workbook(path, data_only=False)
    try:
        return {ws.title: [tuple(r) for r in ws.iter_rows(values_only=True)]
                for ws in wb.worksheets}
    finally:
        wb.close()


def compare_xlsx(before: Path, after: Path, opts: Options) -> Result:
    """Compare two workbooks sheet by sheet and cell by cell (formulas as their text).

    Parameters
    ----------
    before, after : Path
        The workbooks.
    opts : Options
        Tolerances and ``show``.

    Returns
    -------
    Result
        Differs on the sheet names, a sheet's size or any cell value; the first differing
        cell is named (``Sheet!B7``).
    """
    from openpyxl.utils import get_column_letter

    a, b = _load(_sheets, before, after)
    reasons: list[str] = []
    cells: list[str] = []
    if list(a) != list(b):
        reasons.append(f"sheets {list(a)} vs {list(b)}")
    for name in (n for n in a if n in b):
        ra, rb = a[name], b[name]
        width_a = max((len(r) for r in ra), default=0)
        width_b = max((len(r) for r in rb), default=0)
        if (len(ra), width_a) != (len(rb), width_b):
            reasons.append(f"sheet {name}: {len(ra)}x{width_a} vs {len(rb)}x{width_b} cells")
        for i in range(max(len(ra), len(rb))):
            row_a = ra[i] if i < len(ra) else ()
            row_b = rb[i] if i < len(rb) else ()
            for j in range(max(len(row_a), len(row_b))):
                va = row_a[j] if j < len(row_a) else None
                vb = row_b[j] if j < len(row_b) else None
                if not values_equal(va, vb, opts):
                    cells.append(f"{name}!{get_column_letter(j + 1)}{i + 1}: {va!r} vs {vb!r}")
    if cells:
        reasons.append(f"{_differ(len(cells), 'cell')}, first {cells[0]}")
    return _finish(reasons, _limit(cells, opts.show))


def _dxf_norm(v: object) -> object:
    """Plain, comparable values of DXF attributes (vectors become tuples)."""
    if hasattr(v, "x") and hasattr(v, "y") and not isinstance(v, str | bytes):
        return tuple(float(c) for c in v)  # Vec2, Vec3
    if isinstance(v, dict):
        return tuple((k, _dxf_norm(x)) for k, x in sorted(v.items()))
    if isinstance(v, tuple | list):
        return tuple(_dxf_norm(x) for x in v)
    if isinstance(v, np.generic):
        return v.item()
    if isinstance(v, bool | int | float | str) or v is None:
        return v
    if isinstance(v, np.ndarray):
        return tuple(_dxf_norm(x) for x in v.tolist())
    if hasattr(v, "name") and hasattr(v, "value"):  # enums
        return str(v.name)
    return repr(v)


def _dxf_attribs(e: Any) -> tuple[tuple[str, object], ...]:
    return tuple((k, _dxf_norm(v)) for k, v in sorted(e.dxfattribs().items())
                 if k not in ("handle", "owner") and not k.endswith("_handle"))


def _dxf_entity(e: Any) -> tuple[object, ...]:
    """Sign an entity by type, attributes and geometry or text, without handles."""
    t = e.dxftype()
    extra: list[tuple[str, object]] = []
    if t == "LWPOLYLINE":
        extra.append(("points", _dxf_norm([tuple(p) for p in e.get_points("xyseb")])))
    elif t == "POLYLINE":
        extra.append(("vertices", _dxf_norm([v.dxf.location for v in e.vertices])))
    elif t == "MTEXT":
        extra.append(("text", e.text))
    elif t == "SPLINE":
        extra.append(("control", _dxf_norm(list(e.control_points))))
        extra.append(("fit", _dxf_norm(list(e.fit_points))))
        extra.append(("knots", _dxf_norm(list(e.knots))))
    elif t == "HATCH":
        paths = []
        for p in e.paths:
            if hasattr(p, "vertices"):
                paths.append(("polyline", _dxf_norm(list(p.vertices))))
            else:
                paths.append(("edges", tuple(
                    (type(edge).__name__, _dxf_norm({k: v for k, v in vars(edge).items()
                                                     if not k.startswith("_")}))
                    for edge in p.edges)))
        extra.append(("paths", tuple(paths)))
    elif t == "INSERT":
        extra.append(("attribs", tuple(_dxf_attribs(a) for a in e.attribs)))
    return (t, _dxf_attribs(e), tuple(extra))


def _dxf_content(path: Path) -> dict[str, Any]:
    import ezdxf

    doc = ezdxf.readfile(path)
    header = {}
    for name in doc.header.varnames():
        if name not in VOLATILE_DXF_HEADER:
            header[name] = _dxf_norm(doc.header.get(name))
    layers = {layer.dxf.name: _dxf_attribs(layer) for layer in doc.layers}
    groups: dict[str, list[tuple[object, ...]]] = {}
    containers: list[tuple[str, Iterable[Any]]] = [(f"layout {lay.name}", lay)
                                                   for lay in doc.layouts]
    containers += [(f"block {blk.name}", blk) for blk in doc.blocks if not blk.is_any_layout]
    for where, entities in containers:
        for e in entities:
            layer = e.dxf.get("layer", "0")
            groups.setdefault(f"{where}, layer {layer}", []).append(_dxf_entity(e))
    for sigs in groups.values():
        sigs.sort(key=lambda s: repr(_round_key(s)))
    return {"version": doc.dxfversion, "header": header, "layers": layers, "groups": groups}


def compare_dxf(before: Path, after: Path, opts: Options) -> Result:
    """Compare two DXF drawings by content, ignoring handles, entity order and dates.

    Parameters
    ----------
    before, after : Path
        The drawings.
    opts : Options
        Tolerances and ``show``.

    Returns
    -------
    Result
        Differs on the DXF version, the header variables (less ``VOLATILE_DXF_HEADER``),
        the layer table, or per layout/block and layer on the count of each entity type or
        on an entity's attributes, coordinates or text (entities sorted, so their order
        does not matter).
    """
    a, b = _load(_dxf_content, before, after)
    problems: list[str] = []
    details: list[str] = []
    if a["version"] != b["version"]:
        problems.append(f"DXF version {a['version']} vs {b['version']}")
    for name in sorted(set(a["header"]) | set(b["header"])):
        va, vb = a["header"].get(name, "<unset>"), b["header"].get(name, "<unset>")
        if not _nested_equal(va, vb, opts):
            problems.append(f"header {name}: {va!r} vs {vb!r}")
    if list(a["layers"]) != list(b["layers"]):
        problems.append(f"layer table {list(a['layers'])} vs {list(b['layers'])}")
    else:
        for name, attrs in a["layers"].items():
            if not _nested_equal(attrs, b["layers"][name], opts):
                problems.append(f"layer table entry {name} differs")
    ga, gb = a["groups"], b["groups"]
    for key in sorted(set(ga) | set(gb)):
        sa, sb = ga.get(key, []), gb.get(key, [])
        ca, cb = Counter(s[0] for s in sa), Counter(s[0] for s in sb)
        if ca != cb:
            counts = ", ".join(f"{t} {ca.get(t, 0)} vs {cb.get(t, 0)}"
                               for t in sorted(set(ca) | set(cb)) if ca.get(t, 0) != cb.get(t, 0))
            problems.append(f"{key}: {counts}")
            continue
        bad = [(x, y) for x, y in zip(sa, sb, strict=True) if not _nested_equal(x, y, opts)]
        if bad:
            kind = bad[0][0][0]
            problems.append(f"{key}: " + _differ(len(bad), f"{kind} entity", f"{kind} entities"))
            for x, y in bad:
                if len(details) >= opts.show:
                    break
                at = _first_diff(repr(x), repr(y))
                details.append(f"@@ {key} @@")
                details.append("-" + _clip(repr(x), at))
                details.append("+" + _clip(repr(y), at))
    reasons = problems[:1]
    if len(problems) > 1:
        reasons.append(f"{len(problems) - 1} more differences")
    return _finish(reasons, _limit(problems[1:], opts.show) + details)


def json_diff(a: object, b: object, opts: Options, *, path: str = "$",
              ignore: frozenset[str] = frozenset()) -> list[str]:
    """List the differences of two JSON values by their JSON path.

    Parameters
    ----------
    a, b : object
        Decoded JSON values.
    opts : Options
        Tolerances of numbers.
    path : str
        JSON path of ``a`` and ``b``.
    ignore : frozenset of str
        JSON paths to skip, list indices written ``[]`` (``$.files[].sha256``).

    Returns
    -------
    list of str
        One line per difference, ``<path>: <what>``.
    """
    general = re.sub(r"\[\d+\]", "[]", path)
    if general in ignore:
        return []
    if isinstance(a, dict) and isinstance(b, dict):
        out = []
        for k in a:
            if k in b:
                out += json_diff(a[k], b[k], opts, path=f"{path}.{k}", ignore=ignore)
            elif f"{general}.{k}" not in ignore:
                out.append(f"{path}.{k}: only in BEFORE")
        for k in b:
            if k not in a and f"{general}.{k}" not in ignore:
                out.append(f"{path}.{k}: only in AFTER")
        kept_a = [k for k in a if f"{general}.{k}" not in ignore]
        if not out and kept_a != [k for k in b if f"{general}.{k}" not in ignore]:
            out.append(f"{path}: key order differs")
        return out
    if isinstance(a, list) and isinstance(b, list):
        out = []
        if len(a) != len(b):
            out.append(f"{path}: {len(a)} vs {len(b)} items")
        for i, (x, y) in enumerate(zip(a, b, strict=False)):
            out += json_diff(x, y, opts, path=f"{path}[{i}]", ignore=ignore)
        return out
    if _is_number(a) and _is_number(b):
        if not close(float(a), float(b), opts):
            return [f"{path}: {a!r} vs {b!r}"]
        if type(a) is not type(b):
            return [f"{path}: {type(a).__name__} {a!r} vs {type(b).__name__} {b!r}"]
        return []
    if type(a) is not type(b) or a != b:
        ta = _clip(mask_text(a, opts)) if isinstance(a, str) else a
        tb = _clip(mask_text(b, opts)) if isinstance(b, str) else b
        if isinstance(a, str) and isinstance(b, str) and ta == tb:
            return []
        return [f"{path}: {ta!r} vs {tb!r}"]
    return []


def compare_json(before: Path, after: Path, opts: Options) -> Result:
    """Compare two JSON files; ``run.json`` without its volatile keys.

    Parameters
    ----------
    before, after : Path
        The JSON files.
    opts : Options
        Tolerances and ``show``.

    Returns
    -------
    Result
        Differs when any value differs (numbers beyond tolerance, strings after masking);
        each difference is given by its JSON path.
    """
    a, b = _load(lambda p: json.loads(p.read_text(encoding="utf-8")), before, after)
    ignore = VOLATILE_JSON_PATHS if before.name == "run.json" else frozenset()
    diffs = json_diff(a, b, opts, ignore=ignore)
    if not diffs:
        return _same()
    return _differs([f"{_differ(len(diffs), 'value')}, first {diffs[0]}"], _limit(diffs, opts.show))


class _VisibleText(HTMLParser):
    """Collects the text a reader sees: no script or style, one line per block."""

    _BLOCK = frozenset({"p", "div", "br", "li", "tr", "h1", "h2", "h3", "h4", "h5", "h6",
                        "table", "section", "header", "footer", "nav", "figure", "figcaption",
                        "ul", "ol", "title", "caption", "dt", "dd", "pre", "hr"})
    _CELL = frozenset({"td", "th"})

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.parts: list[str] = []
        self._hidden = 0

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag in ("script", "style"):
            self._hidden += 1
        elif tag in self._BLOCK:
            self.parts.append("\n")
        elif tag in self._CELL:
            self.parts.append(" | ")

    def handle_endtag(self, tag: str) -> None:
        if tag in ("script", "style"):
            self._hidden = max(0, self._hidden - 1)
        elif tag in self._BLOCK:
            self.parts.append("\n")

    def handle_data(self, data: str) -> None:
        if not self._hidden:
            self.parts.append(data)

    def lines(self) -> list[str]:
        text = "".join(self.parts)
        out = (re.sub(r"\s+", " ", line).strip(" |") for line in text.split("\n"))
        return [line for line in out if line]


def visible_text(markup: str) -> list[str]:
    """Extract the visible text of an HTML page, one line per block element.

    Parameters
    ----------
    markup : str
        The HTML.

    Returns
    -------
    list of str
        Non-empty lines, whitespace collapsed, table cells separated by ``|``.
    """
    parser = _VisibleText()
    parser.feed(markup)
    parser.close()
    return parser.lines()


def _read_text(path: Path) -> str:
    return path.read_text(encoding="utf-8", errors="strict")


def compare_report_html(before: Path, after: Path, opts: Options) -> Result:
    """Compare two HTML reports: visible text, embedded images, then markup.

    Parameters
    ----------
    before, after : Path
        The reports.
    opts : Options
        Tolerances, ``show`` and masks.

    Returns
    -------
    Result
        Differs on the visible text (after masking), on an embedded image (decoded
        pixels), or on the markup (after masking, images replaced by placeholders; only
        checked when text and images are the same).
    """
    a, b = _load(_read_text, before, after)
    (ma, ia), (mb, ib) = _data_urls(a), _data_urls(b)
    reasons: list[str] = []
    details: list[str] = []
    ta = [mask_text(line, opts) for line in visible_text(ma)]
    tb = [mask_text(line, opts) for line in visible_text(mb)]
    _text_result("visible text", ta, tb, opts, reasons, details)
    _compare_embedded(ia, ib, opts, reasons, details)
    if not reasons:
        _text_result("markup", mask_text(ma, opts).splitlines(), mask_text(mb, opts).splitlines(),
                     opts, reasons, details)
    return _finish(reasons, details)


def compare_html(before: Path, after: Path, opts: Options) -> Result:
    """Compare two HTML pages (the web map) as text after masking, images by pixels.

    Parameters
    ----------
    before, after : Path
        The pages.
    opts : Options
        Tolerances, ``show`` and masks.

    Returns
    -------
    Result
        Differs on the masked text (embedded data URLs replaced by placeholders) or on an
        embedded image.
    """
    a, b = _load(_read_text, before, after)
    (ma, ia), (mb, ib) = _data_urls(a), _data_urls(b)
    reasons: list[str] = []
    details: list[str] = []
    _text_result("text", mask_text(ma, opts).splitlines(), mask_text(mb, opts).splitlines(),
                 opts, reasons, details)
    _compare_embedded(ia, ib, opts, reasons, details)
    return _finish(reasons, details)


def _pdf_pages(path: Path) -> list[tuple[tuple[float, ...], str]]:
    import logging

    import pypdf

    logging.getLogger("pypdf").setLevel(logging.ERROR)  # its warnings on a bad file

    reader = pypdf.PdfReader(path)
    return [(tuple(float(v) for v in page.mediabox), page.extract_text() or "")
            for page in reader.pages]


def compare_pdf(before: Path, after: Path, opts: Options) -> Result:
    """Compare two PDF files: page count, page sizes and the text of each page.

    Parameters
    ----------
    before, after : Path
        The PDF files.
    opts : Options
        Tolerances, ``show`` and masks.

    Returns
    -------
    Result
        Differs on the page count, a page size, or a page's text after masking (PDF
        metadata such as its creation date is not compared).
    """
    a, b = _load(_pdf_pages, before, after)
    reasons: list[str] = []
    details: list[str] = []
    if len(a) != len(b):
        reasons.append(f"{len(a)} vs {len(b)} pages")
    sizes = [i + 1 for i, (pa, pb) in enumerate(zip(a, b, strict=False))
             if not _nested_equal(pa[0], pb[0], opts)]
    if sizes:
        reasons.append(f"page size differs on page {sizes[0]}")

    def lines(pages: list[tuple[tuple[float, ...], str]]) -> list[str]:
        out = []
        for i, (_size, text) in enumerate(pages, 1):
            out.append(f"--- page {i} ---")
            out += mask_text(text, opts).splitlines()
        return out

    la, lb = lines(a), lines(b)
    n, excerpt = text_diff(la, lb, opts)
    if n:
        pages = sorted({i + 1 for i, (pa, pb) in enumerate(zip(a, b, strict=False))
                        if text_diff(mask_text(pa[1], opts).splitlines(),
                                     mask_text(pb[1], opts).splitlines(), opts)[0]})
        where = f" (pages {', '.join(map(str, pages[:10]))})" if pages else ""
        reasons.append(f"text: {_differ(n, 'line')}{where}")
        details += excerpt
    return _finish(reasons, details)


def compare_png(before: Path, after: Path, opts: Options) -> Result:
    """Compare two images by size, mode and pixels (metadata is not compared).

    Parameters
    ----------
    before, after : Path
        The images.
    opts : Options
        Unused by the exact pixel comparison.

    Returns
    -------
    Result
        Differs on size, mode, or pixels (count and largest absolute difference).
    """
    a, b = _load(lambda p: p.read_bytes(), before, after)
    try:
        why = image_diff(a, b, opts)
    except Exception as exc:  # undecodable image
        raise UnreadableError(f"{type(exc).__name__}: {exc}") from exc
    return _differs([why]) if why else _same()


def compare_bytes(before: Path, after: Path, opts: Options) -> Result:
    """Compare two files byte by byte.

    Parameters
    ----------
    before, after : Path
        The files.
    opts : Options
        Unused.

    Returns
    -------
    Result
        Differs with the sizes and the offset of the first differing byte.
    """
    a, b = _load(lambda p: p.read_bytes(), before, after)
    if a == b:
        return _same()
    at = next((i for i, (x, y) in enumerate(zip(a, b, strict=False)) if x != y),
              min(len(a), len(b)))
    return _differs([f"bytes differ at offset {at} ({len(a)} vs {len(b)} bytes)"])


Comparator = Callable[[Path, Path, Options], Result]

#: (glob on the path relative to the run folder, comparator); the first match wins.
COMPARATORS: tuple[tuple[str, Comparator], ...] = (
    ("*.tif", compare_raster),
    ("*.tiff", compare_raster),
    ("*.gpkg", compare_gpkg),
    ("*.csv", compare_csv),
    ("*.xlsx", compare_xlsx),
    ("*.dxf", compare_dxf),
    ("*.json", compare_json),
    ("report.html", compare_report_html),
    ("*.html", compare_html),
    ("*.pdf", compare_pdf),
    ("*.png", compare_png),
)


def comparator_for(rel: str) -> Comparator:
    """Choose the comparator of a file by its path relative to the run folder.

    Parameters
    ----------
    rel : str
        POSIX path relative to the run folder.

    Returns
    -------
    callable
        ``compare_*(before, after, opts) -> Result``; :func:`compare_bytes` by default.
    """
    name = rel.lower()
    for pattern, fn in COMPARATORS:
        if fnmatch.fnmatchcase(name, pattern) or fnmatch.fnmatchcase(name.rsplit("/", 1)[-1],
                                                                      pattern):
            return fn
    return compare_bytes


def compare_file(before: Path, after: Path, rel: str, opts: Options) -> Result:
    """Compare one file present in both folders; never raises.

    Parameters
    ----------
    before, after : Path
        The file in BEFORE and in AFTER.
    rel : str
        Its path relative to the run folders (chooses the comparator).
    opts : Options
        Settings.

    Returns
    -------
    Result
        ``unreadable`` with the reason when either file cannot be read.
    """
    try:
        return comparator_for(rel)(before, after, opts)
    except UnreadableError as exc:
        return Result("unreadable", str(exc))
    except Exception as exc:  # a comparator's own failure must not end the whole run
        return Result("unreadable", f"{type(exc).__name__}: {exc}")


def list_files(root: Path) -> list[str]:
    """All files under ``root``, as sorted POSIX paths relative to it.

    Parameters
    ----------
    root : Path
        A run folder.

    Returns
    -------
    list of str
        Relative paths.
    """
    return sorted(p.relative_to(root).as_posix() for p in root.rglob("*") if p.is_file())


def compare_runs(before: Path, after: Path, opts: Options,
                 only: Sequence[str] = ()) -> list[tuple[str, Result]]:
    """Compare every file of two run folders.

    Parameters
    ----------
    before, after : Path
        The run folders.
    opts : Options
        Settings.
    only : sequence of str
        Globs on the relative path; when given, only matching files are compared
        (``*`` also matches ``/``).

    Returns
    -------
    list of (str, Result)
        One entry per file in either folder, sorted by path.
    """
    fa, fb = set(list_files(before)), set(list_files(after))
    out = []
    for rel in sorted(fa | fb):
        if only and not any(fnmatch.fnmatchcase(rel, g) for g in only):
            continue
        if rel not in fb:
            out.append((rel, Result("missing", "only in BEFORE")))
        elif rel not in fa:
            out.append((rel, Result("extra", "only in AFTER")))
        else:
            out.append((rel, compare_file(before / rel, after / rel, rel, opts)))
    return out


def format_result(rel: str, result: Result) -> list[str]:
    """Format one file as ``path: status[: reason]`` and indented details.

    Parameters
    ----------
    rel : str
        Relative path.
    result : Result
        Its outcome.

    Returns
    -------
    list of str
        Lines without newlines.
    """
    head = f"{rel}: {result.status}" + (f": {result.reason}" if result.reason else "")
    return [head] + [f"    {line}" for line in result.details]


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="compare_runs.py",
        description="Compare two geo-corrosion run folders; exit 0 when the same, 1 when "
                    "anything differs, 2 on bad usage.")
    p.add_argument("before", type=Path, metavar="BEFORE_DIR")
    p.add_argument("after", type=Path, metavar="AFTER_DIR")
    p.add_argument("--atol", type=float, default=1e-9, help="absolute tolerance (default 1e-9)")
    p.add_argument("--rtol", type=float, default=1e-9, help="relative tolerance (default 1e-9)")
    p.add_argument("--show", type=int, default=10, metavar="N",
                   help="at most N detail lines per file (default 10)")
    p.add_argument("--mask", action="append", default=[], metavar="REGEX",
                   help="further text to mask before comparing text (repeatable)")
    p.add_argument("--only", action="append", default=[], metavar="GLOB",
                   help="compare only files whose relative path matches (repeatable)")
    return p


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments (default ``sys.argv[1:]``).

    Returns
    -------
    int
        0 when the folders are the same, 1 when anything differs, 2 on bad usage.
    """
    parser = _parser()
    try:
        args = parser.parse_args(argv)
        for name in ("before", "after"):
            if not getattr(args, name).is_dir():
                parser.error(f"{name.upper()}_DIR is not a folder: {getattr(args, name)}")
        if args.atol < 0 or args.rtol < 0 or not (math.isfinite(args.atol)
                                                  and math.isfinite(args.rtol)):
            parser.error("--atol and --rtol must be finite and not negative")
        if args.show < 0:
            parser.error("--show must not be negative")
        try:
            masks = tuple(re.compile(m) for m in args.mask)
        except re.error as exc:
            parser.error(f"bad --mask expression: {exc}")
    except SystemExit as exc:  # argparse's usage errors (2) and --help (0)
        return exc.code if isinstance(exc.code, int) else 2
    opts = Options(atol=args.atol, rtol=args.rtol, show=args.show, masks=masks)
    results = compare_runs(args.before, args.after, opts, args.only)
    for rel, result in results:
        for line in format_result(rel, result):
            print(line)
    counts = Counter(r.status for _rel, r in results)
    verdict = "SAME" if all(r.ok for _rel, r in results) else "DIFFERENT"
    n = len(results)
    print(f"summary: {n} file{'' if n == 1 else 's'}, {counts['same']} same, "
          f"{counts['differs']} differ, "
          f"{counts['missing']} missing, {counts['extra']} extra, "
          f"{counts['unreadable']} unreadable: {verdict}")
    return 0 if verdict == "SAME" else 1


if __name__ == "__main__":
    sys.exit(main())
