"""The plugin in a real QGIS: installed from its zip, run through ``qgis_process.bin``.

Every run of the plugin is compared with a plain ``geo-corrosion run`` of the same site by
``.ci/compare_runs.py`` (time stamps and versions masked), the project's own comparison.
"""

from __future__ import annotations

import json
import math
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from geo_corrosion.testing import make_synthetic_site
from tests.qgis_plugin.conftest import REPO, QgisProfile, cli, pyqgis

ALGORITHMS = ("checksite", "runsite", "repricerun", "rebuilddocuments", "setpython")
SAMPLE = REPO / "sample_sites" / "millbrook_garage"
#: the international foot, 0.3048 m exactly (NIST SP 811, B.8): 1 ft2 = 0.09290304 m2
M2_PER_FT2 = 0.3048 ** 2


def compare_runs(before: Path, after: Path) -> subprocess.CompletedProcess[str]:
    """Compare two run folders with the project's own comparison (.ci/compare_runs.py)."""
    return subprocess.run([sys.executable, str(REPO / ".ci" / "compare_runs.py"), str(before),
                           str(after)], capture_output=True, text=True)


def no_traceback(r: subprocess.CompletedProcess[str]) -> None:
    """Fail when Python's traceback reached the user."""
    assert "Traceback" not in r.stdout + r.stderr, r.stdout + r.stderr


