"""The tool's version: the installed package's, from pyproject.toml (one place)."""

from importlib.metadata import PackageNotFoundError, version

try:
    VERSION = version("gravplan")
except PackageNotFoundError:          # run from a source tree that was never installed
    VERSION = "unknown (not installed)"
