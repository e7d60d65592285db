"""Checkpoints of an interrupted sweep: the finished variants, written atomically.

A checkpoint carries a digest of the study's input files (their SHA-256, whatever their
location) and of the variants' values, so it is never resumed against another study.
"""

from __future__ import annotations

import hashlib
import io
import json

import numpy as np

from ..errors import InputError
from ..writing import atomic_write_bytes
from .evaluate import Evaluated

__all__ = ["finished", "load_checkpoint", "save_checkpoint", "study_digest"]


def study_digest(files: dict, x: np.ndarray) -> str:
    """SHA-256 over the input files' digests and the variants' parameter values."""
    from .. import __version__

    h = hashlib.sha256(json.dumps([__version__, sorted(files.values())]).encode())
    h.update(np.ascontiguousarray(x, dtype=float).tobytes())
    return h.hexdigest()


def save_checkpoint(path, digest: str, done: np.ndarray, results: Evaluated) -> None:
    """Write the finished variants (``done`` mask) and their results atomically."""
    buf = io.BytesIO()
    np.savez(buf, digest=np.array(digest), done=done, metrics=results.metrics,
             interior_db=results.interior_db, tl_db=results.tl_db)
    atomic_write_bytes(path, buf.getvalue())


def load_checkpoint(path, digest: str) -> tuple[np.ndarray, Evaluated]:
    """The ``done`` mask and results of a checkpoint; InputError when it is missing,
    unreadable or from another study."""
    try:
        with np.load(path, allow_pickle=False) as f:
            if str(f["digest"]) != digest:
                raise InputError(str(path), "", "checkpoint of another study (its input "
                                                "files or variants differ): remove it or "
                                                "run without --resume and with --force")
            return f["done"].copy(), Evaluated(f["metrics"].copy(), f["interior_db"].copy(),
                                               f["tl_db"].copy())
    except FileNotFoundError:
        raise InputError(str(path), "", "no checkpoint to resume") from None
    except (OSError, ValueError, KeyError) as exc:
        raise InputError(str(path), "", f"unreadable checkpoint ({exc})") from None


def finished(path) -> int:
    """How many variants a checkpoint holds (0 when there is none or it is unreadable)."""
    try:
        with np.load(path, allow_pickle=False) as f:
            return int(f["done"].sum())
    except (OSError, ValueError, KeyError):
        return 0
