"""One writer per store: an owner marker beside the store, held for the whole run.

``gridflash run`` (the driver process, not its workers) holds ``.NAME.writer`` next to the store
``NAME`` from before it looks at the output until the store is finished or the run fails. The
marker is created with ``O_CREAT | O_EXCL`` (atomic on local filesystems and NFSv3+), so of two
runs started on one output the second is refused in one line, before it can delete
(``--overwrite``) or write anything. It records the owner's host, process id and start time:

- owner alive (same host, the process exists): refused, naming the owner;
- owner dead (same host, no such process -- a killed run): the marker is stale and is taken over;
- owner on another host: cannot be checked from here, so refused, saying which file to delete
  once that run is known to be gone.

A lock holder is the only process that creates the store, so temporary creation folders
(``.NAME.creating-*``) found while holding the marker are leftovers of a killed run and are
removed.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import os
import shutil
import socket
from collections.abc import Iterator
from pathlib import Path

from .._errors import StoreError

__all__ = ["lock_path", "writer_lock"]


def lock_path(store: Path) -> Path:
    """The owner marker of ``store``: ``.NAME.writer`` in the same folder."""
    store = Path(store)
    return store.parent / f".{store.name}.writer"


@contextlib.contextmanager
def writer_lock(store: str | os.PathLike[str]) -> Iterator[Path]:
    """Hold the store's owner marker while the block runs; yields the marker's path.

    Raises
    ------
    StoreError
        Another live run holds the marker, or the folder cannot be written.
    """
    store = Path(store)
    marker = lock_path(store)
    try:
        store.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(
            f"cannot create the folder {str(store.parent)!r} for the output: "
            f"{exc.strerror or exc}; choose a writable output path"
        ) from None
    _acquire(store, marker)
    try:
        _remove_creation_leftovers(store)
        yield marker
    finally:
        with contextlib.suppress(OSError):
            marker.unlink()


def _acquire(store: Path, marker: Path) -> None:
    me = {"host": socket.gethostname(), "pid": os.getpid(),
          "started": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")}
    for _ in range(2):  # a second try after removing a stale marker
        try:
            fd = os.open(marker, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            owner = _read_owner(marker)
            if owner is not None and _owner_gone(owner):
                with contextlib.suppress(FileNotFoundError):
                    marker.unlink()
                continue
            raise StoreError(_busy_message(store, marker, owner)) from None
        except OSError as exc:
            raise StoreError(
                f"cannot write the owner marker {str(marker)!r}: {exc.strerror or exc}; choose a "
                "writable output path"
            ) from None
        with os.fdopen(fd, "w") as handle:
            json.dump(me, handle)
        return
    raise StoreError(_busy_message(store, marker, _read_owner(marker)))


def _read_owner(marker: Path) -> dict | None:
    try:
        owner = json.loads(marker.read_text())
    except (OSError, ValueError):
        return None  # being written this instant, or not ours: treat as held
    return owner if isinstance(owner, dict) else None


def _owner_gone(owner: dict) -> bool:
    """True only when the owner ran on this host and its process no longer exists."""
    pid = owner.get("pid")
    if owner.get("host") != socket.gethostname() or not isinstance(pid, int) or pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except PermissionError:
        return False  # exists, owned by another user
    return False


def _busy_message(store: Path, marker: Path, owner: dict | None) -> str:
    if owner is None:
        who = "another gridflash run"
    else:
        who = (f"another gridflash run (process {owner.get('pid')} on {owner.get('host')}, "
               f"started {owner.get('started')})")
    here = owner is not None and owner.get("host") == socket.gethostname()
    advice = ("wait for it to finish or stop it, then use --resume" if here else
              f"wait for it to finish; if it is no longer running, delete {str(marker)!r}")
    return f"{who} is writing {str(store)!r}; {advice}"


def _remove_creation_leftovers(store: Path) -> None:
    for leftover in store.parent.glob(f".{store.name}.creating-*"):
        shutil.rmtree(leftover, ignore_errors=True)
