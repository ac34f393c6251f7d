"""``geo-corrosion``: the command group and its commands."""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import (
    out_opt,
    overwrite_opt,
    quiet_opt,
    resolve_run_dir,
    run_dir_arg,
    site_arg,
)
from geo_corrosion.cli.rebuild import map_cmd, report_cmd


def _progress(quiet: bool) -> Callable[[str], None] | None:
    if quiet:
        return None
    return lambda msg: click.echo(f"  {msg}", err=True)


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
    from geo_corrosion.pipeline import _versions

    for k, v in _versions().items():
        click.echo(f"{k:>14}: {v}")
    ctx.exit(0)


@cli.command()
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


@cli.command()
@site_arg
@quiet_opt
@click.option("--max-rows", default=50, show_default=True, help="Findings listed at most.")
@errors_handler
def check(site: Path, quiet: bool, max_rows: int) -> None:
    """Check a site: read every file, apply corrections, print the QA findings.

    Exits 0 when the site can be run, 1 when it cannot.
    """
    from geo_corrosion import qa
    from geo_corrosion.pipeline import check_parameters, check_site
    from geo_corrosion.stages.open_site import open_site
    from geo_corrosion.stages.read_site import read_site

    cfg = read_site(site)
    check_parameters(cfg)
    s = open_site(cfg, progress=_progress(quiet))
    flags = check_site(s)
    for lv in s.levels.values():
        g = lv.grid
        click.echo(f"level {lv.id}: grid tie rotation {g.rotation_deg:.4f} deg, "
                   f"scale {g.scale:.6f}, "
                   f"RMS control-point residual {g.rms_residual:.4f} {g.crs_unit}")
    for sv in s.surveys:
        click.echo(f"survey {sv.id}: {len(sv.frame)} {sv.kind.name} readings "
                   f"({sv.kind.canonical_unit})")
    if len(flags):
        click.echo(f"\nQA findings ({len(flags)}; all of them are in the qa_flags layer of a run):")
        click.echo(qa.format_flags(flags, max_rows=max_rows))
        click.echo("")
        click.echo(qa.summarize(flags).to_string(index=False))
    ok = not len(flags) or qa.runnable(flags)
    click.echo("\nthe site can be run" if ok else "\nthe site cannot be run: fix the errors above")
    sys.exit(0 if ok else 1)


@cli.command()
@site_arg
@out_opt
@overwrite_opt
@quiet_opt
@errors_handler
def run(site: Path, out: Path | None, overwrite: bool, quiet: bool) -> None:
    """Run the whole job on SITE and write the output folder."""
    from geo_corrosion.pipeline import run as run_site
    from geo_corrosion.stages.read_site import read_site

    cfg = read_site(site)
    out = out or (cfg.root / "out")
    result = run_site(cfg, out, overwrite=overwrite, progress=_progress(quiet))
    click.echo(f"wrote {out}")
    for f in sorted(result.files) + ["run.json"]:
        click.echo(f"  {f}")
    if len(result.schedule):
        from geo_corrosion.quantities import schedule_table

        click.echo("\nschedule of quantities (estimates for bidding):")
        click.echo(schedule_table(result.schedule).round(1).to_string(index=False))


@cli.command()
@run_dir_arg
@errors_handler
def quantities(run_dir: Path) -> None:
    """Reprint the bid schedule of an existing run (no recomputation).

    RUN_DIR is a run's output folder, or a site folder whose run went to its default
    output folder (SITE/out).
    """
    from geo_corrosion.exporters.runfiles import read_run

    data = read_run(resolve_run_dir(run_dir))
    rows = data.get("schedule", [])
    if not rows:
        click.echo("no quantities in this run")
        return
    import pandas as pd

    from geo_corrosion.quantities import schedule_table

    click.echo(schedule_table(pd.DataFrame(rows)).round(1).to_string(index=False))
    click.echo("\n" + data["cautions"][3])


@cli.command()
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


cli.add_command(map_cmd)
cli.add_command(report_cmd)


def main() -> None:  # pragma: no cover
    """Entry point of ``python -m geo_corrosion.cli.main``."""
    cli()


if __name__ == "__main__":  # pragma: no cover
    main()
