"""geo_corrosion: corrosion condition surveys of reinforced-concrete decks to repair documents."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("geo_corrosion")
except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
    __version__ = "0.0.0+unknown"

__all__ = ["__version__"]
