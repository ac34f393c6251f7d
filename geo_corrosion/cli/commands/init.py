"""``geo-corrosion init``: write a commented site-file template into DIRECTORY."""

from __future__ import annotations

from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler

__all__ = ["init"]


@click.command()
@click.argument("directory", type=click.Path(path_type=Path))
@errors_handler
def init(directory: Path) -> None:
    """Write a commented site-file template into DIRECTORY."""
    from importlib.resources import files

    directory.mkdir(parents=True, exist_ok=True)
    target = directory / "site.toml"
    if target.exists():
        raise click.ClickException(f"{target} already exists; not overwritten")
    text = files("geo_corrosion").joinpath("templates/site.toml").read_text(encoding="utf-8")
    from geo_corrosion._io import atomic_write

    atomic_write(target, lambda tmp: tmp.write_text(text, encoding="utf-8"), what="site file")
    for sub in ("plans", "sounding", "readings"):
        (directory / sub).mkdir(exist_ok=True)
    click.echo(f"wrote {target}; put plans, sounding sketches and readings beside it, then run "
               f"`geo-corrosion check {directory}`")
