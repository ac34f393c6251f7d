"""DEVELOPERS.md's example plugin kind, chloride at bar depth, through `geo-corrosion run`.

The kind is defined here, outside the package, and registered through an in-memory
:class:`importlib.metadata.EntryPoint` of the group ``geo_corrosion.measurements``, as an
installed plugin would be.  It declares its own unit table (``%`` and ``ppm``), its own
class set and threshold, and no built-in code names it: the run gives it a kriged surface,
classes, a probability map, GeoPackage layers and web-map layers like a built-in kind.
The chloride data are invented (a smooth synthetic field), for the fixture only.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from importlib.metadata import EntryPoint
from pathlib import Path
from typing import Any, ClassVar

import numpy as np
import pyogrio
import pytest
import rasterio

from geo_corrosion.condition.classes import ClassSet
from geo_corrosion.errors import GeoCorrosionError, PluginError, UnitError
from geo_corrosion.measurements import MEASUREMENTS, MeasurementKind, Role, Threshold, get_kind

#: Sources of the chloride limits (from memory; common practice): 0.2 % acid-soluble chloride
#: by mass of cement is the corrosion threshold ACI 222R states as common practice; 0.4 % by
#: mass of cement is the critical chloride content most often quoted in European practice
#: (Angst et al. 2009, "Critical chloride content in reinforced concrete - a review", Cement
#: and Concrete Research 39, from memory).
CHLORIDE_SOURCE = ("0.2 %: ACI 222R corrosion threshold, acid-soluble chloride by mass of "
                   "cement; 0.4 %: critical chloride content often quoted (Angst et al. 2009); "
                   "from memory, common practice")

CHLORIDE_CLASSES = ClassSet(
    name="chloride_at_bar",
    variable="chloride_pct_cement",
    unit="% by mass of cement",
    source=CHLORIDE_SOURCE,
    scope="field",
    edges=(0.2, 0.4),
    labels=("below the threshold (< 0.2 %)", "above the threshold (0.2-0.4 %)",
            "high (> 0.4 %)"),
    keys=("below", "above", "high"),
    colors=("#009E73", "#F0E442", "#D55E00"),
    inclusive="a value equal to an edge takes the class above it (our choice)",
    on_edge=("above", "above"),
    higher_is_worse=True,
)


class ChlorideAtBar(MeasurementKind):
    """A firm's own kind: chloride content at bar depth, % by mass of cement."""

    name: ClassVar[str] = "chloride"
    label: ClassVar[str] = "Chloride at bar depth (% by mass of cement)"
    value_column: ClassVar[str] = "chloride_pct_cement"
    canonical_unit: ClassVar[str] = "%"
    # 1 % = 10 000 ppm (parts per million by mass), so 1 ppm = 1e-4 % (hand computation)
    units: ClassVar[dict[str, float]] = {"%": 1.0, "ppm": 1e-4}
    plausible_range: ClassVar[tuple[float, float]] = (0.0, 5.0)  # common practice, no source
    contour_interval: ClassVar[float] = 0.1
    class_set: ClassVar[ClassSet] = CHLORIDE_CLASSES
    threshold: ClassVar[Threshold] = Threshold(
        0.2, "above", "chloride above the 0.2 % corrosion threshold", CHLORIDE_SOURCE)
    severity_direction: ClassVar[int] = 1
    class_layer_titles: ClassVar[tuple[str, str]] = (
        "chloride classes", "chloride at bar depth (% by mass of cement)")


class PotentialToo(MeasurementKind):
    """A second kind that claims the potential role (to be refused beside the built-in)."""

    name: ClassVar[str] = "macrocell"
    value_column: ClassVar[str] = "macrocell_mv"
    canonical_unit: ClassVar[str] = "mV"
    accepted_units: ClassVar[tuple[str, ...]] = ("mV",)
    roles: ClassVar[frozenset[Role]] = frozenset({Role.POTENTIAL})


SPACING_FT = 4.0


