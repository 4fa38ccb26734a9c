"""Open input files safely: bytes (plain, gzip, zip member), content kind, text encoding, delimiter.

Nothing here parses rows. Every failure is an :class:`InputDataError` naming the file.
"""

from __future__ import annotations

import codecs
import zipfile
import zlib
from pathlib import Path
from typing import Final

from fleetfuel.errors import InputDataError

ZIP_SEPARATOR: Final = "!"
"""``archive.zip!member.csv`` names one member of a zip archive."""

SNIFF_BYTES: Final = 1 << 16
"""Bytes looked at to tell a file's kind and encoding. [bytes]"""

MAX_HEADER_BYTES: Final = 1 << 20
"""A header line longer than this is not a log header. [bytes]"""

_MAGIC: Final = (
    (b"\x89PNG\r\n\x1a\n", "a PNG image"),
    (b"%PDF", "a PDF document"),
    (b"GIF8", "a GIF image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"SQLite format 3\x00", "an SQLite database"),
    (b"\x7fELF", "an executable"),
    (b"MZ", "an executable"),
    (b"7z\xbc\xaf\x27\x1c", "a 7-zip archive"),
    (b"Rar!", "a RAR archive"),
    (b"BZh", "a bzip2 archive"),
    (b"\xfd7zXZ\x00", "an xz archive"),
)
CSV_MEMBER_SUFFIXES: Final = (".csv", ".tsv", ".txt", ".csv.gz")


def read_error(path: Path, exc: OSError) -> InputDataError:
    """The one-line input error for an operating-system failure reading ``path``."""
    if isinstance(exc, FileNotFoundError):
        return InputDataError(f"{path}: file not found")
    if isinstance(exc, IsADirectoryError):
        return InputDataError(f"{path}: is a directory")
    if isinstance(exc, PermissionError):
        return InputDataError(f"{path}: permission denied")
    return InputDataError(f"{path}: cannot read ({exc.strerror or exc})")


def split_member(path: Path | str) -> tuple[Path, str | None]:
    """``archive.zip!dir/a.csv`` -> (``archive.zip``, ``dir/a.csv``); a plain path -> (path, None)."""
    text = str(path)
    head, sep, member = text.partition(".zip" + ZIP_SEPARATOR)
    if sep:
        return Path(head + ".zip"), member
    return Path(text), None


def zip_members(path: Path) -> list[str]:
    """CSV member names of a zip archive, sorted (directories and other files left out)."""
    try:
        with zipfile.ZipFile(path) as archive:
            names = [i.filename for i in archive.infolist() if not i.is_dir()]
    except (zipfile.BadZipFile, OSError, ValueError) as exc:
        raise InputDataError(f"{path}: not a readable zip archive ({exc})") from exc
    members = sorted(
        n for n in names if n.lower().endswith(CSV_MEMBER_SUFFIXES) and not n.startswith("__MACOSX/")
    )
    if not members:
        raise InputDataError(f"{path}: zip archive holds no CSV file (found {len(names)} other member(s))")
    return members


def _read_zip_member(archive_path: Path, member: str, limit: int) -> bytes:
    try:
        with zipfile.ZipFile(archive_path) as archive:
            info = archive.getinfo(member)
            if info.file_size > limit:
                raise InputDataError(
                    f"{archive_path}!{member}: member is {info.file_size} bytes, over the limit {limit}"
                )
            with archive.open(info) as handle:
                data = handle.read(limit + 1)
    except KeyError as exc:
        raise InputDataError(f"{archive_path}: no member {member!r} in the zip archive") from exc
    except (zipfile.BadZipFile, OSError, EOFError, zlib.error, NotImplementedError, RuntimeError) as exc:
        raise InputDataError(f"{archive_path}!{member}: cannot read the zip member ({exc})") from exc
    if len(data) > limit:
        raise InputDataError(f"{archive_path}!{member}: decompressed size over the limit {limit} bytes")
    return data


def _gunzip(path: Path | str, data: bytes, limit: int) -> bytes:
    try:
        decompressor = zlib.decompressobj(wbits=31)
        out = bytearray()
        chunk = decompressor.decompress(data, limit + 1)
        out += chunk
        while decompressor.eof and decompressor.unused_data:  # concatenated gzip members
            rest = decompressor.unused_data
            decompressor = zlib.decompressobj(wbits=31)
            out += decompressor.decompress(rest, limit + 1 - len(out))
        if len(out) > limit or decompressor.unconsumed_tail:
            raise InputDataError(f"{path}: decompressed size over the limit {limit} bytes")
        if not decompressor.eof:
            raise InputDataError(
                f"{path}: gzip data is truncated (ended after {len(out)} decompressed bytes)"
            )
    except zlib.error as exc:
        raise InputDataError(f"{path}: corrupt gzip data ({exc})") from exc
    return bytes(out)


def read_bytes(path: Path | str, limit: int) -> bytes:
    """The (decompressed) content of a file, a ``.gz`` file, or a zip member ``a.zip!m.csv``."""
    archive, member = split_member(path)
    if member is not None:
        data = _read_zip_member(archive, member, limit)
    else:
        try:
            size = archive.stat().st_size
            if size > limit:
                raise InputDataError(f"{path}: file is {size} bytes, over the limit {limit}")
            data = archive.read_bytes()
        except OSError as exc:
            raise read_error(path, exc) from exc
    if data[:2] == b"\x1f\x8b":
        data = _gunzip(path, data, limit)
    return data


def binary_kind(head: bytes) -> str | None:
    """What a binary file looks like (``"a PNG image"``), or None for text-like content."""
    for magic, kind in _MAGIC:
        if head.startswith(magic):
            return kind
    return None


def _utf16_by_nulls(head: bytes) -> str | None:
    """UTF-16 without BOM: most NUL bytes on odd (LE) or even (BE) positions."""
    sample = head[: SNIFF_BYTES & ~1]
    if len(sample) < 2 or b"\x00" not in sample:
        return None
    even, odd = sample[0::2].count(0), sample[1::2].count(0)
    half = len(sample) // 2
    if odd > 0.3 * half and even < 0.05 * half:
        return "utf-16-le"
    if even > 0.3 * half and odd < 0.05 * half:
        return "utf-16-be"
    return None


def _decode_utf16(path: Path | str, data: bytes, codec: str) -> bytes:
    try:
        text = data.decode(codec)
    except UnicodeDecodeError as exc:
        raise InputDataError(
            f"{path}: not valid {codec.upper()} text ({exc.reason} at byte {exc.start})"
        ) from exc
    if "\x00" in text:
        raise InputDataError(f"{path}: binary content (NUL characters in {codec.upper()} text)")
    return text.encode("utf-8")


def _utf16_codec(data: bytes, encoding: str) -> str | None:
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return "utf-16"
    found = _utf16_by_nulls(data[:SNIFF_BYTES]) if encoding in ("auto", "utf-16") else None
    return "utf-16" if found is None and encoding == "utf-16" else found


def to_utf8(path: Path | str, data: bytes, encoding: str = "auto") -> tuple[bytes, str]:
    """UTF-8 bytes of a text file (BOM removed) and the encoding found.

    ``auto``: UTF-8 BOM, UTF-16 BOM, UTF-16 by NUL-byte pattern, else UTF-8 (cp1252 when the head
    is not valid UTF-8). Other NUL bytes mean binary content: :class:`InputDataError`.
    """
    if data.startswith(codecs.BOM_UTF8):
        return data[len(codecs.BOM_UTF8) :], "utf-8-sig"
    codec = _utf16_codec(data, encoding)
    if codec is not None:
        return _decode_utf16(path, data, codec), codec
    head = data[:SNIFF_BYTES]
    kind = binary_kind(head)
    if kind is not None:
        raise InputDataError(f"{path}: binary file ({kind}), not a text log")
    if b"\x00" in head:
        raise InputDataError(f"{path}: binary content (NUL bytes), not a text log")
    if encoding in ("latin-1", "cp1252"):
        return data.decode(encoding, errors="replace").encode("utf-8"), encoding
    try:
        head.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.start < len(head) - 4:  # not just a character cut at the sniff boundary
            if encoding == "utf-8":
                raise InputDataError(f"{path}: not valid UTF-8 text (byte {exc.start})") from exc
            return data.decode("cp1252", errors="replace").encode("utf-8"), "cp1252"
    return data, "utf-8"


def head_lines(path: Path | str, data: bytes, count: int) -> list[str]:
    """The first ``count`` non-empty lines as text (for header detection)."""
    end = 0
    lines: list[str] = []
    while len(lines) < count and end < len(data):
        nl = data.find(b"\n", end, end + MAX_HEADER_BYTES)
        if nl < 0:
            if len(data) - end > MAX_HEADER_BYTES:
                raise InputDataError(
                    f"{path}: a line is longer than {MAX_HEADER_BYTES} bytes: not a text log"
                )
            nl = len(data)
        line = data[end:nl].rstrip(b"\r").decode("utf-8", errors="replace")
        end = nl + 1
        if line.strip():
            lines.append(line)
    return lines


def sniff_delimiter(line: str) -> str:
    """The most frequent of ``,`` ``;`` TAB ``|`` in a header line (``,`` when none occurs)."""
    counts = {d: line.count(d) for d in (",", ";", "\t", "|")}
    best = max(counts, key=lambda d: counts[d])
    return best if counts[best] else ","
