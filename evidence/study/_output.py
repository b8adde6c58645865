"""An output folder written as a transaction: the old complete run or the new one, never a mixture.

A run writes into a new hidden sibling folder (``.<name>.evidence-new-<id>``), lists every file
with its SHA-256 in ``manifest.json`` (written last, with ``"complete": true``) and only then
moves the new folder into place — by an atomic exchange of the two folders where the system has
one (Linux ``renameat2``), else by two renames — and removes the old run. A run that fails, is
interrupted or runs out of disk removes its new folder and leaves the old one as it was.

Safety rules, checked before anything is written:

* a folder that exists must have been written by this package (its manifest says so), must hold
  only the files its manifest lists, unchanged, and must be writable; otherwise the run stops
  with a :class:`~evidence.errors.DataError` — unless ``overwrite=True`` replaces it;
* an input of the run (the data file, the study file) inside the output folder stops the run,
  whatever ``overwrite`` says: a run never replaces its own input;
* one run at a time per folder (an exclusive lock beside the folder); a second run stops at once.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import fcntl
import hashlib
import json
import os
import secrets
import shutil
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from evidence.errors import DataError

__all__ = ["OutputFolder", "file_hash", "MANIFEST"]

MANIFEST = "manifest.json"
_NEW = ".evidence-new-"
_LOCK = ".evidence-lock"
#: Files an older release of the package wrote without listing them in its manifest.
_LEGACY = ("report.html", "results.json", "manifest.json", "demo_panel.csv", "demo_study.toml")


def file_hash(path: Path) -> str:
    """SHA-256 of a file, read in blocks."""
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically (Linux ``renameat2(RENAME_EXCHANGE)``); False if unsupported."""
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        renameat2 = libc.renameat2
    except (OSError, AttributeError):
        return False
    renameat2.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p,
                          ctypes.c_uint]
    at_fdcwd, rename_exchange = -100, 2
    if renameat2(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange) == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP):
        return False
    raise OSError(code, os.strerror(code), str(b))


def _relative_files(folder: Path) -> set[str]:
    return {p.relative_to(folder).as_posix() for p in folder.rglob("*") if not p.is_dir()}