def _chloride_csv(path: Path) -> np.ndarray:
    """Write chloride readings on a 4 ft grid of the synthetic deck; return the values (%)."""
    xs = np.arange(2.0, 60.0, SPACING_FT)
    ys = np.arange(2.0, 40.0, SPACING_FT)
    x, y = (a.ravel() for a in np.meshgrid(xs, ys))
    # the synthetic site's hot spot near (15, 10) ft (geo_corrosion.testing), more chloride there
    act = np.clip(np.exp(-((x - 15) ** 2 + (y - 10) ** 2) / 60.0) + 0.15 * np.sin(x / 9.0), 0, 1)
    rng = np.random.default_rng(7)
    cl = np.round(np.clip(0.08 + 0.6 * act + rng.normal(0, 0.02, x.size), 0.01, None), 3)
    lines = ["point_id,x,y,value"] + [f"C{i},{a:.2f},{b:.2f},{v:.3f}"
                                      for i, (a, b, v) in enumerate(zip(x, y, cl, strict=True))]
    path.write_text("\n".join(lines) + "\n")
    return cl


CHLORIDE_SURVEY = '''
[[surveys]]
id = "D1-cl"
level = "D1"
kind = "chloride"
path = "readings/chloride.csv"
unit = "%"
'''


@pytest.fixture(scope="module")
def plugin_registered() -> Iterator[None]:
    """ChlorideAtBar registered as an installed plugin: an entry point of the group."""
    ep = EntryPoint("chloride", f"{__name__}:ChlorideAtBar", "geo_corrosion.measurements")
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(MEASUREMENTS, "_entry_points", lambda: [ep])
        MEASUREMENTS.refresh()
        try:
            yield
        finally:
            mp.undo()
            MEASUREMENTS.refresh()


@pytest.fixture(scope="module")
def chloride_run(plugin_registered: None, tmp_path_factory: pytest.TempPathFactory
                 ) -> tuple[Path, np.ndarray]:
    """Run the synthetic site with a chloride survey through ``geo-corrosion run``."""
    from click.testing import CliRunner

    from geo_corrosion.cli.main import cli
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("chloride")
    site = make_synthetic_site(root / "site")
    values = _chloride_csv(root / "site" / "readings" / "chloride.csv")
    site.write_text(site.read_text() + CHLORIDE_SURVEY)
    out = root / "out"
    res = CliRunner().invoke(cli, ["run", str(site.parent), "--out", str(out), "--quiet"])
    assert res.exit_code == 0, res.output
    return out, values


def test_the_kind_comes_from_the_entry_point(plugin_registered: None) -> None:
    # common practice: a plugin is found through its entry point, as DEVELOPERS.md describes
    kind = get_kind("chloride")
    assert type(kind) is ChlorideAtBar
    assert "chloride" in MEASUREMENTS.names()


def test_units_declared_by_the_kind() -> None:
    kind = ChlorideAtBar()
    # 2000 ppm = 2000 / 10 000 % = 0.2 % (hand computation); spellings as users write them
    np.testing.assert_allclose(kind.to_canonical([2000.0, 500.0], "ppm"), [0.2, 0.05])
    np.testing.assert_allclose(kind.to_canonical([0.35], " % "), [0.35])
    np.testing.assert_allclose(kind.to_canonical([4000.0], "PPM"), [0.4])
    # the message lists what is accepted, and everything it lists is accepted (common
    # practice: a message never contradicts itself; it used to say "unknown unit '%';
    # expected one of: %")
    with pytest.raises(UnitError) as err:
        kind.to_canonical([1.0], "mg/kg", where="readings/chloride.csv: ")
    msg = str(err.value)
    assert msg.startswith("readings/chloride.csv: ") and "chloride readings" in msg
    listed = msg.split("expected one of: ")[1].split(" (")[0].split(", ")
    assert listed == ["%", "ppm"]
    for u in listed:
        kind.to_canonical([1.0], u)
    # a unit the package knows but that is not the kind's is refused as such
    with pytest.raises(UnitError, match="'mV' is not accepted here; expected one of: %, ppm"):
        kind.to_canonical([1.0], "mV")


