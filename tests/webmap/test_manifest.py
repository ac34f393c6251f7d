"""run.json read back into the typed manifest: round trip, refusals naming the JSON path, docs.

The expected JSON is always the run's own ``run.json``: :meth:`Manifest.to_json` must give back
exactly what the run wrote (keys, order and values), since the web map and the report are
rebuilt from it (common practice for a versioned file format: read back what you write).
The synthetic run is metric (one level, no ``mapped_area_ft2``), the sample site's is US (two
levels, every kind, life summaries; marked ``slow``).
"""

from __future__ import annotations

import copy
import json
import re
import typing
from dataclasses import fields, is_dataclass
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.config import RunParams
from geo_corrosion.errors import ExportError
from geo_corrosion.model.manifest import (
    ConditionRecord,
    Manifest,
    SiteThresholdUnavailable,
    read_run,
)

REPO = Path(__file__).resolve().parents[2]
RUNS = [pytest.param("xss_run", id="synthetic-metric"),
        pytest.param("sample_run", id="sample-us", marks=pytest.mark.slow)]
BEYOND = "_area_beyond_threshold"


@pytest.fixture(params=RUNS)
def any_run(request: pytest.FixtureRequest) -> Path:
    """Each run of tests/webmap/conftest.py in turn."""
    return request.getfixturevalue(request.param)


def _data(run_dir: Path) -> dict[str, Any]:
    return json.loads((run_dir / "run.json").read_text(encoding="utf-8"))


def test_round_trip_gives_back_the_file(any_run: Path) -> None:
    """read_run, then to_json: the text of run.json again; from_json of it: the same manifest."""
    text = (any_run / "run.json").read_text(encoding="utf-8")
    man = read_run(any_run)
    # character for character: the run writes json.dumps(..., indent=2) of its manifest
    assert json.dumps(man.to_json(), indent=2) == text
    assert Manifest.from_json(man.to_json()) == man


def test_typed_values_are_the_files(any_run: Path) -> None:
    """Spot checks: each attribute holds the value under its key in the run's run.json."""
    data = _data(any_run)
    man = Manifest.from_json(data)
    assert man.site.report_units == data["site"]["report_units"]
    assert man.parameters.cell_size_m == data["parameters"]["cell_size_m"]
    unit = "ft2" if data["site"]["report_units"] == "us" else "m2"
    for lid, lv in data["levels"].items():
        rec = man.levels[lid]
        assert rec.name == lv["name"] and rec.repairs == lv["repairs"]
        assert rec.georeference.origin_site == tuple(lv["georeference"]["origin_site"])
        for kind, kv in lv["kinds"].items():
            k = rec.kinds[kind]
            assert (k.readings, k.unit, dict(k.statistics)) == (
                kv["readings"], kv["unit"], kv["statistics"])
            s = k.surface
            assert s is not None  # every kind of these runs is mapped
            assert s.area_unit == unit
            assert s.mapped_area_report == kv["surface"][f"mapped_area_{unit}"]
            assert s.variogram.model.range == kv["surface"]["variogram"]["model"]["range"]
            assert s.cross_validation.rmse == kv["surface"]["cross_validation"]["rmse"]
            assert [(c.class_name, c.area_report) for c in k.class_areas or ()] == [
                (c["class"], c[f"area_{unit}"]) for c in kv.get("class_areas", [])]
        cond = rec.condition
        assert cond is not None
        assert list(cond.beyond) == [k[: -len(BEYOND)] for k in lv["condition"]
                                     if k.endswith(BEYOND)]
        assert [z.area_m2 for z in rec.zones] == [z["area_m2"] for z in lv["zones"]]
    assert [r.quantity for r in man.schedule] == [r["quantity"] for r in data["schedule"]]
    assert man.cautions == tuple(data["cautions"])


def _reshape(data: dict[str, Any], case: str) -> None:
    """Give the level's record a shape the run writes in cases these runs do not meet."""
    lv = next(iter(data["levels"].values()))
    kind = lv["kinds"]["resistivity"]
    if case in ("too few readings", "kriging failed"):  # map_level: shown as points
        for k in ("surface", "neighbourhood", "class_areas"):
            kind.pop(k, None)
        kind["representation"] = "points"
    if case == "too few readings":  # map_level: "surface": null, then the reason
        kind["surface"] = None
        kind["surface_skipped"] = "12 usable readings; a kriged surface needs at least 30"
        kind["points"] = {"points": 12, "class_counts": [
            {"class": "high", "readings": 12, "share_of_readings": 1.0,
             "thiessen_area_m2": 200.0}]}
    elif case == "kriging failed":  # an older shape: only the reason, no "surface" key
        kind["surface_skipped"] = "level D1: a grid too large to compute"
        kind["points"] = {"points": 200}
    elif case == "no site threshold":  # assess_level: the mixture fit's error
        assert "site_threshold" in lv["condition"]
        lv["condition"]["site_threshold"] = {"not_available": "the mixture did not converge"}
    elif case == "no surface at all":  # the manifest: condition null
        lv["condition"] = None
    elif case == "cover only":  # assess_level with only a cover surface adds nothing
        lv["condition"] = {}


@pytest.mark.parametrize("case", ["too few readings", "kriging failed", "no site threshold",
                                  "no surface at all", "cover only"])
