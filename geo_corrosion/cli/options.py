"""Shared click options and arguments (``*_opt``, ``*_arg``)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import click

site_arg = click.argument(
    "site", type=click.Path(exists=False, path_type=Path), metavar="SITE",
)
out_opt = click.option(
    "--out", "out", type=click.Path(path_type=Path), default=None,
    help="Output folder (default: SITE/out). Never overwritten unless --overwrite.",
)
overwrite_opt = click.option(
    "--overwrite", is_flag=True,
    help="Replace an existing output folder once the new one is complete.",
)
jobs_opt = click.option(
    "-j", "--jobs", type=click.IntRange(min=1), default=None, metavar="N",
    help="Processes and threads to use (default: every core). Levels, exporters and the "
         "kriging run side by side; 1 runs one thing after another. The outputs are the "
         "same with any N.",
)
quiet_opt = click.option("-q", "--quiet", is_flag=True, help="No progress messages.")
run_dir_arg = click.argument("run_dir", type=click.Path(exists=False, path_type=Path),
                             metavar="RUN_DIR")


def resolve_run_dir(run_dir: Path) -> Path:
    """Return the output folder named by RUN_DIR: itself, or SITE/out for a site folder.

    Raises
    ------
    click.ClickException
        Neither holds a ``run.json``.
    """
    if not (run_dir / "run.json").is_file() and (run_dir / "site.toml").is_file():
        run_dir = run_dir / "out"
    if not (run_dir / "run.json").is_file():
        raise click.ClickException(
            f"{run_dir} holds no run.json; is it the output folder of `geo-corrosion run`? "
            "Run `geo-corrosion run SITE` first.")
    return run_dir


def progress_printer(quiet: bool) -> Callable[[str], None] | None:
    """Return a progress callback printing each step to stderr, or None when ``quiet``."""
    if quiet:
        return None
    return lambda msg: click.echo(f"  {msg}", err=True)
