"""Generate the invented sample site "Millbrook Commons Parking Structure".

Everything this script writes is invented: the structure, its owner, the survey
crew and every reading.  The data are drawn from a fixed seed, so two runs give
byte-identical files.  Run it from the repository root::

    python sample_sites/make_sample_sites.py            # rewrites sample_sites/millbrook_garage/
    python sample_sites/make_sample_sites.py --out DIR  # writes the site into DIR

How the data are made (per level):

* A latent corrosion-activity field ``a(x, y)`` (about 0 passive to 1 active) from a
  smooth correlated random field (a sum of random Fourier modes, wavelengths
  35-120 ft), Gaussian bumps around the floor drains (low points where water and
  de-icing salt pond), bands along the joints (leaking joints), and patches of
  low cover.  The roof (RF) is more exposed than the supported level (L2).
* Half-cell potentials ``E = -150 - 380 a`` mV vs CSE plus 5 mV measurement noise,
  written *as measured*: shifted by the reference electrode (Ag/AgCl in
  saturated KCl reads 119 mV more positive than the CSE [IJCorros-2010 Table 2]) and by
  the electrode temperature (0.9 mV/degC more negative per degree above 22.2 degC,
  [ASTM-C876-22a §5.1.1.2]), so that the corrections recover it.
* Delaminations (irregular closed polygons, 2-40 sq ft) around the spots of
  highest activity, spalls (smaller) some of them inside delaminations.
* Resistivity (lognormal, low where active or wet) on an 8 ft grid, written at the
  concrete temperature of the survey (Arrhenius [Coyle-Spragg-2019], Ea = 25 kJ/mol);
  corrosion rate (lognormal, high where active) at some 50 points; cover (normal
  about 50 mm, lower in the low-cover patches) on an 8 ft grid, as a GeoJSON point
  layer in the site CRS (EPSG:26918) with cover in inches.
* A handful of flawed readings for QA to find, listed in the site's README.md.

The script is standalone on purpose (numpy, shapely, ezdxf and the standard
library): it does not import geo_corrosion, so the sample data do not depend on
the code they are meant to exercise.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import math
import shutil
import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import ezdxf
import numpy as np
import shapely
from numpy.typing import NDArray
from shapely.geometry import LineString, Point, Polygon, box

__all__ = [
    "SEED", "FT_TO_M", "ORIGIN_EN_M", "ROTATION_DEG", "LEVEL_IDS", "Flaw", "Plan", "LevelModel",
    "local_to_site", "make_plan", "build_models", "generate", "main",
]

SEED = 20260721
FT_TO_M = 0.3048  # exact, international foot
IN_TO_MM = 25.4  # exact
#: Invented site coordinates (EPSG:26918, metres) of the local grid origin and grid rotation
#: (counter-clockwise from east to the grid x axis).
ORIGIN_EN_M = (583_412.370, 4_507_268.910)
ROTATION_DEG = 17.0
CONTROL_NOISE_M = 0.004  # survey noise on the control points, metres (standard deviation)
SPACING_FT = 2.0
LEVEL_IDS = ("L2", "RF")
NOISE_MV = 5.0  # measurement noise of the potentials, mV (standard deviation)
CSE_T_REF_C = 22.2  # [ASTM-C876-22a §4.7]
CSE_K_MV_PER_C = 0.9  # [ASTM-C876-22a §5.1.1.2], applied as "more negative when warmer"
AG_AGCL_SAT_KCL_MINUS_CSE_MV = 119.0  # 316 - 197 mV vs SHE [IJCorros-2010 Table 2]
EA_KJ_MOL = 25.0  # activation energy of the resistivity temperature effect (common practice)
RHO_T_REF_C = 20.0
DEFAULT_OUT = Path(__file__).resolve().parent / "millbrook_garage"
MARKER = "sample_sites/make_sample_sites.py"


@dataclass(frozen=True)
class Flaw:
    """A reading planted for QA to find."""

    file: str
    point_id: str
    kind: str
    description: str


@dataclass(frozen=True)
class Plan:
    """The plan of one level, local grid feet."""

    level_id: str
    slab: Polygon
    columns: tuple[Polygon, ...]
    openings: tuple[Polygon, ...]
    joints: tuple[tuple[str, tuple[tuple[float, float], ...]], ...]  # (entity type, vertices)
    drains: tuple[tuple[float, float], ...]
    low_cover: tuple[tuple[float, float, float, float, float, float], ...]  # cx, cy, a, b, deg, mm
    control_local: tuple[tuple[str, float, float], ...]
    #: indices into ``joints`` of the expansion joints: drawn on layer EXP-JOINTS and declared
    #: ``type = "expansion"`` (the reinforcing mats on their two sides are not continuous)
    expansion: tuple[int, ...] = ()
    #: ground connections of each potential survey of the level, (x, y, label) in grid feet
    ground: tuple[tuple[str, tuple[tuple[float, float, str], ...]], ...] = ()

    @property
    def exclusions(self) -> Polygon:
        """Columns and openings as one geometry."""
        return shapely.union_all([*self.columns, *self.openings])


def local_to_site(x_ft: NDArray[np.float64] | float, y_ft: NDArray[np.float64] | float
                  ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Exact local grid (ft) to EPSG:26918 (m): scale 0.3048, rotate, translate."""
    a = math.radians(ROTATION_DEG)
    xm, ym = np.asarray(x_ft, float) * FT_TO_M, np.asarray(y_ft, float) * FT_TO_M
    return (ORIGIN_EN_M[0] + math.cos(a) * xm - math.sin(a) * ym,
            ORIGIN_EN_M[1] + math.sin(a) * xm + math.cos(a) * ym)


def _sq(cx: float, cy: float, half: float = 1.0) -> Polygon:
    return box(cx - half, cy - half, cx + half, cy + half)


