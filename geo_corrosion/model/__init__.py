"""The data model: the site as read (levels, surveys), and the typed results of a run.

- :mod:`~geo_corrosion.model.site`: :class:`Site`, :class:`Level`, :class:`Survey`;
- :mod:`~geo_corrosion.model.surface`: :class:`KindSurface`, :class:`LevelCondition`;
- :mod:`~geo_corrosion.model.results`: :class:`LevelResult`, :class:`RunResult`;
- :mod:`~geo_corrosion.model.manifest`: ``run.json``, written and read back.
"""

from geo_corrosion.model.site import Level, Site, Survey

__all__ = ["Level", "Site", "Survey"]
