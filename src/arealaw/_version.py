"""The package version, read from the installed metadata (it is written only in pyproject.toml)."""

from importlib.metadata import PackageNotFoundError, version

__all__ = ["__version__"]

try:
    __version__ = version("arealaw")
except PackageNotFoundError:  # pragma: no cover - a source tree used without installing it
    __version__ = "0+unknown"
