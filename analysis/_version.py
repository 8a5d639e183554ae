"""Package version, read from the installed distribution."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("haarline")
except PackageNotFoundError:  # running from a source tree without installing
    __version__ = "0.0.0+source"
