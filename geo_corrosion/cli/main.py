"""``geo-corrosion``: the command group; each command lives in :mod:`geo_corrosion.cli.commands`."""

from __future__ import annotations

import click

from geo_corrosion.cli.commands.check import check
from geo_corrosion.cli.commands.init import init
from geo_corrosion.cli.commands.plugins import plugins
from geo_corrosion.cli.commands.portfolio import portfolio
from geo_corrosion.cli.commands.publish import publish
from geo_corrosion.cli.commands.qgis_plugin import qgis_plugin
from geo_corrosion.cli.commands.quantities import quantities
from geo_corrosion.cli.commands.rebuild import map_cmd, report_cmd
from geo_corrosion.cli.commands.reprice import reprice
from geo_corrosion.cli.commands.run import run

__all__ = ["cli", "main"]


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show tracebacks of internal errors.")
@click.option("--show-versions", is_flag=True, is_eager=True, expose_value=False,
              callback=lambda ctx, _p, v: _show_versions(ctx) if v else None,
              help="Print versions of geo_corrosion and its libraries, then exit.")
@click.version_option(package_name="geo_corrosion")
def cli(debug: bool) -> None:
    """Corrosion condition survey of a reinforced-concrete deck -> repair documents.

    Start with `geo-corrosion init DIR`, fill in the site file, then
    `geo-corrosion check DIR` and `geo-corrosion run DIR`.
    """


def _show_versions(ctx: click.Context) -> None:
    from geo_corrosion.model.manifest import package_versions

    for k, v in package_versions().items():
        click.echo(f"{k:>14}: {v}")
    ctx.exit(0)


for _command in (init, check, run, quantities, plugins, map_cmd, report_cmd, reprice,
                 publish, qgis_plugin, portfolio):
    cli.add_command(_command)



def main() -> None:  # pragma: no cover
    """Entry point of ``python -m geo_corrosion.cli.main``."""
    cli()


if __name__ == "__main__":  # pragma: no cover
    main()
