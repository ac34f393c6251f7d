"""Shared click options and arguments (``*_opt``, ``*_arg``)."""

from __future__ import annotations

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
    "--overwrite", is_flag=True, help="Replace an existing output folder once the new one is complete.",
)
quiet_opt = click.option("-q", "--quiet", is_flag=True, help="No progress messages.")
run_dir_arg = click.argument("run_dir", type=click.Path(exists=False, path_type=Path),
                             metavar="RUN_DIR")