def make_plan(level_id: str) -> Plan:
    """Return the (fixed, hand-drawn) plan of a level."""
    slab = box(0.0, 0.0, 180.0, 120.0)
    core = (box(6.0, 98.0, 22.0, 114.0), box(24.0, 104.0, 32.0, 114.0))  # stair, elevator
    if level_id == "L2":
        return Plan(
            "L2", slab,
            tuple(_sq(30.0 * i, 30.0 * j) for j in (1, 2, 3) for i in (1, 2, 3, 4, 5)),
            core,
            (("LINE", ((75.0, 0.0), (75.0, 120.0))), ("LINE", ((135.0, 0.0), (135.0, 120.0)))),
            ((45.0, 15.0), (105.0, 15.0), (165.0, 45.0), (15.0, 75.0), (105.0, 75.0),
             (150.0, 105.0)),
            ((128.0, 40.0, 14.0, 6.0, 20.0, 18.0), (58.0, 88.0, 10.0, 5.0, -35.0, 15.0)),
            (("CP1", 0.0, 0.0), ("CP2", 180.0, 0.0), ("CP3", 180.0, 120.0)),
        )
    if level_id == "RF":
        poles = ((30.0, 30.0), (90.0, 30.0), (150.0, 30.0), (30.0, 90.0), (90.0, 90.0),
                 (150.0, 60.0))
        return Plan(
            "RF", slab,
            tuple(_sq(x, y) for x, y in poles),  # light-pole bases on the column lines
            (*core, box(120.0, 92.0, 170.0, 112.0)),  # stair, elevator, ramp down to L2
            # the expansion joint runs across the deck, through the ramp opening, so the
            # mats east and west of it are two electrical circuits
            (("LINE", ((60.0, 0.0), (60.0, 120.0))),
             ("LWPOLYLINE", ((120.0, 0.0), (120.0, 46.0), (120.0, 92.0), (120.0, 120.0)))),
            ((15.0, 15.0), (75.0, 15.0), (135.0, 15.0), (172.0, 55.0), (100.0, 62.0),
             (40.0, 58.0), (60.0, 105.0), (100.0, 100.0)),
            ((40.0, 28.0, 12.0, 5.0, 10.0, 20.0), (150.0, 72.0, 15.0, 6.0, -20.0, 18.0),
             (90.0, 108.0, 9.0, 4.0, 0.0, 14.0)),
            (("CP1", 0.0, 120.0), ("CP2", 180.0, 120.0), ("CP3", 90.0, 0.0)),
            expansion=(1,),
            # the crew connected to the bars on each side of the expansion joint
            ground=(("RF-hcp-south", ((4.0, 4.0, "GS-W"), (176.0, 4.0, "GS-E"))),
                    ("RF-hcp-north", ((4.0, 116.0, "GN-W"), (176.0, 116.0, "GN-E")))),
        )
    raise ValueError(f"unknown level {level_id!r}; expected one of {LEVEL_IDS}")


def _rng(seed: int, level_id: str, purpose: int) -> np.random.Generator:
    return np.random.default_rng([seed, LEVEL_IDS.index(level_id), purpose])


@dataclass(frozen=True)
class LevelModel:
    """The latent fields of one level (all inputs in local grid feet)."""

    plan: Plan
    base: float
    modes: NDArray[np.float64]  # rows: kx, ky (rad/ft), phase, amplitude
    drain_bumps: NDArray[np.float64]  # rows: x, y, amplitude, sigma (ft)
    joint_amp: float
    joint_sigma_ft: float
    joint_mod: NDArray[np.float64]  # per joint: wavelength (ft), phase
    cover_amp: float
    scale: float = 0.8

    def _joint_term(self, x: NDArray[np.float64], y: NDArray[np.float64]) -> NDArray[np.float64]:
        out = np.zeros_like(x)
        pts = shapely.points(x.ravel(), y.ravel())
        for (_, verts), (lam, ph) in zip(self.plan.joints, self.joint_mod, strict=True):
            line = LineString(verts)
            d = shapely.distance(pts, line).reshape(x.shape)
            s = shapely.line_locate_point(line, pts).reshape(x.shape)
            out += np.exp(-0.5 * (d / self.joint_sigma_ft) ** 2) * (
                0.6 + 0.4 * np.cos(2 * np.pi * s / lam + ph))
        return self.joint_amp * out

    def low_cover_weight(self, x: NDArray[np.float64] | float, y: NDArray[np.float64] | float
                         ) -> NDArray[np.float64]:
        """Per patch weight 0..1 (Gaussian in the patch ellipse); shape (patches, *x.shape)."""
        x, y = np.asarray(x, float), np.asarray(y, float)
        out = []
        for cx, cy, a, b, deg, _ in self.plan.low_cover:
            t = math.radians(deg)
            u = (x - cx) * math.cos(t) + (y - cy) * math.sin(t)
            v = -(x - cx) * math.sin(t) + (y - cy) * math.cos(t)
            out.append(np.exp(-0.5 * ((u / a) ** 2 + (v / b) ** 2)))
        return np.array(out)

    def wetness(self, x: NDArray[np.float64] | float, y: NDArray[np.float64] | float
                ) -> NDArray[np.float64]:
        """0..1, high near the drains (ponding)."""
        x, y = np.asarray(x, float), np.asarray(y, float)
        w = np.zeros_like(x)
        for dx, dy, _, sig in self.drain_bumps:
            w = np.maximum(w, np.exp(-0.5 * ((x - dx) ** 2 + (y - dy) ** 2) / (1.3 * sig) ** 2))
        return w

    def activity(self, x: NDArray[np.float64] | float, y: NDArray[np.float64] | float
                 ) -> NDArray[np.float64]:
        """Latent corrosion activity, about -0.08 (dry, passive) to 1.02 (active)."""
        x, y = np.asarray(x, float), np.asarray(y, float)
        kx, ky, ph, amp = self.modes
        z = np.full_like(x, self.base)
        z += np.tensordot(amp, np.cos(np.multiply.outer(kx, x) + np.multiply.outer(ky, y)
                                      + ph.reshape((-1,) + (1,) * x.ndim)), axes=1)
        for dx, dy, a, sig in self.drain_bumps:
            z += a * np.exp(-0.5 * ((x - dx) ** 2 + (y - dy) ** 2) / sig**2)
        z += self._joint_term(x, y)
        z += self.cover_amp * self.low_cover_weight(x, y).sum(axis=0)
        return 1.1 / (1.0 + np.exp(-z / self.scale)) - 0.08

    def potential_cse_mv(self, x: NDArray[np.float64] | float, y: NDArray[np.float64] | float
                         ) -> NDArray[np.float64]:
        """Latent (noise-free) half-cell potential, mV vs CSE at 22.2 degC."""
        return -150.0 - 380.0 * self.activity(x, y)

    def cover_mean_mm(self, x: NDArray[np.float64] | float, y: NDArray[np.float64] | float
                      ) -> NDArray[np.float64]:
        """Mean cover, mm: 50 mm specified, less in the low-cover patches."""
        depth = np.array([p[5] for p in self.plan.low_cover])
        w = self.low_cover_weight(x, y)
        return 50.0 - np.tensordot(depth, w, axes=1)


