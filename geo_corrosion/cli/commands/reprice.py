"""``geo-corrosion reprice RUN_DIR``: re-price a run after its repair outlines were edited."""

from __future__ import annotations

from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import (
    jobs_opt,
    progress_printer,
    quiet_opt,
    resolve_run_dir,
    run_dir_arg,
)

__all__ = ["reprice"]


@click.command("reprice")
@run_dir_arg
@click.option("--from", "source", type=click.Path(path_type=Path), default=None,
              help="The edited file: a GeoPackage (default RUN_DIR/survey.gpkg) or a level's "
                   "drawing sheet, drawings/<level>_repairs.dxf (relative to RUN_DIR).")
@click.option("--site", "site", type=click.Path(path_type=Path), default=None,
              help="The site file or folder (default: the one recorded in run.json).")
@jobs_opt
@quiet_opt
@errors_handler
def reprice(run_dir: Path, source: Path | None, site: Path | None, jobs: int | None,
            quiet: bool) -> None:
    """Re-price a run (RUN_DIR) from repair outlines edited in its survey.gpkg or a sheet.

    Edit the <level>_repairs layers in a GIS (keep each feature's repair_id), or the
    GC-REPAIR-* outlines of drawings/<level>_repairs.dxf in CAD, then run this: the edits
    are checked, and the schedule, drawing sheets, report, web map and run.json are rebuilt
    together.
    """
    from geo_corrosion.pipeline import reprice as reprice_run

    folder = resolve_run_dir(run_dir)
    result = reprice_run(folder, source=source, site=site, progress=progress_printer(quiet),
                         jobs=jobs)
    if not result.edits:
        click.echo("no repair outline was edited; the run was rebuilt as laid out")
    for e in result.edits:
        gone = " (deleted)" if e["new_area_m2"] == 0 else ""
        click.echo(f"{e['repair_id']}: {e['old_area_m2']:.2f} m2 -> {e['new_area_m2']:.2f} m2"
                   f"{gone}")
    click.echo(f"wrote {folder}")
