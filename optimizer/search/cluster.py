"""Connecting to a Dask cluster (the optional ``cluster`` extra), with our one-line errors."""
from __future__ import annotations

from typing import Any

from strainline.optimizer.errors import InputError


def connect(address: str, timeout_s: float = 10.0) -> Any:
    """A ``dask.distributed.Client`` for the scheduler at ``address``.

    Raises
    ------
    InputError
        Naming ``--dask`` when the extra is not installed or the scheduler cannot be reached.
    """
    try:
        from dask.distributed import Client
    except ImportError as exc:
        raise InputError("a Dask cluster needs the optional extra: pip install 'strainline[cluster]'",
                         "--dask") from exc
    try:
        return Client(address, timeout=f"{timeout_s}s")
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler at {address!r} ({exc})", "--dask") from exc
