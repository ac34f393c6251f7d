"""``geo-corrosion portfolio``: run many sites on Dask and write the portfolio summary."""

from __future__ import annotations

from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import overwrite_opt, quiet_opt

__all__ = ["portfolio"]


@click.command()
@click.argument("sites", nargs=-1, required=True, metavar="SITES...",
                type=click.Path(exists=False, path_type=Path))
@click.option("--out", "out", type=click.Path(path_type=Path), required=True,
              help="Portfolio folder: sites/<site-id>/ per site, and the summary.")
@click.option("--workers", type=click.IntRange(min=1), default=None,
              help="Worker processes of the local Dask cluster, one thread each "
                   "(default: all cores).")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Use an existing Dask cluster (e.g. tcp://10.0.0.5:8786) instead of a "
                   "local one; its workers must see the site folders and --out at the same "
                   "paths.")
@click.option("--serial", is_flag=True,
              help="Run the sites one after another in this process, without Dask.")
@overwrite_opt
@quiet_opt
@errors_handler
def portfolio(sites: tuple[Path, ...], out: Path, workers: int | None, scheduler: str | None,
              serial: bool, overwrite: bool, quiet: bool) -> None:
    """Run every site of SITES as a task on Dask and write the portfolio summary.

    SITES are site folders, a folder of site folders, or a .txt/.csv list of them. Each site
    runs like `geo-corrosion run` into OUT/sites/<site-id>/; a site that fails is reported
    and does not stop the others. OUT then holds portfolio.gpkg, portfolio.xlsx, the
    portfolio_*.csv tables and portfolio.html (an offline map linking to each site's map).
    """
    from geo_corrosion.portfolio import run_portfolio

    if scheduler and (workers or serial):
        raise click.UsageError("--scheduler runs on an existing cluster: leave out --workers "
                               "and --serial")
    if workers and serial:
        raise click.UsageError("--serial runs without workers: leave out --workers")
    result = run_portfolio(sites, out, workers=workers, scheduler=scheduler, serial=serial,
                           overwrite=overwrite,
                           progress=None if quiet else (lambda m: click.echo(m, err=True)))
    click.echo(f"wrote {result.out_dir}")
    for f in result.files:
        click.echo(f"  {f}")
    n, bad = len(result.outcomes), result.failed
    for o in bad:
        click.echo(f"FAILED {o.site.id} ({o.site.site_file}): {o.message}", err=True)
    if bad:
        raise click.ClickException(
            f"{len(bad)} of {n} site(s) failed: {', '.join(o.site.id for o in bad)}; "
            f"the others are complete (see portfolio_sites.csv)")
    click.echo(f"all {n} site(s) done")
