"""The plugin mechanism: a :class:`Registry` of built-ins extended by an entry-point group.

This module knows no plugin family.  Each family owns its registry in its package's
``__init__``: :data:`geo_corrosion.measurements.MEASUREMENTS`,
:data:`geo_corrosion.zoning.ZONING_RULES` and :data:`geo_corrosion.exporters.EXPORTERS`;
:mod:`geo_corrosion.registries` lists them by group.  Built-ins live in code so they
work from a source tree; third-party plugins come from the Python entry-point groups
``geo_corrosion.measurements``, ``geo_corrosion.zoning_rules`` and
``geo_corrosion.exporters``.  Discovery is lazy and cached; ``Registry.refresh`` forgets
the cache.  A plugin that fails to
load becomes a :class:`BrokenPlugin` that shows in ``geo-corrosion plugins`` and
raises only when used.  On a name clash the built-in wins, with a
:class:`~geo_corrosion.errors.PluginConflictWarning`.
"""

from __future__ import annotations

import contextlib
import traceback
import warnings
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from importlib.metadata import EntryPoint, entry_points
from typing import Any, Generic, TypeVar

from geo_corrosion.errors import PluginConflictWarning, PluginError

__all__ = ["BrokenPlugin", "Registry"]

T = TypeVar("T")


@dataclass(frozen=True)
class BrokenPlugin:
    """A plugin whose entry point failed to load.

    Attributes
    ----------
    name : str
        The entry point's name.
    value : str
        The entry point's target (``module:attr``).
    error : str
        The traceback of the failure, shown by ``geo-corrosion plugins``.
    """

    name: str
    value: str
    error: str

    def __call__(self, *args: object, **kwargs: object) -> Any:
        """Raise: a broken plugin cannot be used."""
        raise PluginError(
            f"plugin {self.name!r} ({self.value}) failed to load and cannot be used:\n{self.error}"
        )


@dataclass
class Registry(Generic[T]):
    """A named collection of built-in plugins extended by an entry-point group.

    Parameters
    ----------
    group : str
        Entry-point group, e.g. ``"geo_corrosion.exporters"``.
    what : str
        What the plugins are, for messages ("measurement kind").
    builtins : callable
        Returns the built-in plugins as a dict; called lazily so that importing
        geo_corrosion stays cheap.
    """

    group: str
    what: str
    builtins: Callable[[], dict[str, T]]
    _cache: dict[str, T | BrokenPlugin] | None = field(default=None, repr=False)
    _extra: dict[str, T] = field(default_factory=dict, repr=False)

    def _entry_points(self) -> Iterable[EntryPoint]:
        return entry_points(group=self.group)

    def load(self, eps: Iterable[EntryPoint] | None = None) -> dict[str, T | BrokenPlugin]:
        """Return every plugin by name, loading entry points once.

        Parameters
        ----------
        eps : iterable of EntryPoint, optional
            Entry points to use instead of the installed ones (for tests).
        """
        if self._cache is not None and eps is None:
            return self._cache
        found: dict[str, T | BrokenPlugin] = dict(self.builtins())
        for ep in self._entry_points() if eps is None else eps:
            if ep.name in found:
                warnings.warn(
                    f"{self.what} plugin {ep.name!r} from {ep.value} clashes with a built-in of "
                    "the same name; the built-in is used. Rename the plugin's entry point.",
                    PluginConflictWarning,
                    stacklevel=2,
                )
                continue
            try:
                found[ep.name] = ep.load()
            except Exception:  # noqa: BLE001 - any failure makes it a BrokenPlugin
                found[ep.name] = BrokenPlugin(ep.name, ep.value, traceback.format_exc())
        found.update(self._extra)
        if eps is None:
            self._cache = found
        return found

    def register(self, name: str, plugin: T) -> None:
        """Register a plugin in this process (tests, notebooks)."""
        self._extra[name] = plugin
        self._cache = None

    def unregister(self, name: str) -> None:
        """Remove a plugin registered with :meth:`register` (no error if absent)."""
        self._extra.pop(name, None)
        self._cache = None

    @contextlib.contextmanager
    def registered(self, name: str, plugin: T) -> Iterator[T]:
        """Register a plugin for the duration of a ``with`` block (tests, notebooks)."""
        self.register(name, plugin)
        try:
            yield plugin
        finally:
            self.unregister(name)

    def names(self) -> list[str]:
        """Names of the usable plugins."""
        return sorted(k for k, v in self.load().items() if not isinstance(v, BrokenPlugin))

    def get(self, name_or_plugin: str | T, *, where: str = "") -> T:
        """Return a plugin by name, or pass a plugin object through.

        Raises
        ------
        PluginError
            If no plugin has that name, or it failed to load.
        """
        if not isinstance(name_or_plugin, str):
            return name_or_plugin
        plugins = self.load()
        if name_or_plugin not in plugins:
            raise PluginError(
                f"{where}unknown {self.what} {name_or_plugin!r}; known: {', '.join(self.names())}"
            )
        plugin = plugins[name_or_plugin]
        if isinstance(plugin, BrokenPlugin):
            plugin()  # raises
        return plugin  # type: ignore[return-value]

    def refresh(self) -> None:
        """Forget cached discovery."""
        self._cache = None
