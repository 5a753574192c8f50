"""Disk cache of the fast field models (:mod:`fringe.field.fast`).

A model costs 1–2 s to build; kept on disk it is read back in milliseconds by the next
process. Files are ``model-<key>.npz`` in ``$FRINGE_CACHE_DIR`` (``off``, ``0``,
``none`` or empty: no disk cache), else ``$XDG_CACHE_HOME/fringe`` or
``~/.cache/fringe``; the environment is read at every access. A file's key is the
field layer's :func:`~fringe.field.fast.model_key` (coils, quadrature) hashed with the
source of the modules that compute the model and magpylib's version, so a changed engine
never reads an old table. The newest :data:`CACHE_KEEP` files are kept.

:func:`install` puts a :class:`DiskModelStore` under the fast path; the command line and
the first use of the public API (``fringe.<name>``) call it.
"""

from __future__ import annotations

import hashlib
import io
import os
from functools import lru_cache
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from fringe.io.atomic import write_bytes_atomic

if TYPE_CHECKING:
    from fringe.field.fast import AxisymmetricModel

__all__ = ["DiskModelStore", "install", "cache_dir", "source_digest", "CACHE_KEEP",
           "MODEL_MODULES"]

#: Model files kept in the disk cache (oldest removed first).
CACHE_KEEP: int = 24
#: Modules whose source goes into every file key (the model is computed by them).
MODEL_MODULES: tuple[str, ...] = (
    "fringe.field.fast", "fringe.field.direct", "fringe.field.evaluate",
    "fringe.field._quadrature", "fringe.field.quadrature_rules", "fringe.field.sources",
    "fringe.field.multipole", "fringe.model.magnet")


def cache_dir() -> Path | None:
    """The cache folder from the environment, or None if the disk cache is off."""
    env = os.environ.get("FRINGE_CACHE_DIR")
    if env is not None:
        return None if env.strip().lower() in ("", "off", "0", "none") else Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "fringe"


@lru_cache(maxsize=1)
def source_digest() -> str:
    """Hash of magpylib's version and the source of :data:`MODEL_MODULES`."""
    import importlib
    import inspect

    import magpylib

    h = hashlib.sha256(magpylib.__version__.encode())
    for name in MODEL_MODULES:
        try:
            h.update(inspect.getsource(importlib.import_module(name)).encode())
        except (OSError, TypeError, ImportError):
            h.update(name.encode())
    return h.hexdigest()


class DiskModelStore:
    """A :class:`fringe.field.fast.ModelStore` keeping models as ``.npz`` files.

    Parameters
    ----------
    directory : path, optional
        Fixed cache folder; by default :func:`cache_dir` at every access.
    """

    def __init__(self, directory: str | Path | None = None) -> None:
        self.directory = None if directory is None else Path(directory)

    def _path(self, key: str) -> Path | None:
        d = self.directory if self.directory is not None else cache_dir()
        if d is None:
            return None
        full = hashlib.sha256((key + source_digest()).encode()).hexdigest()[:32]
        return d / f"model-{full}.npz"

    def has(self, key: str) -> bool:
        """Whether a model file exists for ``key``."""
        p = self._path(key)
        return p is not None and p.is_file()

    def load(self, key: str) -> AxisymmetricModel | None:
        """The model stored for ``key``, or None (missing, partial or foreign file)."""
        from fringe.field.fast import AxisymmetricModel

        p = self._path(key)
        if p is None:
            return None
        try:
            with np.load(p, allow_pickle=False) as z:
                return AxisymmetricModel.from_arrays(z)
        except Exception:  # noqa: BLE001 - missing, partial or foreign file: just rebuild
            return None

    def save(self, key: str, model) -> None:
        """Write the model atomically and drop all but the newest :data:`CACHE_KEEP` files."""
        p = self._path(key)
        if p is None:
            return
        buf = io.BytesIO()
        np.savez(buf, **model.to_arrays())
        try:
            p.parent.mkdir(parents=True, exist_ok=True)
            write_bytes_atomic(p, buf.getvalue())
            old = sorted(p.parent.glob("model-*.npz"), key=lambda f: f.stat().st_mtime)
            for f in old[:-CACHE_KEEP]:            # keep the newest few (≈1.4 MB each)
                f.unlink(missing_ok=True)
        except Exception:  # noqa: BLE001 - a cache that cannot be written is just not used
            pass


def install() -> None:
    """Put a :class:`DiskModelStore` under the fast path, unless a store is installed.

    Idempotent: a store already installed (this one or another) is kept.
    """
    from fringe.field import fast

    if fast.model_store() is None:
        fast.set_model_store(DiskModelStore())
