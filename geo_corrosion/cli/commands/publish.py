"""``geo-corrosion publish``: write run folders to PostgreSQL/PostGIS (one schema per site)."""

from __future__ import annotations

from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import resolve_run_dir

__all__ = ["publish"]

#: Same name as ``exporters.postgis.DSN_ENV`` (kept literal so ``--help`` imports nothing).
_DSN_ENV = "GEO_CORROSION_DSN"


@click.command()
@click.argument("run_dirs", nargs=-1, required=True, metavar="RUN_DIR...",
                type=click.Path(exists=False, path_type=Path))
@click.option("--dsn", envvar=_DSN_ENV, show_envvar=True, metavar="DSN",
              help="PostgreSQL connection string, e.g. postgresql://user@host:5432/db "
                   "(a password is better kept in ~/.pgpass or PGPASSWORD).")
@click.option("--site-id", "site_ids", multiple=True, metavar="ID",
              help="Site id (schema name) of each RUN_DIR, in order; default the site "
                   "folder's name.")
@errors_handler
def publish(run_dirs: tuple[Path, ...], dsn: str | None, site_ids: tuple[str, ...]) -> None:
    """Write every layer of RUN_DIR(s) to PostgreSQL/PostGIS, one schema per site.

    Each run replaces the previous export of its site in one transaction; a failure
    leaves the previous export as it was. RUN_DIR is a run's output folder, a site
    folder whose run went to SITE/out, or a portfolio's output folder (each finished
    site under sites/<id>/, published as <id>).
    """
    from geo_corrosion.exporters.postgis import DSN_ENV, write_runs_to_postgis

    if not dsn:
        raise click.ClickException(f"give the database: --dsn postgresql://user@host/db or "
                                   f"set {DSN_ENV}")
    dirs = [d if (d / "sites").is_dir() and not (d / "run.json").is_file()
            else resolve_run_dir(d) for d in run_dirs]
    write_runs_to_postgis(dirs, dsn,
                          site_ids=list(site_ids) or None, progress=click.echo)
