"""The site file's [project] table, the survey details and the metric defaults (issue 14).

Sources: 3/4 in = 19.05 mm exactly [NIST-SP811-2008 App. B]; the 20 mm saw cut, 10 mm
aggregate, 0.3 m cell and 2 m reach of a metric site are round metric values chosen in
place of the converted US ones (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from geo_corrosion.config import TABLES
from geo_corrosion.errors import SiteFileError
from geo_corrosion.stages.read_site import read_site
from tests.core.conftest import edit

_PROJECT = '''
[project]
number = "2026-041"
revision = "B"
date = 2026-10-02
engineer = "A. Engineer, P.E."
firm = "Example Engineering"
'''


def test_project_table_is_read(site_dir: Path) -> None:
    # common practice, no source: the title block of a report an engineer signs
    edit(site_dir / "site.toml", "[run]\n", _PROJECT + "\n[run]\n")
    p = read_site(site_dir).project
    assert (p.number, p.revision, p.date, p.engineer, p.firm, p.seal_note) == (
        "2026-041", "B", "2026-10-02", "A. Engineer, P.E.", "Example Engineering", None)


def test_project_table_is_optional_and_strict(site_dir: Path) -> None:
    # common practice, no source: absent -> all None; a misspelt key is refused by name
    assert read_site(site_dir).project.number is None
    edit(site_dir / "site.toml", "[run]\n", '[project]\nengineeer = "X"\n\n[run]\n')
    with pytest.raises(SiteFileError, match=r"\[project\]: unknown key 'engineeer'"):
        read_site(site_dir)


def test_survey_details_are_read(site_dir: Path) -> None:
    # common practice, no source: crew, instrument, weather, surface and pre-wetting per survey
    edit(site_dir / "site.toml", 'path = "readings/potential.csv"\n',
         'path = "readings/potential.csv"\ncrew = "J. Smith"\ninstrument = "HCV-1 #42"\n'
         'weather = "overcast"\nsurface_condition = "dry"\nprewetting = "15 min"\n')
    sv = read_site(site_dir).surveys[0]
    assert (sv.crew, sv.instrument, sv.weather, sv.surface_condition, sv.prewetting) == (
        "J. Smith", "HCV-1 #42", "overcast", "dry", "15 min")
    assert read_site(site_dir).surveys[1].crew is None


def test_metric_sites_get_metric_defaults(site_dir: Path) -> None:
    # the US defaults are 3/4 in = 19.05 mm, 9.5 mm (3/8 in), 1 ft = 0.3048 m, 6 ft = 1.8288 m
    # [NIST-SP811-2008 App. B]; a metric site gets round metric values (common practice)
    # (max_distance has no default on either system: each kind derives its own, issue 12)
    text = (site_dir / "site.toml").read_text()
    assert 'cell_size = "1 ft"\n' in text
    (site_dir / "site.toml").write_text(text.replace('cell_size = "1 ft"\n', "")
                                        .replace('max_distance = "6 ft"\n', ""))
    us = read_site(site_dir)
    assert (us.layout.sawcut_depth_mm, us.layout.max_aggregate_mm) == (19.05, 9.5)
    assert (us.run.cell_size_m, us.run.max_distance_m) == (0.3048, None)
    edit(site_dir / "site.toml", 'units = "us"', 'units = "metric"')
    met = read_site(site_dir)
    assert (met.layout.sawcut_depth_mm, met.layout.max_aggregate_mm) == (20.0, 10.0)
    assert (met.run.cell_size_m, met.run.max_distance_m) == (0.3, None)
    # a value given is used as given on either system
    edit(site_dir / "site.toml", "[run]\n", '[run]\nsawcut_depth = "0.75 in"\n')
    assert read_site(site_dir).layout.sawcut_depth_mm == 19.05
    assert TABLES["run"]["sawcut_depth"].metric == "20 mm"
