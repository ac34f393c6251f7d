"""``geo-corrosion qgis-plugin build``: package the QGIS plugin as an installable zip.

The plugin's sources are the folder ``qgis_plugin/geo_corrosion_qgis/`` of the repository
(a thin Processing front end that calls this package by subprocess; it imports no module of
ours). The zip holds that folder at its root, as QGIS's "Install from ZIP" expects, with
``version=`` of its ``metadata.txt`` set to this package's version. Entries are written in
name order with a fixed time stamp, so the same sources give the same bytes.
"""

from __future__ import annotations

import zipfile
from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler

__all__ = ["qgis_plugin", "PLUGIN_DIR_NAME", "plugin_source", "build_plugin_zip"]

#: the plugin's folder name (QGIS's name for the installed plugin)
PLUGIN_DIR_NAME = "geo_corrosion_qgis"
#: time stamp of every zip entry (the earliest a zip can hold), for reproducible bytes
_ZIP_TIME = (1980, 1, 1, 0, 0, 0)
_SKIP_SUFFIXES = (".pyc", ".pyo", ".orig", ".rej", ".swp")


def plugin_source(source: Path | None = None) -> Path:
    """Return the plugin's source folder: ``source``, else the repository's ``qgis_plugin/``.

    Raises
    ------
    click.ClickException
        The folder is missing or holds no ``metadata.txt``.
    """
    if source is None:
        import geo_corrosion

        source = Path(geo_corrosion.__file__).resolve().parent.parent / "qgis_plugin" / \
            PLUGIN_DIR_NAME
        hint = ("the plugin's sources come with a checkout of the geo_corrosion repository "
                "(qgis_plugin/geo_corrosion_qgis); give their folder with --source")
    else:
        hint = f"give the folder holding the plugin's metadata.txt ({PLUGIN_DIR_NAME}/)"
    if not (source / "metadata.txt").is_file() or not (source / "__init__.py").is_file():
        raise click.ClickException(f"{source} holds no QGIS plugin (metadata.txt and "
                                   f"__init__.py); {hint}")
    return source


def _metadata_with_version(text: str, version: str) -> str:
    lines = text.splitlines()
    out = [f"version={version}" if ln.strip().startswith("version=") else ln for ln in lines]
    if not any(ln.startswith("version=") for ln in out):
        out.insert(1, f"version={version}")
    return "\n".join(out) + "\n"


def build_plugin_zip(out_dir: Path, source: Path | None = None) -> Path:
    """Write ``<out_dir>/geo_corrosion_qgis-<version>.zip`` and return its path."""
    from geo_corrosion import __version__
    from geo_corrosion._io import atomic_write

    src = plugin_source(source)
    files = sorted(p for p in src.rglob("*")
                   if p.is_file() and "__pycache__" not in p.parts
                   and not p.name.startswith(".") and p.suffix not in _SKIP_SUFFIXES)

    def write(tmp: Path) -> None:
        with zipfile.ZipFile(tmp, "w", compression=zipfile.ZIP_DEFLATED) as zf:
            for p in files:
                rel = p.relative_to(src).as_posix()
                data = p.read_bytes()
                if rel == "metadata.txt":
                    data = _metadata_with_version(data.decode("utf-8"),
                                                  __version__).encode("utf-8")
                info = zipfile.ZipInfo(f"{PLUGIN_DIR_NAME}/{rel}", date_time=_ZIP_TIME)
                info.compress_type = zipfile.ZIP_DEFLATED
                info.external_attr = 0o644 << 16
                zf.writestr(info, data)

    return atomic_write(Path(out_dir) / f"{PLUGIN_DIR_NAME}-{__version__}.zip", write,
                        what="QGIS plugin zip")


@click.group("qgis-plugin")
def qgis_plugin() -> None:
    """Build the QGIS plugin (a Processing provider that calls geo_corrosion)."""


@qgis_plugin.command("build")
@click.option("--out", "out", type=click.Path(file_okay=False, path_type=Path),
              default=Path("."), show_default=True, help="Folder to write the zip into.")
@click.option("--source", "source", type=click.Path(file_okay=False, path_type=Path),
              default=None, help="The plugin's folder (default: the repository's "
                                 "qgis_plugin/geo_corrosion_qgis).")
@errors_handler
def build(out: Path, source: Path | None) -> None:
    """Package the QGIS plugin as a zip for Plugins > Manage and Install > Install from ZIP."""
    path = build_plugin_zip(out, source)
    click.echo(f"wrote {path}")
    click.echo("install it in QGIS with Plugins > Manage and Install Plugins > Install from "
               "ZIP, then run 'Set the Python of geo_corrosion' from the Processing toolbox")
