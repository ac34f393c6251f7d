"""The site-file schema is declared once (geo_corrosion/config.py) and everything follows it.

The reader's keys and defaults, the repair layout's parameters, run.json's ``parameters``,
the key tables of docs/site-file.md and the ``geo-corrosion init`` template all come from the
one declaration; these tests fail when one of them drifts from it.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import pytest

from geo_corrosion import config
from geo_corrosion.config import TABLES, LayoutParams, RunParams, render_docs, site_template
from geo_corrosion.errors import RepairError, SiteFileError
from geo_corrosion.repair.rounding import default_increment_mm
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.units import parse_length
from tests.core.conftest import edit

ROOT = Path(__file__).resolve().parents[2]
DOCS = ROOT / "docs" / "site-file.md"
TEMPLATE = ROOT / "geo_corrosion" / "templates" / "site.toml"

#: run.json ``parameters`` as written before the schema was declared (the sample site's run
#: in /work/runs/before; docs/file-formats.md §3.5): names, order and units stay.
PARAMETERS = (
    "cell_size_m", "max_distance_m", "contour_interval_mv", "repair_margin_m", "merge_gap_m",
    "min_repair_size_m", "repair_increment_m", "contingency", "n_neighbors", "variogram_model",
    "resistivity_reference_c", "activation_energy_kj_mol", "cse_reference_c",
    "correct_only_outside_band", "calibrate_variance", "interval_method", "realisations",
    "bar_diameter_mm", "max_aggregate_mm",
    "slab_thickness_mm", "sawcut_depth_mm", "axis_angle_deg", "anode_spacing_mm",
    "bar_replacement_share", "bar_spacing_mm", "pay_area", "pay_area_share",
    "min_zone_area_m2", "zone_smoothing_m", "variogram", "kinds", "basemap_url",
    "basemap_attribution",
)


# --------------------------------------------------------------------------- generated files


def test_docs_key_tables_are_generated_from_the_declaration() -> None:
    # common practice, no source: the reference cannot drift from the schema;
    # regenerate with `python -m geo_corrosion.config`
    text = DOCS.read_text(encoding="utf-8")
    assert render_docs(text) == text, "docs/site-file.md is stale: python -m geo_corrosion.config"
    blocks = {m.group("table") for m in config._BLOCK.finditer(text)}
    assert blocks == {"site", "run", "run.variogram.<kind>", "run.kinds.<kind>", "webmap",
                      "drawings", "levels", "layer", "levels.joints", "levels.grid", "surveys",
                      "surveys.ground_connections", "condition.combined",
                      "condition.combined.rules", "quantities"}
    for name in blocks:  # every declared key has its row
        for k in TABLES[name].keys:
            assert f"| `{k.name}` |" in text, (name, k.name)


def test_init_template_is_generated_from_the_declaration() -> None:
    # common practice, no source: `geo-corrosion init` shows each key with its declared default
    text = TEMPLATE.read_text(encoding="utf-8")
    assert site_template() == text, "templates/site.toml is stale: python -m geo_corrosion.config"
    assert '# repair_margin = "150 mm"' in text  # the default, as declared on LayoutParams
    assert '# sawcut_depth = "0.75 in"' in text
    assert not any(line.startswith("#@") or line.startswith("@keys") for line in
                   text.splitlines())


def test_config_main_check_says_nothing_is_stale(capsys: pytest.CaptureFixture[str]) -> None:
    # common practice, no source
    assert config.main(["--check"]) == 0
    assert capsys.readouterr().out == ""
    assert config.main(["--bogus"]) == 2


def test_a_change_of_a_default_makes_the_generated_files_stale(
        monkeypatch: pytest.MonkeyPatch) -> None:
    # common practice, no source: the generated text does follow the declaration
    run = TABLES["run"]
    moved = tuple(dataclasses.replace(k, default="200 mm") if k.name == "repair_margin" else k
                  for k in run.keys)
    monkeypatch.setitem(TABLES, "run", dataclasses.replace(run, keys=moved))
    assert '| `repair_margin` | length string | `"200 mm"` |' in config.schema_markdown("run")
    assert site_template() != TEMPLATE.read_text(encoding="utf-8")


# --------------------------------------------------------------------------- one declaration


def test_writing_every_default_out_gives_the_same_config(site_dir: Path) -> None:
    # common practice, no source: the reader's defaults and the dataclasses' are the same ones
    lines = []
    for k in TABLES["run"].keys:
        if k.default is None or k.type == "tables":
            continue
        v = k.default
        lines.append(f"{k.name} = {json.dumps(v) if not isinstance(v, bool) else str(v).lower()}")
    text = (site_dir / "site.toml").read_text()
    text = text.replace('cell_size = "1 ft"\nmax_distance = "6 ft"\n', "")
    (site_dir / "site.toml").write_text(text)
    bare = read_site(site_dir)
    # the cutting increment's default follows the reporting units (issue 13, common practice)
    assert bare.run == RunParams() and bare.layout == LayoutParams(
        round_increment_mm=default_increment_mm(bare.units))
    edit(site_dir / "site.toml", "[run]\n", "[run]\n" + "\n".join(lines) + "\n")
    full = read_site(site_dir)
    assert full.run == RunParams() and full.layout == LayoutParams(
        round_increment_mm=default_increment_mm(full.units))
    assert len(lines) >= 18


def test_declared_defaults_as_held() -> None:
    # the defaults of before the declaration ([ICRI-310.1R-2008, from memory] and common
    # practice): 150 mm margin, 300 mm gap and size, 3/4 in = 19.05 mm saw cut
    # (1 in = 25.4 mm exactly), 1 ft = 0.3048 m cells; max_distance: none, derived per kind
    # (issue 12: surfaces/density.py)
    lay, run = LayoutParams(), RunParams()
    assert (lay.margin_mm, lay.merge_gap_mm, lay.min_size_mm) == (150.0, 300.0, 300.0)
    assert (lay.sawcut_depth_mm, lay.bar_diameter_mm, lay.max_aggregate_mm) == (19.05, 16.0, 9.5)
    assert (run.cell_size_m, run.max_distance_m, run.zone_smoothing_m) == (0.3048, None, 0.15)
    assert (run.contour_interval_mv, run.contingency, run.n_neighbors) == (50.0, 0.2, 16)
    assert run.min_zone_area_m2 == 0.5 and run.variogram == {} and run.variogram is not \
        RunParams().variogram


def test_a_default_out_of_its_own_range_is_refused_on_import() -> None:
    # common practice, no source: a declaration cannot contradict itself
    with pytest.raises(ValueError, match="declared default"):
        config.key("x", "length", "5000 mm", unit="mm", le=3000)


def test_allowed_keys_are_the_declared_ones(site_dir: Path) -> None:
    # common practice, no source
    edit(site_dir / "site.toml", "[run]\n", "[run]\nrepair_margn = \"6 in\"\n")
    with pytest.raises(SiteFileError) as err:
        read_site(site_dir)
    msg = str(err.value)
    assert "site.toml: [run]: unknown key 'repair_margn'; did you mean 'repair_margin'?" in msg
    assert msg.endswith("Allowed keys: " + ", ".join(TABLES["run"].names))


# --------------------------------------------------------------------------- the layout


def test_layout_is_read_once_and_used_as_read(site_dir: Path,
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    # common practice, no source: one LayoutParams per site file, the planning stage's own
    from geo_corrosion.stages.plan_repairs import planning_params

    built = []
    check = LayoutParams.__post_init__
    monkeypatch.setattr(LayoutParams, "__post_init__", lambda self: built.append(check(self)))
    edit(site_dir / "site.toml", "[run]\n", '[run]\nrepair_margin = "6 in"\n'
                                            'slab_thickness = "7 in"\n')
    cfg = read_site(site_dir)
    assert len(built) == 1
    assert planning_params(cfg).layout is cfg.layout and len(built) == 1
    # 6 in = 152.4 mm, 7 in = 177.8 mm (1 in = 25.4 mm exactly), as the layout gets them
    assert cfg.layout.margin_mm == parse_length("6 in", where="") * 1000.0 == 152.4
    assert cfg.layout.slab_thickness_mm == pytest.approx(177.8, abs=1e-12)


def test_layout_params_are_reexported_and_give_the_library_defaults() -> None:
    # compatibility: geo_corrosion.repair.LayoutParams is the schema's; depth_class's defaults
    # are LayoutParams' ([ICRI-310.1R-2008] 3/4 in saw cut, to confirm; 3/8 in aggregate,
    # common practice)
    import inspect

    from geo_corrosion.repair import LayoutParams as Reexported
    from geo_corrosion.repair import depth_class

    assert Reexported is LayoutParams
    sig = inspect.signature(depth_class).parameters
    lay = LayoutParams()
    assert sig["sawcut_depth_mm"].default == lay.sawcut_depth_mm
    assert sig["max_aggregate_mm"].default == lay.max_aggregate_mm
    assert sig["full_depth_fraction"].default == lay.full_depth_fraction
    assert sig["rule"].default == lay.undercut_rule


@pytest.mark.parametrize(("text", "message", "fld", "held"), [
    ('bar_diameter = "100 mm"', "expected a length of more than 0 and at most 60 mm, got '100 mm'",
     "bar_diameter_mm", 100.0),
    ('max_aggregate = "5 in"', "expected a length of more than 0 and at most 100 mm, got '5 in'",
     "max_aggregate_mm", 127.0),
    ('slab_thickness = "5000 mm"',
     "expected a length of more than 0 and at most 3000 mm, got '5000 mm'", "slab_thickness_mm",
     5000.0),
    ('sawcut_depth = "400 mm"', "expected a length of more than 0 and at most 300 mm, got "
     "'400 mm'", "sawcut_depth_mm", 400.0),
    ("axis_angle_deg = 400", "expected a number from -360 to 360 degrees, got 400",
     "axis_angle_deg", 400.0),
    ('merge_gap = "40 ft"', "expected a length of more than 0 and at most 10000 mm, got '40 ft'",
     "merge_gap_mm", 12192.0),
    ('min_repair_size = "40 ft"',
     "expected a length of more than 0 and at most 10000 mm, got '40 ft'", "min_size_mm",
     12192.0),
    ('repair_margin = "4 m"', "expected a length of more than 0 and at most 3000 mm, got '4 m'",
     "margin_mm", 4000.0),
])
def test_layout_limits_name_the_key_in_the_file_and_the_field_in_the_library(
        site_dir: Path, text: str, message: str, fld: str, held: float) -> None:
    # limits of the repair layout (common practice; as before the declaration), declared
    # once on LayoutParams: the site file's message names the [run] key, the library's the field
    edit(site_dir / "site.toml", "[run]\n", f"[run]\n{text}\n")
    with pytest.raises(SiteFileError) as err:
        read_site(site_dir)
    assert str(err.value).endswith(f"site.toml: [run].{text.split(' =')[0]}: {message}")
    with pytest.raises(RepairError, match=rf"repair layout: {fld} = "):
        LayoutParams(**{fld: held})


# --------------------------------------------------------------------------- run.json


def test_run_json_parameters_keep_their_names_order_and_units(site_dir: Path) -> None:
    # docs/file-formats.md §3.5: lengths in metres, as before (6 in = 0.1524 m exactly)
    edit(site_dir / "site.toml", "[run]\n", '[run]\nrepair_margin = "6 in"\n'
                                            'merge_gap = "12 in"\nbar_diameter = "0.625 in"\n')
    params = read_site(site_dir).parameters()
    assert tuple(params) == PARAMETERS
    assert params["repair_margin_m"] == 0.1524 and params["merge_gap_m"] == 0.3048
    assert params["min_repair_size_m"] == 0.3 and params["bar_diameter_mm"] == 15.875
    assert params["slab_thickness_mm"] is None and params["variogram"] == {}


def test_run_json_lengths_in_metres_are_the_lengths_read() -> None:
    # units.parse_length keeps 12 decimals in metres; the layout holds mm; run.json gives back
    # exactly the metres read (common practice, no source: no drift by the unit change)
    cfg = config.SiteConfig(path=Path("site.toml"), root=Path("."), name="x", crs=None,
                            crs_unit="m", levels=(), surveys=())
    texts = [f"{i / 100:g} in" for i in range(1, 3000)] + [f"{i / 10:g} mm" for i in range(1, 3000)]
    assert "0.33 in" in texts  # 0.008382 m * 1000 / 1000 is not 0.008382 in floating point
    for text in texts:
        m = parse_length(text, where="")
        lay = LayoutParams(margin_mm=m * 1000.0, merge_gap_mm=m * 1000.0)
        params = dataclasses.replace(cfg, layout=lay).parameters()
        assert params["repair_margin_m"] == m and params["merge_gap_m"] == m, text
