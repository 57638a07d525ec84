"""Reading and writing zip files that arrive from outside, within safety limits.

Bundles and libraries travel by e-mail and upload, so :class:`CheckedZip` treats every zip as hostile: it refuses,
with a plain message and before writing anything, entries with absolute paths, drive letters, backslashes or
``..``; symbolic links and other non-regular entries; encrypted entries; more than :attr:`ZipLimits.max_entries`
entries; an entry or a total larger than the limits; an entry compressed more than :attr:`ZipLimits.max_ratio`
times (a "zip bomb"); archives inside the archive; and names the caller does not allow. Sizes are read from the zip
directory and enforced again while streaming, so a header that lies does not help; the number of entries is
counted from the directory's own records before it is parsed, not taken from the end record's claim. Text must be UTF-8. Files are
written only below the destination folder (checked after resolving every path). :func:`write_checked_zip` writes
zips that such a reader accepts.
"""

from __future__ import annotations

import codecs
import io
import os
import re
import stat
import tempfile
import time
import zipfile
import zlib
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from pathlib import Path

MIB = 1024 * 1024

ARCHIVE_SUFFIXES = (
    ".zip", ".gz", ".tgz", ".tar", ".bz2", ".tbz", ".xz", ".txz", ".7z", ".rar", ".zst", ".lz4", ".lzma", ".jar",
    ".whl", ".egg", ".cab", ".iso", ".z",
)

_ARCHIVE_MAGIC = (
    b"PK\x03\x04", b"PK\x05\x06", b"PK\x07\x08", b"\x1f\x8b", b"\xfd7zXZ\x00", b"7z\xbc\xaf\x27\x1c",
    b"Rar!\x1a\x07", b"\x28\xb5\x2f\xfd", b"\x04\x22\x4d\x18", b"\x5d\x00\x00",
)

_CHUNK = 1 << 16


class ZipRefused(Exception):
    """A zip file could not be written or was refused; the message says why in plain words."""


@dataclass(frozen=True)
class ZipLimits:
    """Safety limits for reading a zip file.

    Attributes
    ----------
    max_entries : int
        Most entries (files and folders) the zip may list.
    max_entry_bytes : int
        Largest unpacked size of one entry. [bytes]
    max_total_bytes : int
        Largest unpacked size of all entries together. [bytes]
    max_ratio : float
        Largest ratio of unpacked to packed size of one entry. [-]
    ratio_floor_bytes : int
        Entries that unpack to no more than this are exempt from ``max_ratio``: they cannot exhaust memory or
        disk whatever their ratio, and short text files compress well. [bytes]
    """

    max_entries: int = 200
    max_entry_bytes: int = 100 * MIB
    max_total_bytes: int = 300 * MIB
    max_ratio: float = 100.0
    ratio_floor_bytes: int = 1 * MIB


DEFAULT_LIMITS = ZipLimits()
"""Limits for one run's zip (the limits of :func:`engine.storage.bundle.read_bundle`)."""


# ====================================================================================== writing zips
def _deflated_size(data: bytes) -> int:
    """Size of ``data`` deflated exactly as :func:`write_checked_zip` deflates it (raw deflate, level 1)."""
    packer = zlib.compressobj(1, zlib.DEFLATED, -15)
    return len(packer.compress(data)) + len(packer.flush())