def build_models(seed: int = SEED) -> dict[str, LevelModel]:
    """Return the latent-field model of each level (deterministic for a seed)."""
    out = {}
    for lid, base, rf_amp, (a_lo, a_hi), (s_lo, s_hi), j_amp, c_amp in (
        ("L2", -1.35, 0.65, (1.3, 2.1), (8.0, 12.0), 1.4, 1.4),
        ("RF", -0.85, 0.75, (1.6, 2.4), (9.0, 14.0), 1.3, 1.6),
    ):
        plan = make_plan(lid)
        rng = _rng(seed, lid, 1)
        n = 40
        lam = rng.uniform(35.0, 120.0, n)
        th = rng.uniform(0.0, np.pi, n)
        k = 2 * np.pi / lam
        modes = np.array([k * np.cos(th), k * np.sin(th), rng.uniform(0, 2 * np.pi, n),
                          np.full(n, rf_amp * math.sqrt(2.0 / n))])
        drains = np.array([[x, y, rng.uniform(a_lo, a_hi), rng.uniform(s_lo, s_hi)]
                           for x, y in plan.drains])
        jmod = np.array([[rng.uniform(20.0, 45.0), rng.uniform(0, 2 * np.pi)]
                         for _ in plan.joints])
        out[lid] = LevelModel(plan, base, modes, drains, j_amp, 3.5, jmod, c_amp)
    return out


# --------------------------------------------------------------------------------------------
# sounding: delaminations and spalls


def _blob(rng: np.random.Generator, cx: float, cy: float, area: float, n: int) -> Polygon:
    """Return an irregular closed polygon of ``n`` vertices and about ``area`` sq ft."""
    theta = np.sort(2 * np.pi * (np.arange(n) + rng.uniform(-0.3, 0.3, n)) / n)
    elong, rot = rng.uniform(1.0, 1.8), rng.uniform(0, np.pi)
    r = 1.0 / np.sqrt((np.cos(theta - rot) / elong) ** 2 + (np.sin(theta - rot) * elong) ** 2
                      ) ** 0.5
    for m in (2, 3, 4, 5):
        r = r * (1.0 + rng.uniform(0.0, 0.12) * np.cos(m * theta + rng.uniform(0, 2 * np.pi)))
    r *= 1.0 + rng.uniform(-0.05, 0.05, n)
    poly = Polygon(np.c_[np.cos(theta) * r, np.sin(theta) * r])
    f = math.sqrt(area / poly.area)
    coords = np.round(np.c_[cx + np.cos(theta) * r * f, cy + np.sin(theta) * r * f], 2)
    return Polygon(coords)