@pytest.fixture(scope="module")
def synthetic_site(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A one-level synthetic site (geo_corrosion.testing)."""
    return make_synthetic_site(tmp_path_factory.mktemp("site")).parent


@pytest.fixture(scope="module")
def qgis_run(qgis_profile: QgisProfile, synthetic_site: Path, empty_project: Path,
             tmp_path_factory: pytest.TempPathFactory
             ) -> tuple[subprocess.CompletedProcess[str], dict[str, Any], Path]:
    """Run the synthetic site through the plugin's ``runsite``, loading into a project."""
    out = tmp_path_factory.mktemp("qgis_run") / "out"
    r, js = qgis_profile.run("runsite", project=empty_project, SITE=synthetic_site,
                             OUTPUT=out)
    assert r.returncode == 0, r.stderr
    return r, js, out


def test_algorithms_are_listed(qgis_profile: QgisProfile) -> None:
    """QGIS lists the provider's algorithms once the plugin is enabled (qgis_process list)."""
    r = qgis_profile.process("list")
    assert r.returncode == 0, r.stderr
    for alg in ALGORITHMS:
        assert f"geocorrosion:{alg}" in r.stdout
    assert "Deck corrosion survey" in r.stdout  # the provider's name


def test_every_parameter_has_help(qgis_profile: QgisProfile) -> None:
    """Each algorithm has typed parameters and help text (qgis_process help)."""
    for alg in ALGORITHMS:
        r = qgis_profile.process("--json", "help", f"geocorrosion:{alg}")
        assert r.returncode == 0, r.stderr
        params = json.loads(r.stdout)["parameters"]
        assert params and all(p["type"]["id"] != "string" for p in params.values()), alg
        text = qgis_profile.process("help", f"geocorrosion:{alg}").stdout
        described = text.split("Description", 1)[1].split("Arguments", 1)[0]
        for p in params.values():  # the help text explains every parameter by its name
            assert f"<b>{p['description'].split(' (')[0]}" in described, (alg, p["name"])


def test_set_python_stores_the_setting(qgis_profile: QgisProfile) -> None:
    """The Python is stored under our own QgsSettings key, geo_corrosion/python_path."""
    r, js = qgis_profile.run("setpython", PYTHON=sys.executable)
    assert r.returncode == 0, r.stderr
    assert js["results"]["PYTHON_PATH"] == sys.executable
    ini = qgis_profile.xdg / "QGIS/QGIS3/profiles/default/QGIS/QGIS3.ini"
    text = ini.read_text()
    assert "[geo_corrosion]" in text and "python_path=" in text


def test_check_a_site(qgis_profile: QgisProfile, synthetic_site: Path) -> None:
    """``checksite`` says the synthetic site can be run, as ``geo-corrosion check`` does."""
    r, js = qgis_profile.run("checksite", SITE=synthetic_site)
    assert r.returncode == 0, r.stderr
    assert js["results"]["RUNNABLE"] is True
    assert js["results"]["QA_SUMMARY"] == "the site can be run"
    assert any("reading plans" in m for m in js["log"]["info"])  # progress reached the log


def test_broken_site_is_a_clean_processing_error(qgis_profile: QgisProfile,
                                                  synthetic_site: Path,
                                                  tmp_path: Path) -> None:
    """Our message (file and what is wrong) as a Processing error, never a traceback."""
    broken = tmp_path / "broken"
    shutil.copytree(synthetic_site, broken)
    with open(broken / "site.toml", "a", encoding="utf-8") as f:
        f.write("\n[run\n")
    mine = cli("check", str(broken), check=False)
    message = mine.stderr.strip().splitlines()[-1].removeprefix("Error: ")
    for alg, params in (("checksite", {"SITE": broken}),
                        ("runsite", {"SITE": broken, "OUTPUT": tmp_path / "out"})):
        r, _js = qgis_profile.run(alg, **params)
        assert r.returncode != 0
        # qgis_process reports the QgsProcessingException's text as a line of its own
        assert message in [ln.removeprefix("ERROR:\t") for ln in r.stderr.splitlines()]
        no_traceback(r)
    assert not (tmp_path / "out").exists()


def test_run_equals_a_plain_run(qgis_run: tuple[Any, dict[str, Any], Path],
                                synthetic_site: Path, tmp_path: Path) -> None:
    """The plugin's run equals ``geo-corrosion run`` of the same site (.ci/compare_runs.py)."""
    r, js, out = qgis_run
    res = js["results"]
    for key in ("GEOPACKAGE", "SCHEDULE", "REPORT", "WEBMAP"):
        assert res[key] and Path(res[key]).is_file(), key
    assert res["QA_SUMMARY"] == "no QA flags"
    assert res["LOADED_LAYERS"] > 10  # the run's layers went into the project
    assert any("kriging" in m for m in js["log"]["info"])
    plain = tmp_path / "plain"
    cli("run", str(synthetic_site), "--out", str(plain))
    cmp = compare_runs(plain, out)
    assert cmp.returncode == 0, cmp.stdout + cmp.stderr
    no_traceback(r)


EDIT = """
from pathlib import Path
from qgis.core import QgsVectorLayer
from qgis.PyQt.QtGui import QTransform
path, layer_name, factor = sys.argv[1], sys.argv[2], float(sys.argv[3])
lyr = QgsVectorLayer(f"{path}|layername={layer_name}", "repairs", "ogr")
assert lyr.isValid(), path
f = next(lyr.getFeatures())
g = f.geometry()
c = g.centroid().asPoint()
t = QTransform().translate(c.x(), c.y()).scale(factor, factor).translate(-c.x(), -c.y())
old = g.area()
g.transform(t)
lyr.startEditing()
assert lyr.changeGeometry(f.id(), g)
assert lyr.commitChanges(), lyr.commitErrors()
print(f["repair_id"], f["bid_item"], old, g.area())
"""


def test_reprice_after_an_edit_in_pyqgis(qgis_profile: QgisProfile,
                                         qgis_run: tuple[Any, dict[str, Any], Path],
                                         empty_project: Path, tmp_path: Path) -> None:
    """Enlarge one repair with PyQGIS, re-price through the plugin, read the new schedule."""
    _r, _js, out = qgis_run
    run = tmp_path / "run"
    shutil.copytree(out, run)
    level = next(iter(json.loads((run / "run.json").read_text())["levels"]))
    before = json.loads((run / "run.json").read_text())["schedule"]
    factor = 1.2
    e = pyqgis(EDIT, str(run / "survey.gpkg"), f"{level}_repairs", str(factor))
    assert e.returncode == 0, e.stderr
    rid, item, old_m2, new_m2 = e.stdout.split()[-4:]
    # hand computation: a similarity scaled by k about its centroid has k^2 times the area
    assert float(new_m2) == pytest.approx(float(old_m2) * factor**2, rel=1e-9)
    r, js = qgis_profile.run("repricerun", project=empty_project, RUN=run,
                             REPAIRS=f"{run / 'survey.gpkg'}|layername={level}_repairs")
    assert r.returncode == 0, r.stderr
    no_traceback(r)
    assert js["results"]["CHANGES"].startswith(f"{rid}: ")
    assert js["results"]["LOADED_LAYERS"] > 10

    def base(schedule: list[dict[str, Any]]) -> dict[str, Any]:
        return next(s for s in schedule if s["level_id"] == level and s["item"] == item
                    and s["line"] == "base")

    old, new = base(before), base(json.loads((run / "run.json").read_text())["schedule"])
    assert old["unit"] == "ft2"  # the synthetic site reports in US units
    added_ft2 = (float(new_m2) - float(old_m2)) / M2_PER_FT2  # hand computation from the edit
    assert new["quantity_unrounded"] == pytest.approx(old["quantity_unrounded"] + added_ft2,
                                                      rel=1e-6)
    import csv

    with open(run / "quantities.csv", newline="", encoding="utf-8") as fh:
        row = next(x for x in csv.DictReader(fh) if x["level_id"] == level
                   and x["item"] == item and x["line"] == "base")
    # quantities.roll_up: the bid quantity is rounded up to whole ft2 (common practice)
    assert float(row["quantity"]) == math.ceil(old["quantity_unrounded"] + added_ft2 - 1e-9)
    assert float(row["quantity"]) > old["quantity"]


def test_rebuild_documents(qgis_profile: QgisProfile,
                           qgis_run: tuple[Any, dict[str, Any], Path], tmp_path: Path) -> None:
    """``rebuilddocuments`` rewrites the web map and the report.html of an unedited run."""
    _r, _js, out = qgis_run
    run = tmp_path / "run"
    shutil.copytree(out, run)
    (run / "webmap.html").unlink()
    r, js = qgis_profile.run("rebuilddocuments", RUN=run, DOCUMENTS=0, PDF=0)
    assert r.returncode == 0, r.stderr
    assert (run / "webmap.html").is_file() and js["results"]["REPORT"].endswith("report.html")


@pytest.mark.slow
def test_sample_site_through_qgis_equals_a_plain_run(qgis_profile: QgisProfile,
                                                     tmp_path: Path) -> None:
    """The sample site, checked and run through the plugin, equals a plain run (~2 min each)."""
    r, js = qgis_profile.run("checksite", SITE=SAMPLE)
    assert r.returncode == 0, r.stderr
    r, js = qgis_profile.run("runsite", SITE=SAMPLE, OUTPUT=tmp_path / "qgis", LOAD=0)
    assert r.returncode == 0, r.stderr
    no_traceback(r)
    cli("run", str(SAMPLE), "--out", str(tmp_path / "plain"))
    cmp = compare_runs(tmp_path / "plain", tmp_path / "qgis")
    assert cmp.returncode == 0, cmp.stdout + cmp.stderr