def write_checked_zip(
    path: str | Path, entries: Iterable[tuple[str, bytes]], limits: ZipLimits = DEFAULT_LIMITS
) -> Path:
    """Write ``entries`` (name, bytes) to the zip ``path`` so that :class:`CheckedZip` accepts every one.

    Entries are deflated at a fast level; one that would deflate more than half of ``limits.max_ratio`` (and
    would so look like a zip bomb to a reader) is stored uncompressed. The file appears at ``path`` only when
    complete.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temp_name = tempfile.mkstemp(prefix=".partial-", suffix=".zip", dir=path.parent)
    os.close(handle)
    try:
        with zipfile.ZipFile(temp_name, "w") as archive:
            for name, data in entries:
                info = zipfile.ZipInfo(name, date_time=time.localtime()[:6])
                info.compress_type = zipfile.ZIP_DEFLATED
                if len(data) > limits.ratio_floor_bytes and len(data) > 0.5 * limits.max_ratio * max(
                    _deflated_size(data), 1
                ):
                    info.compress_type = zipfile.ZIP_STORED
                info.external_attr = (stat.S_IFREG | 0o644) << 16
                archive.writestr(info, data, compresslevel=1)
        os.replace(temp_name, path)
    finally:
        if os.path.exists(temp_name):
            os.unlink(temp_name)
    return path


# ====================================================================================== reading zips safely
def _entry_problem(
    name: str, raw_name: str, allowed: Callable[[str], bool], allowed_dirs: set[str], archive_ok: bool = False
) -> str | None:
    """Why an entry name is refused, or None. ``archive_ok``: the entry is a file the caller reads as an
    archive of its own (a zipped Shapefile), not a nested archive to unpack."""
    if "\x00" in raw_name or any(ord(ch) < 32 for ch in name):
        return "has control characters in its name"
    if "\\" in name:
        return "has a backslash in its name (only '/' separates folders in a zip)"
    if name.startswith("/"):
        return "is an absolute path"
    if re.match(r"[A-Za-z]:", name):
        return "starts with a drive letter"
    if ".." in name.split("/"):
        return "climbs out of the destination folder with '..'"
    if name.lower().endswith(ARCHIVE_SUFFIXES) and not (archive_ok and allowed(name)):
        return "is an archive inside the archive (nested archives are refused)"
    if name.endswith("/"):
        return None if name in allowed_dirs or allowed(name) else "is a folder a heatmosaic zip does not have"
    if not allowed(name):
        return "is not a file a heatmosaic zip may hold"
    return None


def _looks_like_archive(head: bytes) -> bool:
    if any(head.startswith(magic) for magic in _ARCHIVE_MAGIC):
        return True
    if head.startswith(b"BZh") and head[4:10] == b"1AY&SY":
        return True
    return head[257:262] == b"ustar"


def _directory_entry_count(handle, stop_after: int) -> int | None:
    """Entries of the central directory, counted by walking its records (not the end record's claim).

    The end-of-central-directory record gives the directory's size; the directory is taken to end where that
    record starts (as zipfile itself does) and its file headers (signature ``PK\\x01\\x02``, 46 bytes plus
    name, extra field and comment; PKWARE APPNOTE.TXT section 4.3.12) are walked one by one. Counting stops
    after ``stop_after``. None when there is no readable end record (zipfile then says why).
    """
    handle.seek(0, os.SEEK_END)
    size = handle.tell()
    tail_length = min(size, 22 + 65535)
    handle.seek(size - tail_length)
    tail = handle.read(tail_length)
    position = tail.rfind(b"PK\x05\x06")
    if position < 0 or position + 22 > len(tail):
        handle.seek(0)
        return None
    end_record = size - tail_length + position
    directory_size = int.from_bytes(tail[position + 12 : position + 16], "little")
    claimed = int.from_bytes(tail[position + 10 : position + 12], "little")
    if position >= 20 + 56 and tail[position - 20 : position - 16] == b"PK\x06\x07":
        # zip64: the directory ends where the zip64 end record (56 bytes, APPNOTE 4.3.14) starts
        record = position - 20 - 56
        if tail[record : record + 4] == b"PK\x06\x06":
            end_record = size - tail_length + record
            directory_size = int.from_bytes(tail[record + 40 : record + 48], "little")
            claimed = 0xFFFF
    if directory_size == 0xFFFFFFFF or directory_size > end_record:
        # zip64 or a size that cannot be: scan the whole file before the end record for directory headers
        start = 0
        directory_size = end_record
    else:
        start = end_record - directory_size
    handle.seek(start)
    directory = handle.read(min(directory_size, 256 * MIB))
    handle.seek(0)
    count = 0
    offset = 0
    while offset + 46 <= len(directory) and directory[offset : offset + 4] == b"PK\x01\x02":
        name_length = int.from_bytes(directory[offset + 28 : offset + 30], "little")
        extra_length = int.from_bytes(directory[offset + 30 : offset + 32], "little")
        comment_length = int.from_bytes(directory[offset + 32 : offset + 34], "little")
        offset += 46 + name_length + extra_length + comment_length
        count += 1
        if count > stop_after:
            break
    if start == 0 and count == 0:
        # the walk could not start at the file's beginning: count the header signatures instead
        count = directory.count(b"PK\x01\x02")
    return max(count, 0 if claimed == 0xFFFF else claimed)


class CheckedZip:
    """A zip file opened for reading under :class:`ZipLimits`.

    Every entry is checked when the file is opened (names, types, sizes and ratios from the zip directory);
    :meth:`read` and :meth:`extract` enforce the limits again while streaming and require UTF-8 text without NUL
    bytes that is not itself an archive, except for the entries ``binary`` and ``archives`` name.

    Parameters
    ----------
    source : str, Path, bytes or binary file object
        The zip.
    allowed : callable
        ``allowed(name) -> bool`` for file entries.
    limits : ZipLimits
    what : str
        What the zip is, for messages ("bundle", "library").
    allowed_dirs : set of str
        Folder entries (ending in '/') that may appear (and any folder entry ``allowed`` accepts).
    binary : callable, optional
        ``binary(name) -> bool`` for entries that may hold any bytes (a GeoPackage, an EPW file): no UTF-8 and
        NUL check. Every size and ratio limit still applies.
    archives : callable, optional
        ``archives(name) -> bool`` for entries that are archives read as one file (a zipped Shapefile opened by
        GDAL), not unpacked here; they must also be ``binary``.
    """

    def __init__(self, source, allowed, limits: ZipLimits = DEFAULT_LIMITS, what: str = "bundle",
                 allowed_dirs: set[str] | frozenset = frozenset(), binary: Callable[[str], bool] | None = None,
                 archives: Callable[[str], bool] | None = None):
        self.what = what
        self._binary = binary or (lambda name: False)
        self._archives = archives or (lambda name: False)
        self.limits = limits
        self._total = 0
        self._own_handle = None
        handle = self._open_source(source)
        try:
            counted = _directory_entry_count(handle, limits.max_entries)
            if counted is not None and counted > limits.max_entries:
                self._refuse(f"its directory lists at least {counted} entries, more than the {limits.max_entries} "
                             "allowed")
            try:
                self._zip = zipfile.ZipFile(handle)
            except (zipfile.BadZipFile, zipfile.LargeZipFile, ValueError, EOFError, OSError) as exc:
                raise ZipRefused(f"the {what} is not a readable zip file ({exc})") from None
            try:
                self._infos = self._check_directory(allowed, set(allowed_dirs))
            except BaseException:
                self._zip.close()
                raise
        except BaseException:
            self._close_handle()
            raise
        self.names = [name for name in self._infos if not name.endswith("/")]

    def _open_source(self, source):
        if isinstance(source, (bytes, bytearray, memoryview)):
            return io.BytesIO(bytes(source))
        if isinstance(source, (str, os.PathLike)):
            try:
                self._own_handle = open(source, "rb")
            except OSError as exc:
                raise ZipRefused(f"cannot open the {self.what} '{source}': {exc.strerror or exc}") from None
            return self._own_handle
        if hasattr(source, "read"):
            if hasattr(source, "seek") and getattr(source, "seekable", lambda: True)():
                source.seek(0)
                return source
            data = source.read(self.limits.max_total_bytes + 64 * MIB)
            return io.BytesIO(data)
        raise ZipRefused(f"cannot read a {self.what} from a {type(source).__name__}")

    def _close_handle(self):
        if self._own_handle is not None:
            self._own_handle.close()
            self._own_handle = None

    def _refuse(self, reason: str, entry: str | None = None):
        where = f"entry '{entry}' " if entry is not None else ""
        raise ZipRefused(f"{self.what} refused: {where}{reason}. Nothing was kept.")

    def _check_directory(self, allowed, allowed_dirs) -> dict[str, zipfile.ZipInfo]:
        limits = self.limits
        infos = self._zip.infolist()
        if len(infos) > limits.max_entries:
            self._refuse(f"it holds {len(infos)} entries, more than the {limits.max_entries} allowed")
        checked: dict[str, zipfile.ZipInfo] = {}
        total = 0
        for info in infos:
            name = info.filename
            problem = _entry_problem(name, info.orig_filename, allowed, allowed_dirs,
                                     self._archives(name) and self._binary(name))
            if problem:
                self._refuse(problem, name)
            mode = (info.external_attr >> 16) & 0xFFFF
            if stat.S_ISLNK(mode):
                self._refuse("is a symbolic link", name)
            if stat.S_IFMT(mode) not in (0, stat.S_IFREG, stat.S_IFDIR) or info.external_attr & 0x400:
                self._refuse("is not a regular file", name)
            if info.flag_bits & 0x1:
                self._refuse("is encrypted", name)
            if info.compress_type not in (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED, zipfile.ZIP_BZIP2,
                                          zipfile.ZIP_LZMA):
                self._refuse(f"uses an unknown compression method ({info.compress_type})", name)
            if name in checked:
                self._refuse("appears twice", name)
            if info.file_size > limits.max_entry_bytes:
                self._refuse(
                    f"would unpack to {info.file_size / MIB:.1f} MiB, more than the "
                    f"{limits.max_entry_bytes / MIB:.0f} MiB allowed for one file", name)
            total += info.file_size
            if total > limits.max_total_bytes:
                self._refuse(
                    f"the entries would unpack to more than the {limits.max_total_bytes / MIB:.0f} MiB allowed "
                    "in total")
            if info.file_size > limits.ratio_floor_bytes and info.file_size > limits.max_ratio * max(
                info.compress_size, 1
            ):
                self._refuse(
                    f"is compressed {info.file_size / max(info.compress_size, 1):.0f} times, more than the "
                    f"{limits.max_ratio:.0f} times allowed (a zip bomb)", name)
            checked[name] = info
        return checked

    def _stream(self, name: str, sink: Callable[[bytes], None]) -> int:
        """Unpack entry ``name`` chunk by chunk into ``sink`` while enforcing every limit."""
        info = self._infos.get(name)
        if info is None or name.endswith("/"):
            raise ZipRefused(f"the {self.what} has no file '{name}'")
        limits = self.limits
        decoder = codecs.getincrementaldecoder("utf-8")("strict")
        binary = bool(self._binary(name))
        archive_ok = binary and bool(self._archives(name))
        head = b""
        written = 0
        try:
            with self._zip.open(info) as member:
                while True:
                    chunk = member.read(_CHUNK)
                    if not chunk:
                        break
                    written += len(chunk)
                    self._total += len(chunk)
                    if written > info.file_size:
                        self._refuse("unpacks to more bytes than its header says", name)
                    if written > limits.max_entry_bytes:
                        self._refuse("unpacks to more than the size allowed for one file", name)
                    if self._total > limits.max_total_bytes:
                        self._refuse("the entries unpack to more than the total size allowed", name)
                    if written > limits.ratio_floor_bytes and written > limits.max_ratio * max(info.compress_size, 1):
                        self._refuse("is compressed more than allowed (a zip bomb)", name)
                    if len(head) < 512 and not archive_ok:
                        head += chunk[: 512 - len(head)]
                        if _looks_like_archive(head):
                            self._refuse("is an archive inside the archive (nested archives are refused)", name)
                    if not binary:
                        if b"\x00" in chunk:
                            self._refuse("holds NUL bytes, so it is not text", name)
                        try:
                            decoder.decode(chunk)
                        except UnicodeDecodeError:
                            self._refuse("is not UTF-8 text", name)
                    sink(chunk)
            try:
                if not binary:
                    decoder.decode(b"", final=True)
            except UnicodeDecodeError:
                self._refuse("is not UTF-8 text", name)
        except ZipRefused:
            raise
        except (zipfile.BadZipFile, zlib.error, EOFError, NotImplementedError, RuntimeError, ValueError,
                OSError) as exc:
            self._refuse(f"is damaged ({exc})", name)
        if written != info.file_size:
            self._refuse("unpacks to fewer bytes than its header says", name)
        return written

    def read(self, name: str) -> bytes:
        """The bytes of entry ``name``."""
        buffer = bytearray()
        self._stream(name, buffer.extend)
        return bytes(buffer)

    def extract(self, name: str, root: Path) -> Path:
        """Write entry ``name`` below ``root`` (never outside it, never over an existing file)."""
        root = Path(root).resolve()
        target = root.joinpath(*name.split("/"))
        parent = target.parent
        parent.mkdir(parents=True, exist_ok=True)
        resolved_parent = parent.resolve()
        if resolved_parent != root and root not in resolved_parent.parents:
            self._refuse("would be written outside the destination folder", name)
        target = resolved_parent / target.name
        flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_BINARY", 0)
        try:
            descriptor = os.open(target, flags, 0o644)
        except FileExistsError:
            self._refuse("would overwrite an existing file", name)
        with os.fdopen(descriptor, "wb") as handle:
            self._stream(name, handle.write)
        return target

    def close(self) -> None:
        self._zip.close()
        self._close_handle()

    def __enter__(self) -> "CheckedZip":
        return self

    def __exit__(self, *exc_info) -> None:
        self.close()


