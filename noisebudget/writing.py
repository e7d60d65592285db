"""Writing outputs so that a reader sees the old output or the whole new one, never a mix.

* :func:`atomic_write_bytes`: one file, written to a temporary name in the same folder
  and renamed over the target. Files are created with mode ``0o666`` less the umask.
* :func:`folder_lock`: an exclusive, non-blocking ``flock`` on the output folder itself
  (released by the kernel if the process dies), so two runs cannot write into one folder
  at the same time; the second is refused with one line.
* :func:`staged_set`: a report set is written into a hidden temporary folder beside its
  files and moved into place only when complete, with SIGINT and SIGTERM held back
  during the moves; on any failure or interruption the temporary folder is removed and
  the earlier set is left as it was.
* :func:`csv_text` and :func:`strict_json`: text outputs that a spreadsheet cannot read
  as formulas and that hold no NaN or Infinity.
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import shutil
import signal
import tempfile
import threading
from pathlib import Path

from .errors import InputError

__all__ = ["atomic_write_bytes", "atomic_write_text", "check_free", "csv_text",
           "deferred_signals", "folder_lock", "neutralise_formula", "staged_set",
           "strict_json"]

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _new_file(folder: Path, prefix: str) -> tuple[int, Path]:
    """Create a new, exclusively owned file ``folder/prefix<random>.tmp``; its mode is
    0o666 less the umask (``tempfile.mkstemp`` would force 0o600)."""
    for _ in range(100):
        path = folder / f"{prefix}{os.urandom(6).hex()}.tmp"
        try:
            return os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666), path
        except FileExistsError:
            continue
    raise FileExistsError(f"no free temporary name in {folder}")


def atomic_write_bytes(path, data: bytes) -> None:
    """Write ``data`` to ``path`` so that readers see the old file or the whole new one."""
    path = Path(path)
    fd, tmp = _new_file(path.parent, f".{path.name}.")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def atomic_write_text(path, text: str) -> None:
    """Text version of :func:`atomic_write_bytes` (UTF-8)."""
    atomic_write_bytes(path, text.encode("utf-8"))


@contextlib.contextmanager
def deferred_signals():
    """Hold SIGINT and SIGTERM back for the duration; deliver them afterwards.

    Used around the few renames that put a report set in place and around clean-up, so
    that an interruption cannot split them. Outside the main thread (where Python
    cannot install handlers) it does nothing.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    pending = []
    sigs = (signal.SIGINT, signal.SIGTERM)
    old = {s: signal.getsignal(s) for s in sigs}
    for s in sigs:
        signal.signal(s, lambda signum, frame: pending.append(signum))
    try:
        yield
    finally:
        for s in sigs:
            signal.signal(s, old[s])
        for s in dict.fromkeys(pending):
            signal.raise_signal(s)


_locks: dict[str, list] = {}
_locks_guard = threading.Lock()


@contextlib.contextmanager
def folder_lock(folder):
    """Hold an exclusive lock on ``folder`` (created if missing) for the duration.

    Another process holding it makes this raise :class:`InputError` at once. The lock is
    re-entrant within one process. A folder created here and left empty is removed.
    """
    folder = Path(folder)
    key = str(folder.resolve())
    with _locks_guard:
        held = _locks.get(key)
        if held is not None:
            held[1] += 1
    if held is not None:
        try:
            yield folder
        finally:
            with _locks_guard:
                held[1] -= 1
        return
    import fcntl

    created = not folder.exists()
    if folder.exists() and not folder.is_dir():
        raise InputError(str(folder), "", "exists and is not a folder")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd = os.open(folder, os.O_RDONLY | os.O_DIRECTORY)
    except OSError as exc:
        raise InputError(str(folder), "", f"cannot create or open the output folder "
                                          f"({exc.strerror or exc})") from None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        os.close(fd)
        raise InputError(str(folder), "", "another noisebudget run is writing into this "
                                          "folder; try again when it has finished") from None
    with _locks_guard:
        _locks[key] = [fd, 1]
    try:
        yield folder
    finally:
        with deferred_signals():
            with _locks_guard:
                del _locks[key]
            if created:
                with contextlib.suppress(OSError):
                    folder.rmdir()  # only if still empty
            fcntl.flock(fd, fcntl.LOCK_UN)
            os.close(fd)


def check_free(folder, names, force: bool) -> None:
    """Refuse (``InputError``) when any of ``names`` exists in ``folder`` and not ``force``."""
    folder = Path(folder)
    existing = [folder / n for n in names if (folder / n).exists()]
    if existing and not force:
        more = f" (and {len(existing) - 1} more)" if len(existing) > 1 else ""
        raise InputError(str(existing[0]), "", f"exists{more}; use --force to replace the "
                                               f"outputs")


@contextlib.contextmanager
def staged_set(folder, stem: str, replaces=()):
    """Yield a hidden temporary folder inside ``folder`` to write a set of files into.

    On normal exit every file in it is moved into ``folder`` (replacing files of the same
    name), the files named in ``replaces`` that the new set does not contain are removed
    (the rest of an earlier set), and the temporary folder is removed; SIGINT and SIGTERM
    wait until that is done. On an exception or interruption the temporary folder is
    removed and ``folder`` is left as it was.
    """
    folder = Path(folder)
    stage = Path(tempfile.mkdtemp(prefix=f".{stem}.partial-", dir=folder))
    try:
        yield stage
    except BaseException:
        with deferred_signals():
            shutil.rmtree(stage, ignore_errors=True)
        raise
    with deferred_signals():
        try:
            new = sorted(p.name for p in stage.iterdir())
            for name in new:
                os.replace(stage / name, folder / name)
            for name in replaces:
                if name not in new:
                    (folder / name).unlink(missing_ok=True)
        finally:
            shutil.rmtree(stage, ignore_errors=True)


def neutralise_formula(text):
    """Text that a spreadsheet would read as a formula (it starts with ``=``, ``+``,
    ``-``, ``@``, a tab or a carriage return) gets a leading apostrophe, as the OWASP
    guidance on CSV injection recommends; other values pass unchanged."""
    if isinstance(text, str) and text.startswith(_FORMULA_START):
        return "'" + text
    return text


def csv_text(table, float_format: str = "%.3f") -> str:
    """A DataFrame as CSV; text cells are neutralised (:func:`neutralise_formula`),
    numbers stay numbers and missing values are empty."""
    from pandas.api.types import is_numeric_dtype

    out = table.copy()
    for col in out.columns:
        if not is_numeric_dtype(out[col]):  # object or string columns hold user text
            out[col] = out[col].map(neutralise_formula)
    out.columns = [neutralise_formula(str(c)) for c in out.columns]
    return out.to_csv(index=False, float_format=float_format)


def _finite(obj):
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    return obj


def strict_json(obj) -> str:
    """JSON text in which NaN and infinities are ``null`` (strict JSON has neither)."""
    return json.dumps(_finite(obj), allow_nan=False)