def _sounding(model: LevelModel, seed: int) -> tuple[list[Polygon], list[Polygon], Polygon | None]:
    """Delaminations (polygons), spalls, and on RF one delamination drawn as a circle."""
    plan = model.plan
    rng = _rng(seed, plan.level_id, 2)
    xs, ys = np.meshgrid(np.arange(0.5, 180.0, 1.0), np.arange(0.5, 120.0, 1.0))
    act = model.activity(xs, ys).ravel()
    order = np.argsort(-act, kind="stable")
    target = {"L2": 20, "RF": 27}[plan.level_id]
    a_thr, a_max = float(np.quantile(act, 0.90)), float(act[order[0]])
    keep_out = plan.exclusions.buffer(1.0)
    inner = plan.slab.buffer(-1.5)
    delams: list[Polygon] = []
    spare: list[tuple[float, float]] = []
    for i in order:
        if act[i] < a_thr or len(spare) >= 40:
            break
        cx, cy = float(xs.ravel()[i]), float(ys.ravel()[i])
        if any(d.distance(Point(cx, cy)) < 4.0 for d in delams):
            continue
        if len(delams) >= target:  # spare high spots: the circle and the lone spalls
            if all(math.hypot(cx - sx, cy - sy) >= 4.0 for sx, sy in spare):
                spare.append((cx, cy))
            continue
        t = (act[i] - a_thr) / max(a_max - a_thr, 1e-9)
        area = float(np.clip(2.0 * 20.0 ** (rng.uniform() ** 0.7 * (0.55 + 0.45 * t)), 2.0, 40.0))
        n = int(np.clip(8 + area // 3 + rng.integers(0, 4), 8, 20))
        poly = _blob(rng, cx + rng.uniform(-0.5, 0.5), cy + rng.uniform(-0.5, 0.5), area, n)
        if (poly.is_valid and inner.contains(poly) and not poly.intersects(keep_out)
                and all(poly.distance(d) >= 1.5 for d in delams)):
            delams.append(poly)
    circle = None
    if plan.level_id == "RF":  # one delamination drawn as a CIRCLE (the reader supports circles)
        for cx, cy in spare:
            c = Point(cx, cy).buffer(1.75, quad_segs=16)
            if (inner.contains(c) and not c.intersects(keep_out)
                    and all(c.distance(d) > 2.0 for d in delams)):
                circle = Point(round(cx, 2), round(cy, 2)).buffer(1.75, quad_segs=16)
                break
    spalls: list[Polygon] = []
    n_in, n_out = {"L2": (2, 2), "RF": (3, 3)}[plan.level_id]
    for d in sorted(delams, key=lambda p: -p.area)[:n_in]:
        c = d.centroid
        for area in (2.5, 1.5, 0.8):
            s = _blob(rng, c.x, c.y, min(area, 0.25 * d.area), int(rng.integers(8, 13)))
            if s.is_valid and d.buffer(-0.2).contains(s):
                spalls.append(s)
                break
    for cx, cy in spare:
        if len(spalls) >= n_in + n_out:
            break
        s = _blob(rng, cx, cy, float(rng.uniform(0.8, 4.0)), int(rng.integers(8, 13)))
        taken = [*delams, *spalls] + ([circle] if circle is not None else [])
        if (s.is_valid and inner.contains(s) and not s.intersects(keep_out)
                and all(s.distance(o) > 1.0 for o in taken)):
            spalls.append(s)
    return delams, spalls, circle


# --------------------------------------------------------------------------------------------
# readings


def _grid_points(plan: Plan, spacing: float, offset: float) -> NDArray[np.float64]:
    """Survey stations on a grid, lines along x, walked in a serpentine; outside exclusions."""
    xs = np.arange(offset, 180.0, spacing)
    ys = np.arange(offset, 120.0, spacing)
    rows = [np.c_[xs if j % 2 == 0 else xs[::-1], np.full(len(xs), y)] for j, y in enumerate(ys)]
    pts = np.vstack(rows)
    bad = shapely.intersects_xy(plan.exclusions.buffer(0.25), pts[:, 0], pts[:, 1])
    return pts[~bad]


def _cse_as_measured(e_cse: NDArray[np.float64], electrode: str, temp_c: float
                     ) -> NDArray[np.float64]:
    """Invert the corrections: the reading an electrode at ``temp_c`` would show."""
    shift = AG_AGCL_SAT_KCL_MINUS_CSE_MV if electrode == "ag_agcl_sat_kcl" else 0.0
    return e_cse + shift - CSE_K_MV_PER_C * (temp_c - CSE_T_REF_C)


def _arrhenius_factor(temp_c: float) -> float:
    """Factor that brings a resistivity at ``temp_c`` to 20 degC [Coyle-Spragg-2019]."""
    inv = 1.0 / (RHO_T_REF_C + 273.15) - 1.0 / (temp_c + 273.15)
    return math.exp(EA_KJ_MOL * 1000.0 / 8.314 * inv)


#: Potential surveys: id, level, file, electrode, temperature (degC), date, area test.
POTENTIAL_SURVEYS = (
    ("L2-hcp-east", "L2", "readings/L2_potential_east.csv", "cse", 24.0, "2026-07-20", "east"),
    ("L2-hcp-west", "L2", "readings/L2_potential_west.csv", "ag_agcl_sat_kcl", 34.0,
     "2026-07-21", "west"),
    ("RF-hcp-south", "RF", "readings/RF_potential_south.csv", "cse", 6.0, "2026-11-03", "south"),
    ("RF-hcp-north", "RF", "readings/RF_potential_north.csv", "cse", 8.0, "2026-11-04", "north"),
)
OTHER_SURVEYS = {  # level: (resistivity concrete temperature degC, date)
    "L2": (26.0, "2026-07-22"),
    "RF": (12.0, "2026-11-05"),
}


def _in_area(area: str, pts: NDArray[np.float64]) -> NDArray[np.bool_]:
    return {"east": pts[:, 0] > 90.0, "west": pts[:, 0] < 90.0,
            "south": pts[:, 1] < 60.0, "north": pts[:, 1] > 60.0}[area]


def _nearest(pts: NDArray[np.float64], x: float, y: float) -> int:
    return int(np.argmin((pts[:, 0] - x) ** 2 + (pts[:, 1] - y) ** 2))


def _write_csv(path: Path, header: Sequence[str], rows: Sequence[Sequence[object]],
               sep: str = ",") -> None:
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, delimiter=sep, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)


def _potentials(out: Path, models: dict[str, LevelModel], seed: int) -> list[Flaw]:
    flaws: list[Flaw] = []
    for sid, lid, rel, el, temp, _, area in POTENTIAL_SURVEYS:
        model = models[lid]
        rng = _rng(seed, lid, 10 + [s[0] for s in POTENTIAL_SURVEYS].index(sid))
        allpts = _grid_points(model.plan, SPACING_FT, 1.0)
        pts = allpts[_in_area(area, allpts)]
        e_cse = model.potential_cse_mv(pts[:, 0], pts[:, 1]) + rng.normal(0.0, NOISE_MV, len(pts))
        meas = _cse_as_measured(e_cse, el, temp)
        prefix = {"L2-hcp-east": "L2E", "L2-hcp-west": "L2W", "RF-hcp-south": "RFS",
                  "RF-hcp-north": "RFN"}[sid]
        ids = [f"{prefix}-{i + 1:04d}" for i in range(len(pts))]
        rows: list[list[Any]] = [[ids[i], pts[i, 0], pts[i, 1], meas[i], ""]
                                    for i in range(len(pts))]
        extra: list[list[Any]] = []
        n = len(pts)
        if sid == "L2-hcp-east":
            i = _nearest(pts, 151.0, 21.0)
            rows[i][3] = -1250.0
            flaws.append(Flaw(rel, ids[i], "implausible value",
                              "-1250 mV as read against the CSE (a mis-keyed reading); outside the "
                              "plausible [-1000, +200] mV vs CSE"))
            i = _nearest(pts, 161.0, 97.0)
            rows[i][3] = float(rows[i][3]) - 190.0
            flaws.append(Flaw(rel, ids[i], "adjacent readings > 150 mV apart",
                              "local spike, 190 mV more negative than the field around it"))
            i = _nearest(pts, 101.0, 9.0)
            rows[i][4] = "control station, start of shift"
            first = round(float(rows[i][3]))
            extra.append([ids[i], pts[i, 0], pts[i, 1], first - 15.0,
                          "control station, end of shift"])
            flaws.append(Flaw(rel, ids[i], "repeat readings at a control station",
                              "same point_id twice, 15 mV apart: fails the 10 mV repeatability, "
                              "passes the 20 mV reproducibility "
                              "[ASTM-C876-15 precision section, from memory]"))
            cx, cy = 120.0, 60.0  # the centre of the column at grid lines x = 120, y = 60
            extra.append([f"{prefix}-{n + 2:04d}", cx, cy,
                          float(_cse_as_measured(model.potential_cse_mv(cx, cy), el, temp)), ""])
            flaws.append(Flaw(rel, f"{prefix}-{n + 2:04d}", "reading inside an exclusion",
                              "at (120.0, 60.0), the centre of a column"))
        elif sid == "L2-hcp-west":
            i = _nearest(pts, 41.0, 61.0)
            extra.append([f"{prefix}-{n + 1:04d}", pts[i, 0], pts[i, 1],
                          float(rows[i][3]) + 3.0, ""])
            flaws.append(Flaw(rel, f"{prefix}-{n + 1:04d}", "duplicate location",
                              f"same x, y as {ids[i]} ({pts[i, 0]:.1f}, {pts[i, 1]:.1f}) "
                              "under another point_id"))
        elif sid == "RF-hcp-south":
            i = _nearest(pts, 33.0, 47.0)
            rows[i][3] = 320.0
            flaws.append(Flaw(rel, ids[i], "implausible value",
                              "+320 mV as read against the CSE (leads swapped for one "
                              "reading); outside the plausible [-1000, +200] mV vs CSE"))
        elif sid == "RF-hcp-north":
            x, y = 93.0, 123.0
            extra.append([f"{prefix}-{n + 1:04d}", x, y,
                          float(_cse_as_measured(model.potential_cse_mv(x, 119.0), el, temp)), ""])
            flaws.append(Flaw(rel, f"{prefix}-{n + 1:04d}", "reading outside the slab",
                              "at (93.0, 123.0), 3 ft north of the slab edge (y = 120 ft)"))
        rows += extra
        path = out / rel
        if sid == "RF-hcp-north":  # another crew's logger: semicolons, decimal commas, volts
            _write_csv(path, ["Station", "GridX", "GridY", "Reading"],
                       [[r[0], f"{r[1]:.1f}".replace(".", ","), f"{r[2]:.1f}".replace(".", ","),
                         f"{round(float(r[3])) / 1000.0:.3f}".replace(".", ",")] for r in rows],
                       sep=";")
        elif sid == "L2-hcp-east":
            _write_csv(path, ["point_id", "x", "y", "value", "note"],
                       [[r[0], f"{r[1]:.1f}", f"{r[2]:.1f}", f"{round(float(r[3])):d}", r[4]]
                        for r in rows])
        else:
            _write_csv(path, ["point_id", "x", "y", "value"],
                       [[r[0], f"{r[1]:.1f}", f"{r[2]:.1f}", f"{round(float(r[3])):d}"]
                        for r in rows])
    return flaws


def _other_readings(out: Path, model: LevelModel, seed: int) -> None:
    lid = model.plan.level_id
    rng = _rng(seed, lid, 20)
    temp, _ = OTHER_SURVEYS[lid]
    # resistivity at every 4th potential station: an 8 ft grid
    pts = _grid_points(model.plan, 4 * SPACING_FT, 1.0)
    a = model.activity(pts[:, 0], pts[:, 1])
    w = model.wetness(pts[:, 0], pts[:, 1])
    rho20 = np.exp(math.log(42.0) - 1.6 * a - 0.35 * w + rng.normal(0.0, 0.18, len(pts)))
    rho = np.clip(rho20 / _arrhenius_factor(temp), 5.0, 80.0)
    _write_csv(out / f"readings/{lid}_resistivity.csv", ["point_id", "x", "y", "value"],
               [[f"{lid}R-{i + 1:03d}", f"{p[0]:.1f}", f"{p[1]:.1f}", f"{v:.1f}"]
                for i, (p, v) in enumerate(zip(pts, rho, strict=True))])
    # corrosion rate (LPR with guard ring) at ~50 stations, half chosen in active areas
    cand = _grid_points(model.plan, SPACING_FT, 1.0)
    act = model.activity(cand[:, 0], cand[:, 1])
    n_total = {"L2": 48, "RF": 56}[lid]
    chosen: list[int] = []
    for pool, limit in ((np.argsort(-act, kind="stable")[: len(cand) // 8], n_total // 2),
                        (rng.permutation(len(cand)), n_total)):
        for i in pool:
            if len(chosen) >= limit:
                break
            if all(math.hypot(*(cand[i] - cand[j])) >= 10.0 for j in chosen):
                chosen.append(int(i))
    cp = cand[chosen]
    ca = model.activity(cp[:, 0], cp[:, 1])
    icorr = np.clip(np.exp(math.log(0.07) + 3.3 * ca + rng.normal(0.0, 0.25, len(cp))), 0.05, 3.0)
    _write_csv(out / f"readings/{lid}_corrosion_rate.csv", ["point_id", "x", "y", "value"],
               [[f"{lid}C-{i + 1:02d}", f"{p[0]:.1f}", f"{p[1]:.1f}", f"{v:.3f}"]
                for i, (p, v) in enumerate(zip(cp, icorr, strict=True))])
    # cover on an 8 ft grid offset 4 ft, as a GeoJSON point layer in the site CRS, inches
    pts = _grid_points(model.plan, 8.0, 4.0)
    mm = np.clip(model.cover_mean_mm(pts[:, 0], pts[:, 1]) + rng.normal(0.0, 8.0, len(pts)),
                 12.0, 90.0)
    e, n = local_to_site(pts[:, 0], pts[:, 1])
    feats = [
        {"type": "Feature", "properties": {"point_id": f"{lid}V-{i + 1:03d}",
                                           "cover_in": round(float(mm[i]) / IN_TO_MM, 2)},
         "geometry": {"type": "Point", "coordinates": [round(float(e[i]), 3),
                                                       round(float(n[i]), 3)]}}
        for i in range(len(pts))
    ]
    lines = ['{"type": "FeatureCollection", "name": "' + f"{lid}_cover" + '",',
             '"crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::26918"}},',
             '"features": [']
    lines += [json.dumps(f) + ("," if i < len(feats) - 1 else "") for i, f in enumerate(feats)]
    lines += ["]}", ""]
    (out / f"readings/{lid}_cover.geojson").write_text("\n".join(lines), encoding="utf-8")


# --------------------------------------------------------------------------------------------
# drawings


def _new_dxf(layers: Sequence[tuple[str, int]]) -> ezdxf.document.Drawing:
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 2  # feet
    doc.header["$MEASUREMENT"] = 0  # imperial
    for name, color in layers:
        doc.layers.add(name, color=color)
    return doc


def _ring(poly: Polygon) -> list[tuple[float, float]]:
    return [(round(x, 2), round(y, 2)) for x, y in list(poly.exterior.coords)[:-1]]


def _save_dxf(doc: ezdxf.document.Drawing, path: Path) -> None:
    """Save; CLASS entries are added in sorted order first (ezdxf adds them from a set)."""
    for dxftype in sorted(doc.entitydb.dxf_types_in_use()):
        doc.classes.add_class(dxftype)
    doc.saveas(path)


def _write_plan(path: Path, plan: Plan) -> None:
    layers = [("SLAB", 7), ("COLUMNS", 8), ("OPENINGS", 4), ("JOINTS", 3), ("DRAINS", 5)]
    if plan.expansion:
        layers.append(("EXP-JOINTS", 6))
    doc = _new_dxf(tuple(layers))
    msp = doc.modelspace()
    msp.add_lwpolyline(_ring(plan.slab), close=True, dxfattribs={"layer": "SLAB"})
    for c in plan.columns:
        msp.add_lwpolyline(_ring(c), close=True, dxfattribs={"layer": "COLUMNS"})
    for o in plan.openings:
        msp.add_lwpolyline(_ring(o), close=True, dxfattribs={"layer": "OPENINGS"})
    for k, (kind, verts) in enumerate(plan.joints):
        lay = "EXP-JOINTS" if k in plan.expansion else "JOINTS"
        if kind == "LINE":
            msp.add_line(verts[0], verts[1], dxfattribs={"layer": lay})
        else:
            msp.add_lwpolyline(verts, close=False, dxfattribs={"layer": lay})
    for x, y in plan.drains:
        msp.add_circle((x, y), 0.5, dxfattribs={"layer": "DRAINS"})
    # the column grid: lettered lines along grid x, numbered along grid y, each labelled by a
    # text at its first end (the grid bubble)
    doc.layers.add("GRID", color=9)
    for label, (a, b) in _column_grid():
        msp.add_line(a, b, dxfattribs={"layer": "GRID"})
        msp.add_text(label, height=2.0, dxfattribs={"layer": "GRID", "insert": a})
    _save_dxf(doc, path)


def _column_grid() -> list[tuple[str, tuple[tuple[float, float], tuple[float, float]]]]:
    """Column lines every 30 ft: A-G along grid x (x = 0 ... 180), 1-5 along y (y = 0 ... 120)."""
    out = [(chr(ord("A") + i), ((30.0 * i, -6.0), (30.0 * i, 126.0))) for i in range(7)]
    out += [(str(j + 1), ((-6.0, 30.0 * j), (186.0, 30.0 * j))) for j in range(5)]
    return out


def _write_sounding(path: Path, delams: list[Polygon], spalls: list[Polygon],
                    circle: Polygon | None) -> None:
    doc = _new_dxf((("DELAM", 1), ("SPALL", 6)))
    msp = doc.modelspace()
    for d in delams:
        msp.add_lwpolyline(_ring(d), close=True, dxfattribs={"layer": "DELAM"})
    if circle is not None:
        c = circle.centroid
        msp.add_circle((round(c.x, 2), round(c.y, 2)), 1.75, dxfattribs={"layer": "DELAM"})
    for s in spalls:
        msp.add_lwpolyline(_ring(s), close=True, dxfattribs={"layer": "SPALL"})
    _save_dxf(doc, path)


# --------------------------------------------------------------------------------------------
# site file and README


def _control_points(plan: Plan, seed: int) -> list[tuple[str, float, float, float, float]]:
    rng = _rng(seed, plan.level_id, 3)
    out = []
    for cid, x, y in plan.control_local:
        e, n = local_to_site(x, y)
        de, dn = rng.normal(0.0, CONTROL_NOISE_M, 2)
        out.append((cid, x, y, round(float(e) + de, 3), round(float(n) + dn, 3)))
    return out


LEVEL_NAMES = {"L2": "Level 2 (supported slab)", "RF": "Roof level (exposed, top of structure)"}


#: Invented unit prices of the demonstration estimate (USD; not market prices): item, its
#: description, unit as the schedule gives it for US units, unit price.
PRICES = (
    ("REP-PD-SURF", "Partial-depth repair, above the bars", "ft2", "65.00"),
    ("REP-PD-BARS", "Partial-depth repair, bars undercut", "ft2", "95.00"),
    ("REP-FD", "Full-depth slab repair", "ft2", "160.00"),
    ("REP-OVH", "Overhead (soffit) repair", "ft2", "140.00"),
    ("REP-VOL", "Repair material supplied, by volume removed", "CY", "450.00"),
    ("SAWCUT", "Perimeter saw cut", "LF", "6.50"),
    ("ANODE", "Embedded galvanic anode", "EA", "45.00"),
    ("JOINT-RPR", "Joint seal or header rebuilt along a repair", "LF", "38.00"),
    ("BAR-REPL", "Reinforcing bar replacement allowance", "LF", "12.00"),
    ("TREAT-ACTIVE", "Surface-applied corrosion inhibitor", "ft2", "4.25"),
    ("PROTECT-LOWCOVER", "Penetrating sealer", "ft2", "3.50"),
)


def _prices_csv() -> str:
    """Return the sample's price list (invented prices), as CSV text."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")  # quotes the descriptions holding a comma
    w.writerow(["item", "description", "unit", "unit_price", "currency"])
    w.writerows([item, descr, unit, price, "USD"] for item, descr, unit, price in PRICES)
    return buf.getvalue()


def _site_toml(seed: int) -> str:
    t = [
        f"# Site file of the invented sample site. Written by {MARKER}",
        "# (seed " + str(seed) + "); do not edit by hand, change the script and run it again.",
        "# Lengths carry their unit; paths are relative to this file.",
        "",
        "[site]",
        'name = "Millbrook Commons Parking Structure"',
        'owner = "Millbrook Borough Parking Authority"',
        'crs = "EPSG:26918"                     # NAD83 / UTM zone 18N, metres',
        'units = "us"                           # report in ft2, LF, ft3',
        'notes = "Invented demonstration site; all data generated by '
        'sample_sites/make_sample_sites.py"',
        "",
        "[run]",
        'cell_size = "1 ft"',
        "# no max_distance: each kind's search radius and mask distance come from its own",
        "# reading spacing and fitted range (docs/methods.md §3.4)",
        "contour_interval_mv = 50",
        'repair_margin = "6 in"',
        "",
        "[quantities]",
        "# invented unit prices (USD) for the demonstration engineer's estimate",
        'price_list = "prices.csv"',
    ]
    for lid in LEVEL_IDS:
        plan = make_plan(lid)
        t += [
            "",
            "[[levels]]",
            f'id = "{lid}"',
            f'name = "{LEVEL_NAMES[lid]}"',
            f'slab = {{ path = "plans/{lid}.dxf", layer = "SLAB" }}',
            f'exclusions = [ {{ path = "plans/{lid}.dxf", layer = "COLUMNS" }}, '
            f'{{ path = "plans/{lid}.dxf", layer = "OPENINGS" }} ]',
            *([f'joints = {{ path = "plans/{lid}.dxf", layer = "JOINTS" }}'] if not plan.expansion
              else ["# construction joints carry the bars; the expansion joint separates two mats",
                    f'joints = [ {{ path = "plans/{lid}.dxf", layer = "JOINTS", '
                    'type = "construction" },',
                    f'           {{ path = "plans/{lid}.dxf", layer = "EXP-JOINTS", '
                    'type = "expansion" } ]']),
            "# column lines A-G and 1-5: repairs are located from them, treatments paid by bay",
            f'column_grid = {{ path = "plans/{lid}.dxf", layer = "GRID" }}',
            f'overlays = [ {{ kind = "delamination", path = "sounding/{lid}.dxf", '
            f'layer = "DELAM" }}, '
            f'{{ kind = "spall", path = "sounding/{lid}.dxf", layer = "SPALL" }} ]',
            "# design cover of the top bars and its placement tolerance for members over",
            "# 8 in [ACI-318-19 §26.6.2.1, from memory]; the low-cover threshold: their difference",
            'specified_cover = "2 in"',
            'cover_tolerance = "0.5 in"',
            "[levels.grid]",
            'unit = "ft"',
            f"spacing = {SPACING_FT:.1f}",
            "# surveyed control marks (local grid ft -> EPSG:26918 m), fitted by least squares",
            "control_points = [",
        ]
        t += [f'  {{ id = "{c}", local = [{x:.1f}, {y:.1f}], site = [{e:.3f}, {n:.3f}] }},'
              for c, x, y, e, n in _control_points(plan, seed)]
        t += ["]"]
    notes = {
        "L2-hcp-east": "east half (x > 90 ft), CSE, mild morning",
        "L2-hcp-west": "west half (x < 90 ft), silver/silver-chloride electrode, hot afternoon",
        "RF-hcp-south": "south part (y < 60 ft), CSE, cold day",
        "RF-hcp-north": "north part (y > 60 ft), CSE, another crew's logger: ';', "
                        "decimal ',', volts",
    }
    for sid, lid, rel, el, temp, date, _ in POTENTIAL_SURVEYS:
        t += ["", "[[surveys]]", f"# {notes[sid]}", f'id = "{sid}"', f'level = "{lid}"',
              'kind = "potential"', f'path = "{rel}"',
              f'unit = "{"V" if sid == "RF-hcp-north" else "mV"}"',
              f'electrode = "{el}"          # cse | ag_agcl_sat_kcl | ag_agcl_3m_kcl | sce | she',
              f"temperature_c = {temp:.1f}", f'date = "{date}"']
        ground = dict(make_plan(lid).ground).get(sid)
        if ground:
            t += ["# where the voltmeter was connected to the bars: one per mat (expansion joint)",
                  "ground_connections = [ " + ", ".join(
                      f'{{ x = {gx:.1f}, y = {gy:.1f}, label = "{gl}" }}' for gx, gy, gl in ground)
                  + " ]"]
        if el != "cse":
            t += ["# ASTM C876 gives a temperature coefficient for the CSE only; the crew's",
                  "# electrode was checked to drift like a CSE, so correct it the same way",
                  f"temperature_coefficient_mv_per_c = {CSE_K_MV_PER_C}"]
        if sid == "RF-hcp-north":
            t += ['separator = ";"', 'decimal = ","', "[surveys.columns]           "
                  "# our column name = the column in this file",
                  'point_id = "Station"', 'x = "GridX"', 'y = "GridY"', 'value = "Reading"']
    for lid in LEVEL_IDS:
        temp, date = OTHER_SURVEYS[lid]
        t += ["", "[[surveys]]", f'id = "{lid}-resistivity"', f'level = "{lid}"',
              'kind = "resistivity"', f'path = "readings/{lid}_resistivity.csv"',
              'unit = "kohm.cm"', f"temperature_c = {temp:.1f}           # concrete temperature",
              f'date = "{date}"',
              "", "[[surveys]]", f'id = "{lid}-corrosion-rate"', f'level = "{lid}"',
              'kind = "corrosion_rate"', f'path = "readings/{lid}_corrosion_rate.csv"',
              'unit = "uA/cm2"', f'date = "{date}"',
              "", "[[surveys]]", f'id = "{lid}-cover"', f'level = "{lid}"', 'kind = "cover"',
              f'path = "readings/{lid}_cover.geojson"', 'coords = "site"', 'unit = "in"',
              f'date = "{date}"', "[surveys.columns]", 'value = "cover_in"']
    return "\n".join(t) + "\n"


README_TEXT = """\
# Millbrook Commons Parking Structure (invented sample site)

Everything here is invented: the structure, the Millbrook Borough Parking Authority, the
survey crew and every reading. The files are written by `{marker}` from a
fixed seed ({seed}); do not edit them by hand.

## Scenario

A three-storey cast-in-place parking garage, 180 ft x 120 ft. Two levels were surveyed:

* **L2**, the elevated supported slab: interior columns at 30 ft, a stair and an elevator
  core, two construction joints (x = 75 ft and x = 135 ft) and six floor drains.
* **RF**, the roof level: exposed to weather and de-icing salt, so more corrosion;
  light-pole bases on the column lines, the stair/elevator core, a ramp opening, a
  construction joint and an expansion joint (x = 120 ft, across the deck through the ramp
  opening: the mats on its two sides are not electrically continuous, so the potential
  surveys name a ground connection on each side), and eight floor drains.

Local survey grid in feet (x east along the long side, y north), potentials every 2 ft.
The grid is tied to EPSG:26918 (NAD83 / UTM zone 18N) by three control points per level
(a rotation of {rotation:g} degrees). The control points carry a few millimetres of survey
noise, so the least-squares fit has small residuals.

## Files

| File | What |
|---|---|
| `site.toml` | the site file |
| `prices.csv` | invented unit prices (USD) for the engineer's estimate, `[quantities]` |
| `plans/L2.dxf`, `plans/RF.dxf` | layers SLAB, COLUMNS, OPENINGS, JOINTS, DRAINS, GRID \
(column lines A-G, 1-5); EXP-JOINTS on RF; feet |
| `sounding/L2.dxf`, `sounding/RF.dxf` | chain-drag sounding [ASTM-D4580-23]: DELAM, SPALL; \
one RF delamination is a CIRCLE |
| `readings/L2_potential_east.csv` | CSE, 24 degC, mV, with a `note` column |
| `readings/L2_potential_west.csv` | Ag/AgCl in saturated KCl, 34 degC, mV as measured |
| `readings/RF_potential_south.csv` | CSE, 6 degC, mV |
| `readings/RF_potential_north.csv` | CSE, 8 degC, volts; `;` separator, decimal comma, \
columns Station;GridX;GridY;Reading |
| `readings/*_resistivity.csv` | Wenner resistivity, kOhm.cm, 8 ft grid, as measured at \
the concrete temperature |
| `readings/*_corrosion_rate.csv` | corrosion rate, uA/cm2 |
| `readings/*_cover.geojson` | cover in inches (`cover_in`), points in EPSG:26918 |

Readings per level:

| Level | potentials | delaminations | spalls | resistivity | corrosion rate | cover |
|---|---|---|---|---|---|---|
{counts}

## How the data were made

A latent corrosion-activity field per level combines a smooth correlated random field,
bumps around the floor drains, bands along the joints and patches of low cover.
Potentials are E = -150 - 380 a mV vs CSE plus 5 mV noise, written as each electrode
would read them. Ag/AgCl (saturated KCl) reads 119 mV more positive than the CSE
[IJCorros-2010 Table 2]. The electrode reads 0.9 mV/degC more negative per degree above
22.2 degC [ASTM-C876-22a §5.1.1.2]. Applying the corrections recovers the field.
Delaminations sit on the most negative potentials.

The Ag/AgCl survey sets `temperature_coefficient_mv_per_c = 0.9` in `site.toml`. ASTM C876
gives a coefficient for the CSE only, so without it only the electrode offset is applied.

## Using it

```
geo-corrosion check sample_sites/millbrook_garage
geo-corrosion run sample_sites/millbrook_garage --out millbrook_out
python sample_sites/make_sample_sites.py          # regenerate this folder
```

## Flaws planted for QA

| File | point_id | Flaw | Detail |
|---|---|---|---|
{flaws}

The implausible readings and the spike also differ from their grid neighbours by more
than 150 mV, so QA may list those pairs as well. None of the flaws stops a run.
"""


def _readme(flaws: list[Flaw], counts: dict[str, dict[str, int]], seed: int) -> str:
    rows = [f"| {lid} | {c['potential']} | {c['delam']} | {c['spall']} | {c['resistivity']} "
            f"| {c['corrosion_rate']} | {c['cover']} |" for lid, c in counts.items()]
    return README_TEXT.format(
        marker=MARKER, seed=seed, rotation=ROTATION_DEG, counts="\n".join(rows),
        flaws="\n".join(f"| `{f.file}` | {f.point_id} | {f.kind} | {f.description} |"
                        for f in flaws))


# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Manifest:
    """What :func:`generate` wrote."""

    out: Path
    files: tuple[Path, ...]
    flaws: tuple[Flaw, ...]
    counts: dict[str, dict[str, int]] = field(default_factory=dict)


def _prepare(out: Path) -> None:
    """Create ``out``; clear our sub-folders, refusing a folder this script did not write."""
    if out.exists() and any(out.iterdir()):
        site = out / "site.toml"
        if not site.is_file() or MARKER not in site.read_text(encoding="utf-8", errors="replace"):
            raise SystemExit(f"{out} is not empty and was not written by {MARKER}; "
                             "give an empty or new folder with --out")
    for sub in ("readings", "plans", "sounding"):
        if (out / sub).exists():
            shutil.rmtree(out / sub)
        (out / sub).mkdir(parents=True)


def generate(out: str | Path = DEFAULT_OUT, *, seed: int = SEED) -> Manifest:
    """Write the sample site into ``out`` and return what was written."""
    out = Path(out)
    _prepare(out)
    # ezdxf's fixed metadata: no timestamps or random GUIDs, so runs are byte-identical
    fixed = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        return _generate(out, seed)
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = fixed


def _generate(out: Path, seed: int) -> Manifest:
    models = build_models(seed)
    flaws = _potentials(out, models, seed)
    counts: dict[str, dict[str, int]] = {}
    for lid, model in models.items():
        _write_plan(out / f"plans/{lid}.dxf", model.plan)
        delams, spalls, circle = _sounding(model, seed)
        _write_sounding(out / f"sounding/{lid}.dxf", delams, spalls, circle)
        _other_readings(out, model, seed)
        n_pot = sum(
            sum(1 for _ in (out / rel).open(encoding="utf-8")) - 1
            for _, lv, rel, *_ in POTENTIAL_SURVEYS if lv == lid
        )
        counts[lid] = {
            "potential": n_pot,
            "delam": len(delams) + (circle is not None),
            "spall": len(spalls),
            **{k: sum(1 for _ in (out / f"readings/{lid}_{k}.csv").open(encoding="utf-8")) - 1
               for k in ("resistivity", "corrosion_rate")},
            "cover": len(json.loads((out / f"readings/{lid}_cover.geojson").read_text(
                encoding="utf-8"))["features"]),
        }
    (out / "site.toml").write_text(_site_toml(seed), encoding="utf-8")
    (out / "prices.csv").write_text(_prices_csv(), encoding="utf-8")
    (out / "README.md").write_text(_readme(flaws, counts, seed), encoding="utf-8")
    files = tuple(sorted(p for p in out.rglob("*") if p.is_file()))
    return Manifest(out, files, tuple(flaws), counts)


def main(argv: Sequence[str] | None = None) -> int:
    """Command line: ``python sample_sites/make_sample_sites.py [--out DIR] [--seed N]``."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=DEFAULT_OUT,
                    help="folder to write the site into (default: sample_sites/millbrook_garage)")
    ap.add_argument("--seed", type=int, default=SEED, help=f"random seed (default {SEED})")
    args = ap.parse_args(argv)
    m = generate(args.out, seed=args.seed)
    for lid, c in m.counts.items():
        sys.stdout.write(f"{lid}: " + ", ".join(f"{k} {v}" for k, v in c.items()) + "\n")
    sys.stdout.write(f"wrote {len(m.files)} files to {m.out}\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
