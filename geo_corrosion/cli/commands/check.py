"""``geo-corrosion check``: read every file of a site, apply corrections, print QA findings."""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import click

from geo_corrosion.cli.handlers import errors_handler
from geo_corrosion.cli.options import progress_printer, quiet_opt, site_arg
from geo_corrosion.errors import GeoCorrosionWarning, GeoreferenceWarning

__all__ = ["check"]


@click.command()
@site_arg
@quiet_opt
@click.option("--max-rows", default=50, show_default=True, help="Findings listed at most.")
@errors_handler
def check(site: Path, quiet: bool, max_rows: int) -> None:
    """Check a site: read every file, apply corrections, print the QA findings.

    Exits 0 when the site can be run, 1 when it cannot.
    """
    from geo_corrosion import qa
    from geo_corrosion.pipeline import check as check_site

    # the control-point residual warnings are printed with their level below, not as notes
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeoCorrosionWarning)
        s, flags = check_site(site, progress=progress_printer(quiet))
    for w in caught:
        if not issubclass(w.category, GeoreferenceWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    for lv in s.levels.values():
        g = lv.grid
        tie = f"level {lv.id}: grid tie rotation {g.rotation_deg:.4f} deg, scale {g.scale:.6f}, "
        if g.redundant:
            click.echo(f"{tie}RMS control-point residual {g.rms_residual:.4f} {g.crs_unit}")
        elif g.residuals:
            click.echo(f"{tie}{len(g.residuals)} control points: no redundancy, the residuals "
                       "are 0 by construction (a third point would check the tie)")
        else:
            click.echo(f"{tie}declared origin and rotation (no control points to check)")
        message = g.residual_warning()
        if message:
            click.echo(f"  WARNING level {lv.id}: {message}")
    for sv in s.surveys:
        click.echo(f"survey {sv.id}: {len(sv.frame)} {sv.kind.name} readings "
                   f"({sv.kind.canonical_unit})")
    from geo_corrosion.stages.plan_surfaces import planned_representation

    for lv in s.levels.values():  # surface or points per kind (surfaces/density.py)
        click.echo(f"level {lv.id}: what will be mapped")
        for kind, what, why in planned_representation(lv, s.surveys_of(lv.id), flags,
                                                       s.config.run):
            click.echo(f"  {kind}: {what}: {why}")
    if len(flags):
        click.echo(f"\nQA findings ({len(flags)}; all of them are in the qa_flags layer of a run):")
        click.echo(qa.format_flags(flags, max_rows=max_rows))
        click.echo("")
        click.echo(qa.summarize(flags).to_string(index=False))
    ok = not len(flags) or qa.runnable(flags)
    click.echo("\nthe site can be run" if ok else "\nthe site cannot be run: fix the errors above")
    sys.exit(0 if ok else 1)
