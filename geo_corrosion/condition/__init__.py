"""Condition assessment: classes, potential statistics, resistivity, corrosion rate, probability.

Submodules (import them directly; this package imports only the light class tables):

* :mod:`geo_corrosion.condition.classes` -- published class sets as data.
* :mod:`geo_corrosion.condition.potential` -- cumulative frequency, mixture threshold, gradients.
* :mod:`geo_corrosion.condition.resistivity` -- Wenner, thickness factor, geometry, Arrhenius.
* :mod:`geo_corrosion.condition.corrosion_rate` -- Stern-Geary, ohmic drop, Faraday, sweeps.
* :mod:`geo_corrosion.condition.life` -- section loss, pit area, time to cover cracking.
* :mod:`geo_corrosion.condition.transient` -- galvanostatic pulse transient fits.
* :mod:`geo_corrosion.condition.probability` -- exceedance probability maps and class areas.
* :mod:`geo_corrosion.condition.combined` -- combined condition class rule table.
* :mod:`geo_corrosion.condition.stats` -- per-class statistics tables.
* :mod:`geo_corrosion.condition.plots` -- report figures (PNG, matplotlib Agg).
"""

from geo_corrosion.condition.classes import ClassSet, get_class_set

__all__ = ["ClassSet", "get_class_set"]
