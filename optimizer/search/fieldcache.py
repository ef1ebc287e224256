"""A disk cache of 2-D field solutions, keyed by cross-section, mesh settings and solver version.

Every field solve of a line table (:mod:`strainline.optimizer.search.fieldtable`) is stored under a
key made of the cross-section (line kind, width, copper thickness, gap, each dielectric band with its
Dk and loss tangent, the fill beside the trace, the bottom ground), the mesh settings and
:data:`SOLVER_VERSION`; a re-run of a study finds every solve here and does no field work.

Location: ``$STRAINLINE_CACHE_DIR`` when set, else ``$XDG_CACHE_HOME/strainline``, else
``~/.cache/strainline``; one SQLite file (``fields.sqlite3``, standard library ``sqlite3``). A cache
that cannot be opened or written (read-only home, full disk) is skipped silently: it only saves
time, it never changes a result.
"""
from __future__ import annotations

import hashlib
import json
import os
import sqlite3
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

#: Bump when the field solver's numerics change (old entries are then never read again).
SOLVER_VERSION = "fields-2026.12-layered-1"
#: Environment variable that overrides the cache folder.
CACHE_ENV = "STRAINLINE_CACHE_DIR"
FILENAME = "fields.sqlite3"


def cache_dir() -> Path:
    """The cache folder (not created here)."""
    env = os.environ.get(CACHE_ENV)
    if env:
        return Path(env)
    xdg = os.environ.get("XDG_CACHE_HOME")
    base = Path(xdg) if xdg else Path.home() / ".cache"
    return base / "strainline"


def point_key(payload: Mapping[str, Any]) -> str:
    """Stable key of one solve: SHA-256 of the canonical JSON of ``payload`` and the version.

    Floats are written with 12 significant digits so round-off in how a geometry was assembled
    does not split one cross-section into two keys.
    """
    def canon(v: Any) -> Any:
        if isinstance(v, float):
            return float(f"{v:.12g}")
        if isinstance(v, (list, tuple)):
            return [canon(x) for x in v]
        if isinstance(v, Mapping):
            return {str(k): canon(x) for k, x in sorted(v.items())}
        return v

    text = json.dumps([SOLVER_VERSION, canon(dict(payload))], sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


class FieldCache:
    """Key -> JSON record store (SQLite). All methods are no-ops when the file cannot be used."""

    def __init__(self, folder: Path | str | None = None, enabled: bool = True) -> None:
        self.path = (Path(folder) if folder is not None else cache_dir()) / FILENAME
        self._db: sqlite3.Connection | None = None
        self.hits = 0
        self.misses = 0
        if not enabled:
            return
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            db = sqlite3.connect(str(self.path), timeout=30.0)
            db.execute("CREATE TABLE IF NOT EXISTS solve (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
            db.commit()
            self._db = db
        except (OSError, sqlite3.Error):
            self._db = None

    @property
    def enabled(self) -> bool:
        return self._db is not None

    def get_many(self, keys: Iterable[str]) -> dict[str, dict]:
        """Records found for ``keys`` (missing keys are absent from the result)."""
        keys = list(dict.fromkeys(keys))
        out: dict[str, dict] = {}
        if self._db is not None and keys:
            try:
                for a in range(0, len(keys), 500):
                    part = keys[a:a + 500]
                    q = "SELECT key, value FROM solve WHERE key IN (%s)" % ",".join("?" * len(part))
                    for k, v in self._db.execute(q, part):
                        out[k] = json.loads(v)
            except (sqlite3.Error, ValueError):
                out = {}
        self.hits += len(out)
        self.misses += len(keys) - len(out)
        return out

    def put_many(self, items: Mapping[str, Mapping[str, Any]]) -> None:
        """Store records (JSON-serialisable mappings)."""
        if self._db is None or not items:
            return
        try:
            self._db.executemany("INSERT OR REPLACE INTO solve (key, value) VALUES (?, ?)",
                                 [(k, json.dumps(dict(v))) for k, v in items.items()])
            self._db.commit()
        except sqlite3.Error:
            pass

    def close(self) -> None:
        if self._db is not None:
            self._db.close()
            self._db = None


__all__ = ["CACHE_ENV", "SOLVER_VERSION", "FieldCache", "cache_dir", "point_key"]
