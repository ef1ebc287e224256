"""The strainline application: catalog, studies, search, outputs and the command line."""
from __future__ import annotations

from importlib import metadata as _metadata

try:
    __version__ = _metadata.version("strainline")
except _metadata.PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"
