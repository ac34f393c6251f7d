"""``geo-corrosion map RUN_DIR`` and ``report RUN_DIR``: rebuild from an output folder.

Both read only the files of an existing run (``run.json``, ``survey.gpkg``, ``rasters/``,
``plots/``); nothing is recomputed.
"""

from __future__ import annotations

from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import resolve_run_dir, run_dir_arg

__all__ = ["map_cmd", "report_cmd"]


@click.command("map")
@run_dir_arg
@errors_handler
def map_cmd(run_dir: Path) -> None:
    """Rebuild webmap.html of an existing run (RUN_DIR) from its files."""
    from geo_corrosion.exporters.built_from import refuse_edited_repairs
    from geo_corrosion.exporters.webmap import write_webmap
    from geo_corrosion.model.manifest import read_run

    folder = resolve_run_dir(run_dir)
    refuse_edited_repairs(folder, read_run(folder), "webmap")
    click.echo(f"wrote {write_webmap(folder)}")


@click.command("report")
@run_dir_arg
@click.option("--no-pdf", is_flag=True, help="Write report.html only.")
@errors_handler
def report_cmd(run_dir: Path, no_pdf: bool) -> None:
    """Rebuild report.html and report.pdf of an existing run (RUN_DIR) from its files."""
    from geo_corrosion.exporters.built_from import refuse_edited_repairs
    from geo_corrosion.exporters.report import write_report
    from geo_corrosion.model.manifest import read_run

    folder = resolve_run_dir(run_dir)
    refuse_edited_repairs(folder, read_run(folder), "report")
    for p in write_report(folder, pdf=not no_pdf):
        click.echo(f"wrote {p}")
    if no_pdf and (folder / "report.pdf").is_file():
        click.echo(f"note: {folder / 'report.pdf'} is from an earlier build and may not match "
                   "report.html; rebuild it without --no-pdf or delete it", err=True)
