"""A small on-disk cache of per-fluid constants computed from the equation of state.

The fluid catalogue needs, for every fluid at every start, a few values that only the equation
of state gives (critical point, normal boiling point, vapour-curve slope): about 20 ms a fluid
on first use, most of it building the fluid's saturation curves (see :mod:`orcscreen.properties`).
They depend only on the fluid and the CoolProp build, so they are computed once and kept in one
JSON file per CoolProp version and revision, in ``$ORCSCREEN_CACHE_DIR`` if set, else
``$XDG_CACHE_HOME/orcscreen`` or ``~/.cache/orcscreen``. Floats round-trip exactly through JSON
(Python writes the shortest repr that reads back to the same double), so a cached value is
bit-for-bit the computed one. A missing, unreadable or foreign file is recomputed; a folder that
cannot be written just means no cache. Delete the folder to clear it.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any, Callable

__all__ = ["CACHE_DIR_ENV", "ConstantsCache", "cache_dir"]

CACHE_DIR_ENV = "ORCSCREEN_CACHE_DIR"
FORMAT = 2  # raise when the meaning of a cached value changes (2: saturation from the curves)


def cache_dir() -> Path:
    """The folder of orcscreen's caches (module docstring)."""
    override = os.environ.get(CACHE_DIR_ENV)
    if override:
        return Path(override).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "orcscreen"


class ConstantsCache:
    """name -> dict of JSON values for one kind of constants and one CoolProp build.

    ``get(name, compute)`` returns the cached dict or computes, keeps and returns it; ``save()``
    writes the file if anything new was computed (atomically: temporary file, then rename).
    """

    def __init__(self, kind: str, build: str):
        safe = "".join(c if c.isalnum() or c in "-._" else "_" for c in build)
        self.path = cache_dir() / f"{kind}-v{FORMAT}-coolprop-{safe}.json"
        self._build = build
        self._values: dict[str, dict] = self._read()
        self._dirty = False

    def _read(self) -> dict[str, dict]:
        try:
            data = json.loads(self.path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return {}
        if not isinstance(data, dict) or data.get("build") != self._build or not isinstance(data.get("values"), dict):
            return {}
        return {k: v for k, v in data["values"].items() if isinstance(v, dict)}

    def get(self, name: str, compute: Callable[[], dict[str, Any]]) -> dict[str, Any]:
        hit = self._values.get(name)
        if hit is not None:
            return dict(hit)
        value = compute()
        self._values[name] = dict(value)
        self._dirty = True
        return value

    def save(self) -> None:
        if not self._dirty:
            return
        tmp = None
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=self.path.name, suffix=".tmp", dir=self.path.parent)
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                json.dump({"build": self._build, "values": self._values}, fh, indent=0, sort_keys=True)
            os.replace(tmp, self.path)
            self._dirty = False
        except OSError:
            if tmp is not None:
                try:
                    os.unlink(tmp)
                except OSError:
                    pass
