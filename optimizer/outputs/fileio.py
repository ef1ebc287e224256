"""Atomic file writes for every output."""
from __future__ import annotations

import os
import tempfile
from pathlib import Path



def write_atomic(path: str | os.PathLike[str], data: str | bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and ``os.replace``.

    A reader never sees a half-written file and an existing file is only replaced once the new
    content is complete.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": ""})) as fh:
            fh.write(data)
        os.chmod(tmp, 0o666 & ~_umask())   # mkstemp makes 0600; give the file the usual mode
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