def test_round_trip_of_the_other_shapes_a_run_writes(xss_run: Path, case: str) -> None:
    """Kinds without a surface, a failed mixture fit, levels without condition statements."""
    data = _data(xss_run)
    _reshape(data, case)
    man = Manifest.from_json(data)
    assert json.dumps(man.to_json(), indent=2) == json.dumps(data, indent=2)
    assert Manifest.from_json(man.to_json()) == man
    lv = next(iter(man.levels.values()))
    if case in ("too few readings", "kriging failed"):
        k = lv.kinds["resistivity"]
        assert k.surface is None and k.class_areas is None
        assert k.skipped == data["levels"]["D1"]["kinds"]["resistivity"]["surface_skipped"]
    elif case == "no site threshold":
        assert lv.condition is not None
        assert lv.condition.site_threshold == SiteThresholdUnavailable(
            "the mixture did not converge")
    elif case == "cover only":
        assert lv.condition == ConditionRecord()
    else:
        assert lv.condition is None


#: (JSON path, new value or None to delete the key, what the message says)
_DELETE = object()
BREAKS = [
    (("levels", "D1", "kinds", "potential", "surface", "cell_size"), _DELETE,
     "levels.D1.kinds.potential.surface.cell_size: the key is missing"),
    (("levels", "D1", "condition", "potential" + BEYOND, "lower_m2"), _DELETE,
     "levels.D1.condition.potential_area_beyond_threshold.lower_m2: the key is missing"),
    (("schedule", 0, "quantity"), "12.5", "schedule[0].quantity: expected a number, "
                                          "found the text '12.5'"),
    (("levels", "D1", "kinds", "potential", "class_areas", 0, "area_m2"), None,
     "levels.D1.kinds.potential.class_areas[0].area_m2: expected a number, found null"),
    (("qa", "runnable"), 1, "qa.runnable: expected true or false, found the number 1"),
    (("levels", "D1", "repairs"), 2.5, "levels.D1.repairs: expected a whole number"),
    (("levels", "D1", "zones"), {}, "levels.D1.zones: expected a list, found an object"),
    (("site", "colour"), "red", "site.colour: unknown key"),
    (("geo_corrosion_run",), 2, "geo_corrosion_run: format version 2"),
]


def _set(data: Any, path: tuple[Any, ...], value: Any) -> None:
    *parent, last = path
    for p in parent:
        data = data[p]
    if value is _DELETE:
        del data[last]
    else:
        data[last] = value


@pytest.mark.parametrize(("path", "value", "says"), BREAKS,
                         ids=[".".join(map(str, b[0])) for b in BREAKS])
def test_a_bad_key_is_refused_naming_file_and_json_path(xss_run: Path, tmp_path: Path,
                                                        path: tuple[Any, ...], value: Any,
                                                        says: str) -> None:
    """A missing key, a key of the wrong type, an unknown key, another format version."""
    data = copy.deepcopy(_data(xss_run))
    _set(data, path, value)
    (tmp_path / "run.json").write_text(json.dumps(data, indent=2), encoding="utf-8")
    with pytest.raises(ExportError) as err:
        read_run(tmp_path)
    msg = str(err.value)
    # project rule: the message names the file and the key, and says what to do
    assert msg.startswith(f"{tmp_path / 'run.json'}: ")
    assert says in msg
    assert "re-run `geo-corrosion run`" in msg


@pytest.mark.parametrize("command", ["quantities", "map", "report"])
def test_commands_name_the_bad_key_without_a_traceback(xss_run: Path, tmp_path: Path,
                                                       command: str) -> None:
    """The CLI prints the message of read_run (project rule: never a traceback)."""
    data = _data(xss_run)
    del data["schedule"][0]["unit"]
    (tmp_path / "run.json").write_text(json.dumps(data), encoding="utf-8")
    res = CliRunner().invoke(cli, [command, str(tmp_path)])
    assert res.exit_code == 1
    assert "run.json: schedule[0].unit: the key is missing" in res.output
    assert "Traceback" not in res.output and "internal error" not in res.output


# --------------------------------------------------------------------------- the documentation

#: JSON keys of fields that ``_read`` derives from keys named after a value.
DERIVED_KEYS = {"beyond": "<kind>_area_beyond_threshold", "site_threshold": "site_threshold",
                "mapped_area_report": "mapped_area_ft2", "area_report": "area_ft2"}


def _json_keys(tp: Any, out: set[str]) -> set[str]:
    """Every JSON key of a part of the manifest and of the parts below it."""
    origin = typing.get_origin(tp)
    if origin is not None:  # X | None, tuple[X, ...], Mapping[str, X]
        for a in typing.get_args(tp):
            if a is not Ellipsis:
                _json_keys(a, out)
        return out
    if not (isinstance(tp, type) and is_dataclass(tp)) or tp is RunParams:
        return out  # the parameters are documented as "the [run] values"
    hints = typing.get_type_hints(tp)
    for f in fields(tp):
        if f.name in DERIVED_KEYS:
            out.add(DERIVED_KEYS[f.name])
        elif not f.metadata.get("derived"):
            out.add(str(f.metadata.get("key", f.name)))
        _json_keys(hints[f.name], out)
    return out


def test_every_key_is_in_the_file_formats_doc() -> None:
    """docs/file-formats.md §3.5 names every key of run.json (project rule: outputs documented)."""
    doc = (REPO / "docs" / "file-formats.md").read_text(encoding="utf-8")
    section = doc[doc.index("### 3.5 `run.json`"):doc.index("### 3.6")]
    keys = _json_keys(Manifest, set())
    assert {"geo_corrosion_run", "cell_size", "not_available", "class"} <= keys  # the walk works
    missing = sorted(k for k in keys
                     if not re.search(rf"[`.…]{re.escape(k)}(\[\])?[`.]", section))
    assert not missing, f"run.json keys not in docs/file-formats.md §3.5: {missing}"