def test_a_bad_unit_factor_is_the_plugins_fault() -> None:
    class Bad(ChlorideAtBar):
        units: ClassVar[dict[str, float]] = {"%": 1.0, "ppm": -1e-4}

    # common practice: a factor must be positive, and the message names the kind and unit
    with pytest.raises(PluginError, match=r"'chloride': units\['ppm'\] = -0.0001"):
        Bad().to_canonical([1.0], "ppm")


def test_kriged_surface_of_the_plugin_kind(chloride_run: tuple[Path, np.ndarray]) -> None:
    out, values = chloride_run
    df = pyogrio.read_dataframe(out / "survey.gpkg", layer="readings_chloride")
    # the readings layer holds the values as read ("%" has the factor 1)
    np.testing.assert_allclose(np.sort(df["chloride_pct_cement"]), np.sort(values))
    with rasterio.open(out / "rasters" / "D1_chloride.tif") as src:
        assert src.crs.to_epsg() == 26918 and src.descriptions[0] == "chloride_pct_cement"
        got = np.array([v[0] for v in src.sample(zip(df.geometry.x, df.geometry.y,
                                                     strict=True))])
        ok = got != src.nodata
        assert ok.mean() > 0.9
        # the kriged surface at the readings is close to them: well within the 0.2 % class
        # width (common practice; the field is smooth with 0.02 % noise)
        assert np.median(np.abs(got[ok] - df["chloride_pct_cement"].to_numpy()[ok])) < 0.05
    assert (out / "rasters" / "D1_chloride_probability.tif").is_file()


def test_classes_and_threshold_in_run_json(chloride_run: tuple[Path, np.ndarray]) -> None:
    out, values = chloride_run
    man = json.loads((out / "run.json").read_text())
    lv = man["levels"]["D1"]
    cl = lv["kinds"]["chloride"]
    assert cl["readings"] == len(values) == 150 and cl["unit"] == "%"
    # hand computation: the class shares of the readings follow the class edges 0.2 and 0.4
    shares = cl["class_share_of_readings"]
    want = {"below the threshold (< 0.2 %)": np.mean(values < 0.2),
            "above the threshold (0.2-0.4 %)": np.mean((values >= 0.2) & (values < 0.4)),
            "high (> 0.4 %)": np.mean(values >= 0.4)}
    assert shares == pytest.approx({k: v for k, v in want.items() if v > 0})
    # the class areas cover the mapped area (the classes partition the surface)
    areas = {c["class"]: c["area_m2"] for c in cl["class_areas"]}
    assert set(areas) <= set(CHLORIDE_CLASSES.labels) and len(areas) >= 2
    assert sum(areas.values()) == pytest.approx(cl["surface"]["mapped_area_m2"], rel=0.02)
    assert cl["surface"]["contour_interval"] == 0.1  # the kind's own interval
    beyond = lv["condition"]["chloride_area_beyond_threshold"]
    assert beyond["threshold"] == 0.2 and beyond["unit"] == "%"
    assert beyond["source"] == CHLORIDE_SOURCE
    assert 0 < beyond["expected_m2"] < beyond["mapped_area_m2"]
    # the built-in kinds still come first, in their order (the report lists them so)
    keys = [k for k in lv["condition"] if k.endswith("_area_beyond_threshold")]
    assert keys == ["potential_area_beyond_threshold", "resistivity_area_beyond_threshold",
                    "chloride_area_beyond_threshold"]


