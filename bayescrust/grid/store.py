"""The zarr checkpoint store of a grid map: one array per result, a ``done`` flag per chunk.

A store is created in this order: the group with the marker attribute ``bayescrust_checkpoint``
(one write of the group's metadata), the arrays, and last the ``fingerprint`` of the input and
settings. A store with the marker but no fingerprint was interrupted while being created and is
created afresh. A path is used as a store only if nothing is there yet or it holds a store of
this package (:func:`store_status`): a user's folder is never written into, nor deleted by
``bayescrust map`` after the run.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["Store", "StoreMismatch", "store_status", "MARKER"]

#: group attribute written when a store is created (before its arrays)
MARKER = "bayescrust_checkpoint"


def store_status(path) -> str:
    """``"absent"`` (nothing at ``path``), ``"checkpoint"`` (a complete checkpoint store of
    this package: it has a fingerprint), ``"incomplete"`` (a store of this package whose
    creation was interrupted: the marker, no fingerprint) or ``"foreign"`` (anything else, an
    empty folder included)."""
    p = Path(path)
    if not p.exists() and not p.is_symlink():
        return "absent"
    if not p.is_dir():
        return "foreign"
    import zarr

    try:
        attrs = dict(zarr.open_group(str(p), mode="r").attrs)
    except Exception:  # noqa: BLE001 - not a zarr group (or an unreadable one): not ours
        return "foreign"
    if "fingerprint" in attrs:
        return "checkpoint"
    return "incomplete" if MARKER in attrs else "foreign"


class StoreMismatch(ValueError):
    """A checkpoint store that belongs to another input, other settings or another version."""


class Store:
    """Finished chunks in a zarr group: one array per result, a ``done`` flag per chunk."""

    def __init__(self, path, keys, n, n_chunks, chunk_size, fingerprint):
        import zarr

        self.path = str(path)
        self.keys = keys
        status = store_status(path)
        if status == "foreign":
            raise ValueError(f"{self.path}: exists and is not a checkpoint store of bayescrust "
                             "(no fingerprint); choose another store")
        from .. import __version__

        if status == "checkpoint":
            self.group = zarr.open_group(self.path, mode="r+")
            if self.group.attrs["fingerprint"] != fingerprint:
                made = self.group.attrs.get("bayescrust_version", "an earlier version")
                why = ("another input or other settings" if made == __version__ else
                       f"bayescrust {made}, not this {__version__} (the two versions' results "
                       "are not mixed)")
                raise StoreMismatch(f"{self.path}: the checkpoint store belongs to {why}; delete "
                                 "it or choose another store")
            return
        # absent, or ours but interrupted while being created: (re)create it, fingerprint last
        self.group = zarr.open_group(self.path, mode="w",
                                     attributes={MARKER: 1, "bayescrust_version": __version__})
        for k in keys:
            self.group.create_array(_zkey(k), shape=(max(n, 1),), chunks=(max(1, chunk_size),),
                                    dtype="float32", fill_value=np.nan)
        self.group.create_array("done", shape=(max(n_chunks, 1),), chunks=(1,), dtype="int8",
                                fill_value=0)
        self.group.attrs["fingerprint"] = fingerprint  # last: the store is complete

    def done(self):
        return np.asarray(self.group["done"][:], bool)

    def write(self, c, a, b, result):
        for k in self.keys:
            self.group[_zkey(k)][a:b] = result[k]
        self.group["done"][c] = 1

    def read(self, n):
        return {k: np.asarray(self.group[_zkey(k)][:n]) for k in self.keys}


def _zkey(k):
    return k.replace(":", "__").replace(" ", "_")
