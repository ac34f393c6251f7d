"""``geo-corrosion run``: run the whole job on SITE and write the output folder."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import (
    jobs_opt,
    out_opt,
    overwrite_opt,
    progress_printer,
    quiet_opt,
    site_arg,
)

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["run", "qa_line"]


@click.command()
@site_arg
@out_opt
@overwrite_opt
@jobs_opt
@quiet_opt
@errors_handler
def run(site: Path, out: Path | None, overwrite: bool, jobs: int | None, quiet: bool) -> None:
    """Run the whole job on SITE and write the output folder."""
    from geo_corrosion.pipeline import run as run_site
    from geo_corrosion.stages.read_site import read_site

    cfg = read_site(site)
    out = out or (cfg.root / "out")
    result = run_site(cfg, out, overwrite=overwrite, progress=progress_printer(quiet), jobs=jobs)
    click.echo(f"wrote {out}")
    for f in sorted(result.files) + ["run.json"]:
        click.echo(f"  {f}")
    if len(result.schedule):
        from geo_corrosion.quantities import schedule_table

        click.echo("\nschedule of quantities (estimates for bidding):")
        click.echo(schedule_table(result.schedule).iloc[:, :7].to_string(index=False))
        from geo_corrosion.pricing import estimate_text

        if est := estimate_text(result.schedule):
            click.echo("\nengineer's estimate (amounts in quantities.csv and .xlsx):")
            click.echo(est)
    click.echo("")
    click.echo(qa_line(result.flags, result.files))


def qa_line(flags: pd.DataFrame, files: list[str]) -> str:
    """Return the run's closing line: the QA flags by severity and where to read them."""
    from geo_corrosion.qa import count_line

    line = count_line(flags)
    if flags.empty:
        return line
    where = [w for f, w in (("report.pdf", "the QA section of report.pdf"),
                            ("survey.gpkg", "the qa_flags layer of survey.gpkg"))
             if f in files]
    return f"{line}; read them in {' and '.join(where)}" if where else line
