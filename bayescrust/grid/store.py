"""The zarr checkpoint store of a grid map: one array per result, a ``done`` flag per chunk.

A path is used as a store only if nothing is there yet or it already holds a checkpoint store
of this package (a zarr group with a ``fingerprint`` attribute, :func:`store_status`): a
user's folder is never written into, nor deleted by ``bayescrust map`` after the run.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["Store", "store_status"]


def store_status(path) -> str:
    """``"absent"`` (nothing at ``path``), ``"checkpoint"`` (a checkpoint store of this
    package) or ``"foreign"`` (anything else, an empty folder included)."""
    p = Path(path)
    if not p.exists() and not p.is_symlink():
        return "absent"
    if not p.is_dir():
        return "foreign"
    import zarr

    try:
        group = zarr.open_group(str(p), mode="r")
    except Exception:  # noqa: BLE001 - not a zarr group (or an unreadable one): not ours
        return "foreign"
    return "checkpoint" if "fingerprint" in group.attrs else "foreign"


class Store:
    """Finished chunks in a zarr group: one array per result, a ``done`` flag per chunk."""

    def __init__(self, path, keys, n, n_chunks, chunk_size, fingerprint):
        import zarr

        self.path = str(path)
        if store_status(path) == "foreign":
            raise ValueError(f"{self.path}: exists and is not a checkpoint store of bayescrust "
                             "(no fingerprint); choose another store")
        self.group = zarr.open_group(self.path, mode="a")
        fp = self.group.attrs.get("fingerprint")
        if fp is not None and fp != fingerprint:
            raise ValueError(f"{self.path}: the checkpoint store belongs to another input or "
                             "other settings; delete it or choose another store")
        if fp is None:
            for k in keys:
                self.group.create_array(_zkey(k), shape=(max(n, 1),),
                                        chunks=(max(1, chunk_size),), dtype="float32",
                                        fill_value=np.nan)
            self.group.create_array("done", shape=(max(n_chunks, 1),), chunks=(1,),
                                    dtype="int8", fill_value=0)
            self.group.attrs["fingerprint"] = fingerprint
        self.keys = keys

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
