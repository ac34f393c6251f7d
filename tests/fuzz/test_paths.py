"""Reading outside the site folder: every path of the site file is refused (issue 11, item 1).

Each path goes through ``_toml.site_path``: resolved with links followed, a regular file inside
the site folder (unless ``allow_outside = true``), below ``config.MAX_INPUT_BYTES``.  The cases
put a bad path in each kind of path key: a survey, the slab, an exclusion, an overlay.
Contract: ``tests/fuzz/contract.py``.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path

import pytest

from geo_corrosion.config import MAX_INPUT_BYTES
from tests.fuzz.contract import Case, edit, holds

GROUP = "paths"

#: The path keys of the synthetic site: (text in site.toml, its path, dotted key in messages).
KEYS = {
    "survey": ('path = "readings/potential.csv"', "readings/potential.csv",
               "[[surveys]][0].path"),
    "slab": ('path = "plans/slab.geojson"', "plans/slab.geojson", "[[levels]][0].slab.path"),
    "exclusion": ('path = "plans/columns.geojson"', "plans/columns.geojson",
                  "[[levels]][0].exclusions[0].path"),
    "overlay": ('kind = "spall", path = "sounding/sounding.dxf"', "sounding/sounding.dxf",
                "[[levels]][0].overlays[1].path"),
}


def _set(site: Path, which: str, new_path: str, extra: str = "") -> None:
    text, old, _ = KEYS[which]
    edit(site / "site.toml", text, text.replace(old, new_path) + extra)


def _link_inside(target: Callable[[Path], str]) -> Callable[[Path, str], None]:
    """A symbolic link inside the site folder to ``target(site)``, named by the key."""
    def breaks(site: Path, which: str) -> None:
        link = site / "readings" / f"link-{which}"
        link.symlink_to(target(site))
        _set(site, which, f"readings/link-{which}")
    return breaks


def _outside_copy(site: Path) -> str:
    dst = site.parent / "elsewhere.csv"
    dst.write_bytes((site / "readings" / "potential.csv").read_bytes())
    return str(dst)


def _dotdot(site: Path, which: str) -> None:
    (site.parent / "x.file").write_text("point_id,x,y,value\n")  # exists: only the guard refuses
    _set(site, which, "../x.file")


def _deep_dotdot(site: Path, which: str) -> None:
    _set(site, which, "readings/../../../../../../etc/passwd")


def _absolute(site: Path, which: str) -> None:
    _set(site, which, "/etc/passwd")


def _absolute_copy(site: Path, which: str) -> None:
    _set(site, which, _outside_copy(site))


def _directory(site: Path, which: str) -> None:
    (site / "readings" / "folder").mkdir()
    _set(site, which, "readings/folder")


def _site_folder_itself(site: Path, which: str) -> None:
    _set(site, which, ".")


def _dev_zero(site: Path, which: str) -> None:
    _set(site, which, "/dev/zero", ", allow_outside = true" if which != "survey"
         else "\nallow_outside = true")


def _fifo(site: Path, which: str) -> None:
    os.mkfifo(site / "readings" / "pipe")  # opening it to read would block
    _set(site, which, "readings/pipe")


def _huge(site: Path, which: str) -> None:
    big = site / "readings" / "big.file"
    with big.open("wb") as fh:  # sparse: takes no disk space
        fh.truncate(MAX_INPUT_BYTES + 1)
    _set(site, which, "readings/big.file")


def _missing(site: Path, which: str) -> None:
    _set(site, which, "readings/nothing-here.csv")


BREAKS: dict[str, tuple[Callable[[Path, str], None], tuple[str, ...]]] = {
    "link-etc-passwd": (_link_inside(lambda s: "/etc/passwd"), ("outside the site folder",)),
    "link-outside-file": (_link_inside(_outside_copy), ("outside the site folder",)),
    "link-dev-zero": (_link_inside(lambda s: "/dev/zero"), ("outside the site folder",)),
    "link-loop": (_link_inside(lambda s: str(s / "readings" / "link-loop")), ("not found",)),
    "dotdot": (_dotdot, ("outside the site folder",)),
    "deep-dotdot": (_deep_dotdot, ("outside the site folder",)),
    "absolute-etc-passwd": (_absolute, ("outside the site folder",)),
    "absolute-outside-copy": (_absolute_copy, ("outside the site folder",)),
    "directory": (_directory, ("not a regular file",)),
    "site-folder-itself": (_site_folder_itself, ("not a regular file",)),
    "dev-zero-allowed-outside": (_dev_zero, ("a device", "not a regular file")),
    "fifo": (_fifo, ("named pipe",)),
    "sparse-2GiB": (_huge, ("GiB",)),
    "missing": (_missing, ("nothing-here.csv",)),
}

CASES = []
for _which, (_, _, _dotted) in KEYS.items():
    for _name, (_fn, _frags) in BREAKS.items():
        # a missing file is named by its entry (``[[surveys]][0]: survey file not found``)
        _key = _dotted.removesuffix(".path") if _name in ("missing", "link-loop") else _dotted
        CASES.append(Case(f"{_which}-{_name}", (lambda s, f=_fn, w=_which: f(s, w)),
                          ("site.toml", _key, *_frags)))


def _shapefile_companion(ext: str, target: str) -> Case:
    """The slab as a Shapefile whose companion ``slab<ext>`` links outside the site folder."""
    def breaks(site: Path) -> None:
        import geopandas as gpd

        gpd.read_file(site / "plans" / "slab.geojson").to_file(site / "plans" / "slab.shp")
        comp = site / "plans" / f"slab{ext}"
        if target == "copy":
            out = site.parent / f"outside{ext}"
            comp.rename(out)
        else:
            comp.unlink()
            out = Path(target)
        comp.symlink_to(out)
        edit(site / "site.toml", "plans/slab.geojson", "plans/slab.shp")
    return Case(f"shapefile-{ext[1:]}-links-to-{Path(target).name}", breaks,
                ("site.toml", "[[levels]][0].slab.path", f"slab{ext}", "outside the site folder"))


CASES += [_shapefile_companion(ext, t) for ext in (".dbf", ".shx", ".prj")
          for t in ("copy", "/etc/passwd")]


@pytest.mark.parametrize("case", [c.param() for c in CASES])
def test_path_outside_or_unreadable_is_refused(site: Path, case: Case) -> None:
    """Every bad path in every kind of path key: refused naming file and key (issue 11)."""
    case.breaks(site)
    # `run` goes through the same pipeline.check chain as `check`: tried for two of the keys
    out = holds(site, case, GROUP, run=case.id.startswith(("survey-", "slab-")))
    assert "root:" not in out  # nothing of /etc/passwd is shown (common practice)