class OutputFolder:
    """The output folder of one run, written as a transaction (use as a context manager).

    ``path(rel)`` gives where to write a file (inside the new folder); ``record(rel)`` lists a
    file written there; ``commit(manifest)`` writes the manifest with every file's hash and moves
    the new folder into place. Leaving the context without a commit discards the new folder.
    """

    def __init__(self, target: str | Path, *, overwrite: bool = False,
                 inputs: Iterable[str | Path] = ()) -> None:
        self.shown = Path(target)
        self.target = Path(os.path.abspath(self.shown))
        self.overwrite = overwrite
        self.inputs = [Path(os.path.abspath(p)) for p in inputs]
        self.files: list[str] = []
        self.names: dict[str, str] = {}
        self.new: Path | None = None
        self._lock: int | None = None
        self._lock_path = self.target.parent / f".{self.target.name}{_LOCK}"

    # ------------------------------------------------------------------ context
    def __enter__(self) -> OutputFolder:
        self._check_inputs()
        self._acquire()
        try:
            self._check_existing()
            self._remove_leftovers()
            self.new = self.target.parent / f".{self.target.name}{_NEW}{secrets.token_hex(4)}"
            self.new.mkdir()
        except OSError as exc:
            self._release()
            raise DataError(f"cannot write in '{self.target.parent}': {exc.strerror}.") from None
        except BaseException:
            self._release()
            raise
        return self

    def __exit__(self, *exc: object) -> None:
        try:
            if self.new is not None and self.new.exists():
                shutil.rmtree(self.new, ignore_errors=True)
        finally:
            self._release()

    # ------------------------------------------------------------------ writing
    def path(self, relative: str) -> Path:
        """Where to write ``relative`` (a path inside the folder, with ``/``); parents made."""
        assert self.new is not None, "use the output folder as a context manager"
        out = self.new / relative
        out.parent.mkdir(parents=True, exist_ok=True)
        return out

    def record(self, relative: str, source: str | None = None) -> Path:
        """List a file written at ``path(relative)``; ``source`` is the data-derived name behind
        its file name (kept in the manifest). Returns the file's final path."""
        if relative not in self.files:
            self.files.append(relative)
        if source is not None:
            self.names[Path(relative).stem] = source
        return self.shown / relative

    def write_text(self, relative: str, text: str) -> Path:
        """Write a UTF-8 text file and list it."""
        self.path(relative).write_text(text, encoding="utf-8")
        return self.record(relative)

    def final(self, relative: str) -> Path:
        """The path a file will have once the run is in place."""
        return self.shown / relative

    def commit(self, manifest: dict[str, Any]) -> Path:
        """Write ``manifest.json`` (every file with its hash, ``complete``) and move into place."""
        assert self.new is not None
        payload = {**manifest, "files": {rel: file_hash(self.new / rel) for rel in self.files},
                   "names": dict(sorted(self.names.items())), "complete": True}
        (self.new / MANIFEST).write_text(json.dumps(payload, indent=2) + "\n", encoding="utf-8")
        self._fsync(self.new)
        if self.target.exists():
            if not _exchange(self.new, self.target):
                old = self.target.parent / f".{self.target.name}{_NEW}{secrets.token_hex(4)}"
                os.rename(self.target, old)
                os.rename(self.new, self.target)
                self.new = old
        else:
            os.rename(self.new, self.target)
            self.new = None
        if self.new is not None:  # now the old run: remove it
            shutil.rmtree(self.new, ignore_errors=True)
            self.new = None
        return self.shown / MANIFEST

    # ------------------------------------------------------------------ checks
    def _check_inputs(self) -> None:
        for source in self.inputs:
            if source == self.target or self.target in source.parents:
                raise DataError(f"the input '{source}' lies inside the output folder "
                                f"'{self.shown}'; a run never replaces its own input. Write the "
                                "results to another folder (--out).")

    def _check_existing(self) -> None:
        target = self.target
        if not os.path.lexists(target):
            return
        if not target.is_dir():
            raise DataError(f"the output path '{self.shown}' exists and is not a folder; "
                            "choose a folder name (--out).")
        if not os.access(target, os.W_OK | os.X_OK):
            raise DataError(f"the output folder '{self.shown}' is read-only; make it writable "
                            "or choose another folder (--out).")
        if self.overwrite:
            return
        present = _relative_files(target)
        if not present:
            return
        problem = self._foreign(target, present)
        if problem:
            raise DataError(f"the output folder '{self.shown}' {problem}; choose a new or empty "
                            "folder (--out), or pass --overwrite to replace its contents.")

    @staticmethod
    def _foreign(target: Path, present: set[str]) -> str:
        """Why the folder is not an earlier run of this package ("" when it is one)."""
        try:
            manifest = json.loads((target / MANIFEST).read_text(encoding="utf-8"))
            ours = "evidence" in manifest.get("versions", {})
        except (OSError, ValueError, AttributeError):
            ours = False
        if not ours:
            return "holds files that evidence did not write"
        listed = manifest.get("files")
        if not isinstance(listed, dict):  # an older release: its layout only
            extra = sorted(r for r in present if r not in _LEGACY
                           and not r.startswith(("tables/", "figures/")))
            return f"holds '{extra[0]}', which evidence did not write" if extra else ""
        for rel in sorted(present - {MANIFEST}):
            if rel not in listed:
                return f"holds '{rel}', which evidence did not write"
            if file_hash(target / rel) != listed[rel]:
                return f"holds '{rel}', changed since evidence wrote it"
        return ""

    def _remove_leftovers(self) -> None:
        """New folders of earlier runs that were killed before they could clean up."""
        for stale in self.target.parent.glob(f".{self.target.name}{_NEW}*"):
            shutil.rmtree(stale, ignore_errors=True)

    # ------------------------------------------------------------------ lock
    def _acquire(self) -> None:
        try:
            self.target.parent.mkdir(parents=True, exist_ok=True)
            handle = os.open(self._lock_path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as exc:
            raise DataError(f"cannot write in '{self.target.parent}': {exc.strerror}.") from None
        try:
            fcntl.flock(handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            os.close(handle)
            raise DataError(f"another evidence run is writing '{self.shown}'; wait for it to "
                            "finish or choose another folder (--out).") from None
        self._lock = handle

    def _release(self) -> None:
        if self._lock is None:
            return
        with contextlib.suppress(OSError):
            os.unlink(self._lock_path)
        os.close(self._lock)
        self._lock = None

    @staticmethod
    def _fsync(folder: Path) -> None:
        """Flush the new folder's files to disk before it replaces the old run."""
        for path in [*folder.rglob("*"), folder]:
            try:
                handle = os.open(path, os.O_RDONLY)
            except OSError:
                continue
            try:
                os.fsync(handle)
            except OSError:
                pass
            finally:
                os.close(handle)
