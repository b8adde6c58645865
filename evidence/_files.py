"""Which files the package reads: regular files only, of a size the user can raise.

A path that is a folder, a device (``/dev/zero``, also through a symlink), a named pipe or a
socket is refused before it is opened, and so is a file larger than the limit — 1 GiB by default,
``EVIDENCE_MAX_INPUT_MB`` (megabytes) to change it, or ``evidence --max-input-mb N``.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from evidence.errors import DataError

__all__ = ["check_source", "check_excel", "max_input_bytes", "DEFAULT_MAX_MB"]

DEFAULT_MAX_MB = 1024


def max_input_bytes() -> int:
    """The size limit of an input file in bytes (``EVIDENCE_MAX_INPUT_MB``, default 1024 MB)."""
    text = os.environ.get("EVIDENCE_MAX_INPUT_MB", "").strip()
    if not text:
        return DEFAULT_MAX_MB << 20
    try:
        megabytes = float(text)
    except ValueError:
        raise DataError(f"EVIDENCE_MAX_INPUT_MB={text!r} is not a number of megabytes.") from None
    if not megabytes > 0:
        raise DataError(f"EVIDENCE_MAX_INPUT_MB={text!r} must be positive.")
    return max(1, round(megabytes * (1 << 20)))


def check_source(path: str | Path) -> Path:
    """``path`` if it is a regular file within the size limit; a :class:`DataError` otherwise."""
    path = Path(path)
    try:
        info = path.stat()
    except FileNotFoundError:
        raise DataError(f"file '{path}' does not exist.") from None
    except OSError as exc:
        raise DataError(f"file '{path}' cannot be read: {exc.strerror}.") from None
    if stat.S_ISDIR(info.st_mode):
        raise DataError(f"'{path}' is a folder; pass a CSV, Parquet or Excel file.")
    if not stat.S_ISREG(info.st_mode):
        kind = ("a named pipe" if stat.S_ISFIFO(info.st_mode) else
                "a device" if stat.S_ISCHR(info.st_mode) or stat.S_ISBLK(info.st_mode) else
                "a socket" if stat.S_ISSOCK(info.st_mode) else "not a regular file")
        raise DataError(f"'{path}' is {kind}; only regular files are read.")
    limit = max_input_bytes()
    if info.st_size > limit:
        raise DataError(f"file '{path}' has {info.st_size / (1 << 20):.4g} MB, more than the "
                        f"limit of {limit / (1 << 20):.4g} MB; raise it with EVIDENCE_MAX_INPUT_MB "
                        "(or evidence --max-input-mb) if the file is right.")
    return path


#: A compressed part that expands more than this many times is treated as a zip bomb.
_MAX_RATIO = 200
_DTD = (b"<!doctype", b"<!entity")


def check_excel(path: str | Path) -> Path:
    """An ``.xlsx``/``.xlsm`` workbook that is safe to parse: a sound zip archive whose parts
    declare no DTD or entity (no external entities, no entity expansion) and expand to at most
    the input size limit, without an extreme compression ratio."""
    import zipfile

    path = Path(path)
    limit = max_input_bytes()
    try:
        with zipfile.ZipFile(path) as archive:
            parts = archive.infolist()
            if sum(p.file_size for p in parts) > limit:
                raise DataError(f"workbook '{path}' expands to more than {limit >> 20} MB; raise "
                                "EVIDENCE_MAX_INPUT_MB if the file is right.")
            for part in parts:
                if part.file_size > (1 << 20) and part.file_size > _MAX_RATIO * max(
                        part.compress_size, 1):
                    raise DataError(f"workbook '{path}': part '{part.filename}' expands "
                                    f"{part.file_size // max(part.compress_size, 1)} times; the "
                                    "file looks crafted, not a workbook.")
                if part.filename.endswith((".xml", ".rels", ".vml")):
                    with archive.open(part) as stream:
                        head = stream.read(1 << 16)
                    if _declares_dtd(head):
                        raise DataError(f"workbook '{path}': part '{part.filename}' declares a "
                                        "DTD or entities, which workbooks never need; it is not "
                                        "read (save the sheet again, or as CSV).")
    except zipfile.BadZipFile:
        raise DataError(f"file '{path}' is not a valid Excel workbook (an .xlsx file is a zip "
                        "archive; this one is damaged or not a workbook).") from None
    except (OSError, RuntimeError, NotImplementedError) as exc:  # encrypted or odd archives
        raise DataError(f"workbook '{path}' cannot be read: {exc}.") from None
    return path


def _declares_dtd(head: bytes) -> bool:
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        head = head.decode("utf-16", errors="ignore").encode("utf-8")
    lowered = head.lower()
    return any(mark in lowered for mark in _DTD)
