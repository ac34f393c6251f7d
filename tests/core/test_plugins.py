"""The plugin registries: built-ins, entry points, broken plugins and name clashes."""

from __future__ import annotations

from importlib.metadata import EntryPoint
from typing import ClassVar

import numpy as np
import pytest

from geo_corrosion.errors import PluginConflictWarning, PluginError
from geo_corrosion.exporters import EXPORTERS
from geo_corrosion.measurements import BUILTIN_KINDS, MEASUREMENTS, MeasurementKind, get_kind
from geo_corrosion.plugins import BrokenPlugin, Registry


class ChlorideAtBar(MeasurementKind):
    """A firm's own kind: chloride content at bar depth (example plugin)."""

    name: ClassVar[str] = "chloride"
    value_column: ClassVar[str] = "chloride_pct_cement"
    canonical_unit: ClassVar[str] = "mm"  # placeholder dimension for the test
    accepted_units: ClassVar[tuple[str, ...]] = ("mm",)


def test_all_builtins_registered() -> None:
    assert set(MEASUREMENTS.names()) >= {"potential", "resistivity", "corrosion_rate", "cover"}
    assert set(EXPORTERS.names()) >= {"geopackage", "geotiff", "quantities", "drawings", "webmap"}
    for k in BUILTIN_KINDS.values():
        kind = k()
        lo, hi = kind.plausible_range
        assert lo < hi and kind.value_column.endswith(("_mv", "_kohm_cm", "_ua_cm2", "_mm"))


def test_entry_point_plugin_and_broken_plugin() -> None:
    reg: Registry[object] = Registry("test.group", "measurement kind", lambda: dict(BUILTIN_KINDS))
    eps = [
        EntryPoint("chloride", "tests.core.test_plugins:ChlorideAtBar", "test.group"),
        EntryPoint("broken", "no_such_module_xyz:Thing", "test.group"),
    ]
    found = reg.load(eps)
    assert found["chloride"].name == "chloride"  # loaded through the entry point
    assert isinstance(found["broken"], BrokenPlugin)
    assert "no_such_module_xyz" in found["broken"].error
    with pytest.raises(PluginError, match="failed to load"):
        found["broken"]()


def test_name_clash_builtin_wins() -> None:
    reg: Registry[object] = Registry("test.group", "measurement kind", lambda: dict(BUILTIN_KINDS))
    eps = [EntryPoint("potential", "tests.core.test_plugins:ChlorideAtBar", "test.group")]
    with pytest.warns(PluginConflictWarning, match="built-in is used"):
        found = reg.load(eps)
    assert found["potential"] is BUILTIN_KINDS["potential"]


def test_unknown_name_and_class_pass_through() -> None:
    with pytest.raises(PluginError, match="unknown measurement kind 'chlorid'"):
        get_kind("chlorid")
    assert isinstance(get_kind(ChlorideAtBar), ChlorideAtBar)
    with MEASUREMENTS.registered("chloride", ChlorideAtBar):
        assert get_kind("chloride").to_canonical(np.array([1.0]), "mm")[0] == 1.0
    with pytest.raises(PluginError, match="unknown measurement kind 'chloride'"):
        get_kind("chloride")  # gone again after the block


def test_import_is_light() -> None:
    # importing the package must not pull in the heavy exporters' libraries (STYLE §8)
    import subprocess
    import sys

    code = ("import sys, geo_corrosion, geo_corrosion.config, geo_corrosion.units;"
            "print(','.join(m for m in ('folium','ezdxf','openpyxl','matplotlib')"
            " if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
