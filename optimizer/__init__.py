"""The strainline application: catalog, studies, search, outputs and the command line."""
from __future__ import annotations


def __getattr__(name: str) -> str:
    # ``__version__`` is looked up on first use (PEP 562): importlib.metadata costs ~50 ms of start-up
    if name == "__version__":
        from importlib import metadata as _metadata

        try:
            version = _metadata.version("strainline")
        except _metadata.PackageNotFoundError:  # running from a source tree that is not installed
            version = "0.0.0+unknown"
        globals()["__version__"] = version
        return version
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
