"""``geo-corrosion quantities``: reprint the bid schedule of an existing run (no recomputation)."""

from __future__ import annotations

from pathlib import Path

import click

from geo_corrosion.cautions import QUANTITIES_CAUTION
from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import resolve_run_dir, run_dir_arg

__all__ = ["quantities"]


@click.command()
@run_dir_arg
@errors_handler
def quantities(run_dir: Path) -> None:
    """Reprint the bid schedule of an existing run (no recomputation).

    RUN_DIR is a run's output folder, or a site folder whose run went to its default
    output folder (SITE/out).
    """
    from geo_corrosion.model.manifest import read_run

    data = read_run(resolve_run_dir(run_dir))
    rows = data.schedule
    if not rows:
        click.echo("no quantities in this run")
        return
    import pandas as pd

    from geo_corrosion.quantities import schedule_table

    sched = pd.DataFrame(list(rows))
    click.echo(schedule_table(sched).iloc[:, :7].to_string(index=False))
    from geo_corrosion.pricing import estimate_text

    if est := estimate_text(sched):
        click.echo("\nengineer's estimate:\n" + est)
    click.echo("\n" + QUANTITIES_CAUTION)
