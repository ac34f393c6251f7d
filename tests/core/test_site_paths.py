"""Paths and ids of the site file are checked when it is read (issue 11, items 1 and 2).

A path of the site file (plan layers, exclusions, joints, overlays, surveys, instrument files
of ``[surveys.options]``) is resolved, symbolic links followed, and must be a regular file
inside the site folder unless its entry says ``allow_outside = true``.  An id (level, survey,
control point) becomes a file name and a layer name, so it is held to a safe set.  Each bad
input: exit status 1, no traceback, the site file and the dotted key named, nothing written,
no input changed.  The rules are common practice (no standard covers them).
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.config import ID_MAX, MAX_INPUT_BYTES
from geo_corrosion.errors import SiteFileError
from geo_corrosion.stages.read_site import read_site
from tests.core.conftest import edit

SURVEY = 'path = "readings/potential.csv"'
SURVEY_KEY = "[[surveys]][0].path"


def _fails(site_dir: Path, *patterns: str) -> str:
    """Run `check` and `run`: both exit 1 with a message and no traceback; nothing written."""
    runner = CliRunner()
    out = site_dir.parent / "out"
    before = {p: (p.stat().st_mtime_ns, p.stat().st_size)
              for p in site_dir.rglob("*") if p.is_file()}
    for args in (["check", str(site_dir)], ["run", str(site_dir), "--out", str(out)]):
        res = runner.invoke(cli, args)
        assert res.exit_code == 1, res.output
        assert "Traceback" not in res.output
        assert "site.toml" in res.output, res.output  # the file
        for pat in patterns:
            assert pat in res.output, res.output
    assert not out.exists()
    assert not list(site_dir.parent.glob(".out.partial-*"))
    after = {p: (p.stat().st_mtime_ns, p.stat().st_size)
             for p in site_dir.rglob("*") if p.is_file()}
    assert before == after  # no input file changed
    return res.output


# --------------------------------------------------------------------------- paths


def test_survey_symlinked_to_etc_passwd_is_refused(site_dir: Path) -> None:
    link = site_dir / "readings" / "passwd.csv"
    link.symlink_to("/etc/passwd")
    edit(site_dir / "site.toml", SURVEY, 'path = "readings/passwd.csv"')
    out = _fails(site_dir, SURVEY_KEY, "outside the site folder", "symbolic link",
                 "allow_outside = true")
    assert "root:" not in out  # nothing of the file is shown


def test_survey_symlinked_to_another_folder_is_refused(site_dir: Path, tmp_path: Path) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    target = elsewhere / "potential.csv"
    target.write_bytes((site_dir / "readings" / "potential.csv").read_bytes())
    src = site_dir / "readings" / "potential.csv"
    src.unlink()
    src.symlink_to(target)  # the site file is unchanged: only the file is a link now
    _fails(site_dir, SURVEY_KEY, "outside the site folder", str(target))


@pytest.mark.parametrize("old, new, dotted", [
    (SURVEY, 'path = "../../readings/potential.csv"', SURVEY_KEY),
    (SURVEY, 'path = "/etc/passwd"', SURVEY_KEY),
    ('slab = { path = "plans/slab.geojson" }', 'slab = { path = "../site/plans/../../x.geojson" }',
     "[[levels]][0].slab.path"),
    ('exclusions = [ { path = "plans/columns.geojson" } ]',
     'exclusions = [ { path = "../columns.geojson" } ]', "[[levels]][0].exclusions[0].path"),
    ('{ kind = "spall", path = "sounding/sounding.dxf"',
     '{ kind = "spall", path = "../sounding.dxf"', "[[levels]][0].overlays[1].path"),
])
def test_dotdot_paths_are_refused(site_dir: Path, old: str, new: str, dotted: str) -> None:
    # a file that exists there, so that only the guard can refuse it
    for name in ("x.geojson", "columns.geojson", "sounding.dxf"):
        (site_dir.parent / name).write_text("{}")
    edit(site_dir / "site.toml", old, new)
    _fails(site_dir, dotted, "outside the site folder")


def test_joints_and_instrument_files_outside_are_refused(site_dir: Path, tmp_path: Path) -> None:
    (tmp_path / "j.geojson").write_text("{}")
    edit(site_dir / "site.toml", '[levels.grid]',
         'joints = { path = "../j.geojson" }\n[levels.grid]')
    _fails(site_dir, "[[levels]][0].joints.path", "outside the site folder")


@pytest.mark.parametrize("option", ["transients", "sweeps"])
def test_instrument_file_outside_is_refused(site_dir: Path, tmp_path: Path, option: str) -> None:
    (tmp_path / "pulses.csv").write_text("location_id,t_s,e_mv,i_ua\n")
    (site_dir / "readings" / "G.csv").write_text("point_id,x,y\nT1,5,5\n")
    with (site_dir / "site.toml").open("a") as fh:
        fh.write('\n[[surveys]]\nid = "G"\nlevel = "D1"\nkind = "corrosion_rate"\n'
                 'path = "readings/G.csv"\nunit = "uA/cm2"\n[surveys.options]\n'
                 f'{option} = "../pulses.csv"\npolarized_area_cm2 = 26.0\nb_mv = "active"\n')
    _fails(site_dir, f"[[surveys]][2].options.{option}", "outside the site folder")


def test_a_loop_of_symbolic_links_is_refused(site_dir: Path) -> None:
    (site_dir / "readings" / "a.csv").symlink_to(site_dir / "readings" / "b.csv")
    (site_dir / "readings" / "b.csv").symlink_to(site_dir / "readings" / "a.csv")
    edit(site_dir / "site.toml", SURVEY, 'path = "readings/a.csv"')
    _fails(site_dir, SURVEY_KEY, "cannot be resolved")


def test_a_directory_is_refused(site_dir: Path) -> None:
    (site_dir / "readings" / "folder.csv").mkdir()
    edit(site_dir / "site.toml", SURVEY, 'path = "readings/folder.csv"')
    _fails(site_dir, SURVEY_KEY, "is a folder", "not a regular file")


def test_a_fifo_is_refused_without_opening_it(site_dir: Path) -> None:
    os.mkfifo(site_dir / "readings" / "pipe.csv")  # opening it to read would block
    edit(site_dir / "site.toml", SURVEY, 'path = "readings/pipe.csv"')
    _fails(site_dir, SURVEY_KEY, "named pipe", "not a regular file")


def test_a_device_is_refused_even_with_allow_outside(site_dir: Path) -> None:
    edit(site_dir / "site.toml", SURVEY, 'path = "/dev/null"\nallow_outside = true')
    _fails(site_dir, SURVEY_KEY, "a device", "not a regular file")


def test_a_file_too_large_is_refused(site_dir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # a sparse file just over the documented limit (2 GiB) takes no disk space
    big = site_dir / "readings" / "big.csv"
    with big.open("wb") as fh:
        fh.truncate(MAX_INPUT_BYTES + 1)
    edit(site_dir / "site.toml", SURVEY, 'path = "readings/big.csv"')
    with pytest.raises(SiteFileError, match=r"\[\[surveys\]\]\[0\]\.path: 'readings/big.csv' is "
                       r"2\.0 GiB, more than the 2 GiB"):
        read_site(site_dir)


def test_allow_outside_accepts_an_outside_regular_file(site_dir: Path, tmp_path: Path) -> None:
    shared = tmp_path / "server" / "plans"
    shared.mkdir(parents=True)
    (site_dir / "plans" / "slab.geojson").rename(shared / "slab.geojson")
    edit(site_dir / "site.toml", 'slab = { path = "plans/slab.geojson" }',
         'slab = { path = "../server/plans/slab.geojson", allow_outside = true }')
    cfg = read_site(site_dir)
    assert cfg.levels[0].slab.path == shared / "slab.geojson"
    assert cfg.levels[0].slab.allow_outside and not cfg.levels[0].exclusions[0].allow_outside
    res = CliRunner().invoke(cli, ["check", str(site_dir)])
    assert res.exit_code == 0, res.output
    # the same entry without the key is refused
    edit(site_dir / "site.toml", ", allow_outside = true }", " }")
    _fails(site_dir, "[[levels]][0].slab.path", "outside the site folder")


def test_a_symlink_inside_the_site_folder_is_accepted(site_dir: Path) -> None:
    (site_dir / "readings" / "same.csv").symlink_to(site_dir / "readings" / "potential.csv")
    edit(site_dir / "site.toml", SURVEY, 'path = "readings/same.csv"')
    assert read_site(site_dir).surveys[0].path == site_dir / "readings" / "potential.csv"


def _slab_as_shapefile(site_dir: Path) -> Path:
    """Write the slab outline as plans/slab.shp (+ .shx, .dbf, .prj, .cpg) and use it."""
    import pyogrio

    shp = site_dir / "plans" / "slab.shp"
    pyogrio.write_dataframe(pyogrio.read_dataframe(site_dir / "plans" / "slab.geojson"), shp)
    edit(site_dir / "site.toml", 'slab = { path = "plans/slab.geojson" }',
         'slab = { path = "plans/slab.shp" }')
    return shp


@pytest.mark.parametrize("companion", [".shx", ".dbf", ".prj", ".cpg"])
def test_shapefile_companion_linked_outside_is_refused(site_dir: Path, tmp_path: Path,
                                                       companion: str) -> None:
    # the contract of issue 11: GDAL reads x.shx, x.dbf, ... beside x.shp, so each is checked
    # as the .shp itself; a link out of the site folder is refused naming the key
    shp = _slab_as_shapefile(site_dir)
    assert read_site(site_dir).levels[0].slab.path == shp  # the plain shapefile is read
    res = CliRunner().invoke(cli, ["check", str(site_dir)])
    assert res.exit_code == 0, res.output
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    part = shp.with_suffix(companion)
    part.rename(elsewhere / part.name)
    part.symlink_to(elsewhere / part.name)
    _fails(site_dir, "[[levels]][0].slab.path", f"the companion slab{companion} of slab.shp",
           f"'plans/slab{companion}' is outside the site folder", "symbolic link",
           str(elsewhere / part.name))


def test_shapefile_companion_that_is_a_folder_is_refused(site_dir: Path) -> None:
    # the contract of issue 11: as for the .shp, a companion must be a regular file
    shp = _slab_as_shapefile(site_dir)
    shp.with_suffix(".dbf").unlink()
    shp.with_suffix(".DBF").mkdir()
    _fails(site_dir, "[[levels]][0].slab.path", "the companion slab.DBF of slab.shp",
           "'plans/slab.DBF' is a folder")


# --------------------------------------------------------------------------- ids


@pytest.mark.parametrize("bad", ["../../../escaped", "L2/sub", "a b", "a" * (ID_MAX + 1),
                                 "-L1", "L.1", "L1\\x"])
def test_bad_level_ids_are_refused(site_dir: Path, bad: str) -> None:
    text = (site_dir / "site.toml").read_text().replace('"D1"', f'"{bad}"'.replace("\\", "\\\\"))
    (site_dir / "site.toml").write_text(text)
    _fails(site_dir, "[[levels]][0].id", repr(bad), "letters, digits, _ and -",
           f"at most {ID_MAX} characters")


def test_bad_survey_and_control_point_ids_are_refused(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'id = "D1-hcp"', 'id = "D1/hcp"')
    _fails(site_dir, "[[surveys]][0].id", "'D1/hcp'", "letters, digits, _ and -")
    edit(site_dir / "site.toml", 'id = "D1/hcp"', 'id = "D1-hcp"')
    edit(site_dir / "site.toml", 'id = "CP1"', 'id = "CP 1"')
    _fails(site_dir, "[[levels]][0].grid.control_points[0].id", "'CP 1'")


def test_ids_of_the_allowed_set_are_accepted(site_dir: Path) -> None:
    good = "L2_east-" + "x" * (ID_MAX - 8)  # exactly 40 characters
    text = (site_dir / "site.toml").read_text().replace('"D1"', f'"{good}"')
    (site_dir / "site.toml").write_text(text)
    assert read_site(site_dir).levels[0].id == good


@pytest.mark.parametrize("bad", ["../../escaped", "Repair zone A", "a" * (ID_MAX + 1), "-x",
                                 "z.1"])
def test_bad_zone_names_and_class_keys_are_refused(site_dir: Path, bad: str) -> None:
    # the contract of issue 11: a zone's name becomes a DXF layer (GC-ZONE-<name>) and
    # GeoPackage values, a class key class layers and legend entries: the id set of levels
    p = site_dir / "site.toml"
    text = p.read_text()
    p.write_text(text + f'\n[[zoning]]\nrule = "repair"\n[[zoning]]\nrule = "no_action"\n'
                        f'name = "{bad}"\n')
    _fails(site_dir, "[[zoning]][1].name", repr(bad), "letters, digits, _ and -",
           f"at most {ID_MAX} characters")
    p.write_text(text + '\n[condition.combined]\ndefault = "ok"\n'
                        f'classes = [ {{ key = "{bad}" }}, {{ key = "ok" }} ]\n'
                        '[[condition.combined.rules]]\nname = "r"\npotential = "high"\n'
                        f'class = "{bad}"\n')
    _fails(site_dir, "[condition.combined].classes[0].key", repr(bad), "letters, digits, _ and -")


def test_zone_names_and_class_keys_of_the_allowed_set_are_accepted(site_dir: Path) -> None:
    good = "Zone_A-" + "x" * (ID_MAX - 7)  # exactly 40 characters
    p = site_dir / "site.toml"
    p.write_text(p.read_text() + f'\n[[zoning]]\nrule = "repair"\nname = "{good}"\n'
                 '[condition.combined]\ndefault = "ok"\n'
                 f'classes = [ {{ key = "{good}" }}, {{ key = "ok" }} ]\n'
                 '[[condition.combined.rules]]\nname = "r"\npotential = "high"\n'
                 f'class = "{good}"\n')
    cfg = read_site(site_dir)
    assert cfg.zoning[0] == ("repair", {"name": good})
    assert cfg.combined_rules is not None
    assert cfg.combined_rules["classes"][0]["key"] == good
