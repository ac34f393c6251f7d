"""Helpers for tests and plugin authors: a small synthetic site written to a folder.

The data are invented (a smooth synthetic field), for fixtures only.
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from pathlib import Path
from typing import TypedDict

import numpy as np
from numpy.typing import NDArray

__all__ = ["make_synthetic_site", "SYNTHETIC_TIE"]

class _Tie(TypedDict):
    rotation_deg: float
    origin: tuple[float, float]
    crs: str


#: Grid tie of the synthetic site: local feet, UTM 18N metres, 17 degrees, origin.
SYNTHETIC_TIE: _Tie = {"rotation_deg": 17.0, "origin": (583100.0, 4507200.0),
                       "crs": "EPSG:26918"}


def _site_xy(x: NDArray[np.float64], y: NDArray[np.float64],
             offset: tuple[float, float] = (0.0, 0.0)
             ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    a = math.radians(SYNTHETIC_TIE["rotation_deg"])
    k = 0.3048
    ox, oy = SYNTHETIC_TIE["origin"]
    ox, oy = ox + offset[0], oy + offset[1]
    return (ox + k * (math.cos(a) * x - math.sin(a) * y),
            oy + k * (math.sin(a) * x + math.cos(a) * y))


def _field(x: NDArray[np.float64], y: NDArray[np.float64]) -> NDArray[np.float64]:
    """Synthetic corrosion activity 0..1: a hot spot near (15, 10) ft and a gentle trend."""
    return np.clip(np.exp(-((x - 15) ** 2 + (y - 10) ** 2) / 60.0) + 0.15 * np.sin(x / 9.0), 0, 1)


def make_synthetic_site(
    root: str | Path,
    *,
    width_ft: float = 60.0,
    depth_ft: float = 40.0,
    spacing_ft: float = 2.0,
    seed: int = 1,
    extra_site: str = "",
    electrode: str = "cse",
    temperature_c: float = 22.2,
    joint_type: str | None = None,
    joint_x: float | None = None,
    step_mv: float = 0.0,
    ground_connections: Sequence[tuple[float, float, str]] | None = None,
    sparse_readings: int = 0,
    max_distance: str | None = "6 ft",
    levels: int = 1,
    name: str = "Synthetic test deck",
    offset_m: tuple[float, float] = (0.0, 0.0),
) -> Path:
    """Write a one-level synthetic site (GeoJSON plans, DXF sounding, CSV readings).

    With ``joint_type`` (``"expansion"``, ``"construction"``, ...), a joint line across the
    deck at ``x = joint_x`` (default: mid-width) is written to ``plans/joints.geojson`` and
    declared with that type; ``step_mv`` is added to the potentials beyond it (a mat at
    another potential).  ``ground_connections`` (x, y, label) go to the potential survey.

    ``sparse_readings`` (say 18, a normal spot survey) adds a corrosion-rate survey of that
    many readings spread over the deck, too few for a surface; ``max_distance`` is written
    to ``[run]`` (None: each kind's own, derived).

    ``levels`` > 1 adds levels ``D2``, ``D3``, ... with the same plans and readings of their
    own (seeds ``seed + 1``, ...; files in ``D2/``, ...), so that levels differ.
    ``name`` is the site's name; ``offset_m`` (east, north, metres) moves the site's tie
    away from :data:`SYNTHETIC_TIE`'s origin (several sites in different places).

    Returns
    -------
    Path
        The site file.
    """
    # ezdxf.new from the module defining it (ezdxf's __init__ re-exports it unmarked)
    from ezdxf.filemanagement import new as new_drawing

    rng = np.random.default_rng(seed)
    root = Path(root)
    for d in ("plans", "sounding", "readings"):
        (root / d).mkdir(parents=True, exist_ok=True)
    slab = {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"name": "slab"},
         "geometry": {"type": "Polygon", "coordinates": [[[0, 0], [width_ft, 0],
                      [width_ft, depth_ft], [0, depth_ft], [0, 0]]]}}]}
    (root / "plans" / "slab.geojson").write_text(json.dumps(slab))
    col = {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"name": "C1"},
         "geometry": {"type": "Polygon", "coordinates": [[[39, 19], [41, 19], [41, 21], [39, 21],
                                                          [39, 19]]]}}]}
    (root / "plans" / "columns.geojson").write_text(json.dumps(col))
    doc = new_drawing("R2010")
    doc.header["$INSUNITS"] = 2
    doc.layers.add("DELAM")
    doc.layers.add("SPALL")
    msp = doc.modelspace()
    msp.add_lwpolyline([(12, 8), (18, 8), (18, 12), (12, 12)], close=True,
                       dxfattribs={"layer": "DELAM"})
    msp.add_circle((15, 10), 0.8, dxfattribs={"layer": "SPALL"})
    doc.saveas(root / "sounding" / "sounding.dxf")
    xs = np.arange(1.0, width_ft, spacing_ft)
    ys = np.arange(1.0, depth_ft, spacing_ft)
    X, Y = np.meshgrid(xs, ys)
    x, y = X.ravel(), Y.ravel()
    act = _field(x, y)
    e_cse = -150 - 380 * act + rng.normal(0, 8, x.size)
    jx = width_ft / 2 if joint_x is None else joint_x
    joints_line = ""
    if joint_type is not None:
        e_cse = e_cse + np.where(x > jx, step_mv, 0.0)
        joint = {"type": "FeatureCollection", "features": [
            {"type": "Feature", "properties": {"name": "J1"},
             "geometry": {"type": "LineString", "coordinates": [[jx, 0], [jx, depth_ft]]}}]}
        (root / "plans" / "joints.geojson").write_text(json.dumps(joint))
        joints_line = (f'joints = {{ path = "plans/joints.geojson", type = "{joint_type}" }}\n')
    gc_line = ""
    if ground_connections:
        gc_line = "ground_connections = [ " + ", ".join(
            f'{{ x = {gx}, y = {gy}, label = "{gl}" }}' for gx, gy, gl in ground_connections
        ) + " ]\n"
    from geo_corrosion.corrections import cse_temperature_correction_mv, electrode_offset_mv

    e_file = e_cse - electrode_offset_mv(electrode) - (
        cse_temperature_correction_mv(temperature_c) if electrode == "cse" else 0.0)
    lines = ["point_id,x,y,value"] + [f"P{i},{a:.2f},{b:.2f},{v:.1f}"
                                      for i, (a, b, v) in enumerate(zip(x, y, e_file, strict=True))]
    (root / "readings" / "potential.csv").write_text("\n".join(lines) + "\n")
    sel = slice(None, None, 3)
    rho = np.exp(np.log(40) - 1.5 * act[sel] + rng.normal(0, 0.1, act[sel].size))
    lines = ["point_id,x,y,value"] + [f"R{i},{a:.2f},{b:.2f},{v:.2f}" for i, (a, b, v) in
                                      enumerate(zip(x[sel], y[sel], rho, strict=True))]
    (root / "readings" / "resistivity.csv").write_text("\n".join(lines) + "\n")
    if sparse_readings:
        n_x = max(1, round(math.sqrt(sparse_readings * width_ft / depth_ft)))
        k = np.arange(sparse_readings)
        n_y = math.ceil(sparse_readings / n_x)
        sx = (k % n_x + 0.5) * width_ft / n_x
        sy = (k // n_x + 0.5) * depth_ft / n_y
        rate = np.exp(np.log(0.3) + 2.5 * _field(sx, sy) + rng.normal(0, 0.1, sx.size))
        lines = ["point_id,x,y,value"] + [f"C{i},{a:.2f},{b:.2f},{v:.3f}" for i, (a, b, v) in
                                          enumerate(zip(sx, sy, rate, strict=True))]
        (root / "readings" / "corrosion_rate.csv").write_text("\n".join(lines) + "\n")
    cps = [(0.0, 0.0), (width_ft, 0.0), (0.0, depth_ft)]
    cp_site = [_site_xy(np.array(a), np.array(b), offset_m) for a, b in cps]
    cp_text = ", ".join(
        f'{{ id = "CP{i + 1}", local = [{a}, {b}], site = [{float(sx):.4f}, {float(sy):.4f}] }}'
        for i, ((a, b), (sx, sy)) in enumerate(zip(cps, cp_site, strict=True)))
    text = f'''[site]
name = {json.dumps(name)}
crs = "{SYNTHETIC_TIE["crs"]}"
units = "us"
{extra_site}
[run]
cell_size = "1 ft"
{f'max_distance = "{max_distance}"' if max_distance else ""}

[[levels]]
id = "D1"
name = "Test deck"
slab = {{ path = "plans/slab.geojson" }}
exclusions = [ {{ path = "plans/columns.geojson" }} ]
{joints_line}\
overlays = [ {{ kind = "delamination", path = "sounding/sounding.dxf", layer = "DELAM" }},
             {{ kind = "spall", path = "sounding/sounding.dxf", layer = "SPALL" }} ]
[levels.grid]
unit = "ft"
spacing = {spacing_ft}
control_points = [ {cp_text} ]

[[surveys]]
id = "D1-hcp"
level = "D1"
kind = "potential"
path = "readings/potential.csv"
unit = "mV"
electrode = "{electrode}"
temperature_c = {temperature_c}
{gc_line}
[[surveys]]
id = "D1-res"
level = "D1"
kind = "resistivity"
path = "readings/resistivity.csv"
unit = "kohm.cm"
temperature_c = 20.0
'''
    if sparse_readings:
        text += '''
[[surveys]]
id = "D1-rate"
level = "D1"
kind = "corrosion_rate"
path = "readings/corrosion_rate.csv"
unit = "uA/cm2"
'''
    for i in range(2, levels + 1):  # further levels: a site of their own, re-labelled
        lid = f"D{i}"
        sub = make_synthetic_site(root / lid, width_ft=width_ft, depth_ft=depth_ft,
                                  spacing_ft=spacing_ft, seed=seed + i - 1,
                                  electrode=electrode, temperature_c=temperature_c,
                                  sparse_readings=sparse_readings, max_distance=max_distance,
                                  offset_m=offset_m)
        more = sub.read_text()
        more = more[more.index("[[levels]]"):].replace('"D1', f'"{lid}').replace(
            "name = \"Test deck\"", f"name = \"Test deck {lid}\"")
        for d in ("plans/", "sounding/", "readings/"):
            more = more.replace(f'"{d}', f'"{lid}/{d}')
        text += "\n" + more
        sub.unlink()
    p = root / "site.toml"
    p.write_text(text)
    return p