def test_qa_applies_no_potential_rule_to_the_plugin(plugin_registered: None,
                                                    tmp_path: Path) -> None:
    from geo_corrosion.pipeline import check
    from geo_corrosion.testing import make_synthetic_site

    site = make_synthetic_site(tmp_path / "site")
    readings = tmp_path / "site" / "readings"
    _chloride_csv(readings / "chloride.csv")
    # one point read twice in each survey: a repeat (ASTM C876 precision for potentials)
    for name, row in (("chloride.csv", "C0,2.00,2.00,0.150"), ("potential.csv", None)):
        lines = (readings / name).read_text().splitlines()
        lines.append(row or lines[1].rsplit(",", 1)[0] + ",-200.0")
        (readings / name).write_text("\n".join(lines) + "\n")
    site.write_text(site.read_text() + CHLORIDE_SURVEY)
    _opened, flags = check(site)
    rep = flags[flags["rule"].isin(["QA-REPEAT", "QA-REPEATABILITY"])]
    by = {sid: " ".join(rep.loc[rep["survey_id"] == sid, "message"])
          for sid in set(rep["survey_id"])}
    # the potential kind's grid_rules: its repeats are held to the 10 mV repeatability (ASTM
    # C876 precision, from memory); the plugin kind has no tolerance in mV
    assert "mV repeatability" in by["D1-hcp"]
    assert "no repeatability tolerance for this kind" in by["D1-cl"]
    assert "mV" not in by["D1-cl"]
    cl_rules = set(flags.loc[flags["survey_id"] == "D1-cl", "rule"])
    assert not cl_rules & {"QA-ADJ-150", "QA-ADJ-SPIKE", "QA-DRIFT", "QA-OPEN-LEAD",
                           "QA-REVERSED-LEADS", "QA-TEMP-RANGE"}


def test_geopackage_class_layer(chloride_run: tuple[Path, np.ndarray]) -> None:
    out, _values = chloride_run
    cls = pyogrio.read_dataframe(out / "survey.gpkg", layer="D1_classes_chloride")
    assert set(cls["class_set"]) == {"chloride_at_bar"}
    assert set(cls["class"]) <= set(CHLORIDE_CLASSES.labels)
    assert set(cls["color"]) <= set(CHLORIDE_CLASSES.colors)
    assert (cls.geometry.area > 0).all()


def test_webmap_lists_the_plugin_layers(chloride_run: tuple[Path, np.ndarray]) -> None:
    out, _values = chloride_run
    text = (out / "webmap.html").read_text()
    # the layer control's labels: the kind's name, and its own class-layer titles
    for label in ('"Chloride surface"', '"Chloride contours"', '"Chloride classes"',
                  '"Chloride readings"', '"Chloride probability"',
                  "chloride at bar depth (% by mass of cement)"):
        assert label in text, label
    # the built-in potential surface is still the one shown when the map opens
    assert '"key":"surface_potential","label":"Half-cell potential surface",' \
           '"group":"maps","on":true' in text


def test_two_kinds_in_one_role_are_refused(plugin_registered: None, tmp_path: Path) -> None:
    from geo_corrosion.pipeline import check
    from geo_corrosion.testing import make_synthetic_site

    site = make_synthetic_site(tmp_path / "site")
    p = tmp_path / "site" / "readings" / "potential.csv"
    (tmp_path / "site" / "readings" / "macrocell.csv").write_text(p.read_text())
    site.write_text(site.read_text() + CHLORIDE_SURVEY.replace("D1-cl", "D1-mc")
                    .replace("chloride", "macrocell").replace('"%"', '"mV"'))
    # common practice: which surface would stand for the potential? the site file must say
    with MEASUREMENTS.registered("macrocell", PotentialToo), \
            pytest.raises(GeoCorrosionError, match="'potential', 'macrocell' all play the role "
                                                   "'potential'"):
        check(site)


@pytest.mark.browser
def test_webmap_layer_control_in_a_browser(chloride_run: tuple[Path, np.ndarray],
                                          browser: Any) -> None:
    from tests.webmap.conftest import open_page

    out, _values = chloride_run
    page, log = open_page(browser, out / "webmap.html")
    labels = page.eval_on_selector_all(".leaflet-control-layers label",
                                       "els => els.map(e => e.textContent.trim())")
    # the layer control lists the plugin's layers like a built-in's (Leaflet renders them)
    for want in ("Test deck", "Chloride surface", "Chloride classes", "Chloride readings"):
        assert want in labels, (want, labels)
    # nothing fetched and no script error on the page (common practice: the map is offline)
    assert not log.blocked and not [e for e in log.errors if "error" in e], log
