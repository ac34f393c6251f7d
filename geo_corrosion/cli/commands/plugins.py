"""``geo-corrosion plugins``: list kinds, zoning rules and exporters, broken plugins too."""

from __future__ import annotations

import click

from geo_corrosion.cli.handlers import errors_handler

__all__ = ["plugins"]


@click.command()
@errors_handler
def plugins() -> None:
    """List measurement kinds, zoning rules and exporters, with broken plugins."""
    from geo_corrosion.plugins import BrokenPlugin
    from geo_corrosion.registries import REGISTRIES

    for group, reg in REGISTRIES.items():
        click.echo(f"{group}:")
        for name, p in sorted(reg.load().items()):
            if isinstance(p, BrokenPlugin):
                click.echo(f"  {name:<18} BROKEN ({p.value})\n{p.error}")
            else:
                desc = getattr(p, "description", "") or (getattr(p, "label", "") or
                                                         (p.__doc__ or "").strip().split("\n")[0])
                click.echo(f"  {name:<18} {desc}")
