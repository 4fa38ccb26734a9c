"""Refuse hostile XML before any parser sees it, and build parsers that cannot be talked into expanding.

A GPX file never needs a document type declaration. A ``<!DOCTYPE ...>`` is where entity
declarations live, and entities are how XML attacks work: nested internal entities blow up
memory ("billion laughs"), external entities (``SYSTEM "file:///etc/passwd"``) read local files
or fetch URLs, parameter entities smuggle both into the DTD itself. Third-party GPX libraries pick
their XML backend at import time (a DOM parser with entity resolution on by default when lxml is
installed), so fleetfuel does not rely on parser settings alone:

1. :func:`scan_prolog` reads only the first :data:`PROLOG_LIMIT_BYTES` of the file, finds its
   encoding (byte-order mark, or the UTF-16/UTF-32 signatures of XML 1.0 Appendix F), walks the
   prolog (XML declaration, comments, processing instructions, white space) and refuses anything
   else that starts with ``<!`` before the root element. By the XML grammar (XML 1.0, 5th ed.,
   production [22] ``prolog``) a DOCTYPE can only appear there, and ENTITY declarations only
   inside a DOCTYPE, so nothing can be declared once the root element has begun.
2. :func:`safe_xml_parser` and :func:`safe_iterparse` configure lxml with entity resolution off,
   no network, no DTD loading and no huge-tree mode (libxml2's own depth/size limits stay on),
   as a second line of defence.

References
----------
.. [1] W3C, *Extensible Markup Language (XML) 1.0*, 5th ed., 2008: sections 2.8 (prolog and
   document type declaration), 4.2 (entity declarations) and Appendix F (autodetection of
   character encodings).
.. [2] OWASP, *XML External Entity Prevention Cheat Sheet* (disable DTDs entirely where possible).
"""

from __future__ import annotations

import codecs
import re
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Final

from lxml import etree

from fleetfuel.errors import InputDataError

PROLOG_LIMIT_BYTES: Final = 64 * 1024
"""Bytes read by the pre-scan. A real prolog is one XML declaration and perhaps a comment
(well under 1 KiB); a file whose root element does not start within this many bytes is refused
rather than scanned further, so the scan stays cheap and bounded."""

# (signature, codec, bytes of the signature that are a byte-order mark to skip), longest first:
# the UTF-32 LE mark starts with the UTF-16 LE mark. XML 1.0 Appendix F.1.
_SIGNATURES: Final = (
    (codecs.BOM_UTF32_BE, "utf-32-be", 4),
    (codecs.BOM_UTF32_LE, "utf-32-le", 4),
    (codecs.BOM_UTF8, "utf-8", 3),
    (codecs.BOM_UTF16_BE, "utf-16-be", 2),
    (codecs.BOM_UTF16_LE, "utf-16-le", 2),
    (b"\x00\x00\x00<", "utf-32-be", 0),
    (b"<\x00\x00\x00", "utf-32-le", 0),
    (b"\x00<\x00?", "utf-16-be", 0),
    (b"<\x00?\x00", "utf-16-le", 0),
)
_EBCDIC_SIGNATURE: Final = b"\x4c\x6f\xa7\x94"  # '<?xm' in EBCDIC (Appendix F.1)
_CODE_UNIT_BYTES: Final = {"utf-32-be": 4, "utf-32-le": 4, "utf-16-be": 2, "utf-16-le": 2, "utf-8": 1, "latin-1": 1}

_WHITESPACE: Final = " \t\r\n"
_NAME: Final = re.compile(r"[^\s/>]+")


@dataclass(frozen=True, slots=True, kw_only=True)
class Prolog:
    """What the pre-scan learned about a file that passed it.

    Attributes
    ----------
    encoding : str
        Codec the markup was decoded with for the scan (``"latin-1"`` stands for any
        ASCII-compatible encoding; the parser reads the declared encoding itself).
    has_bom : bool
        The file starts with a byte-order mark.
    root_name : str
        Qualified name of the root element as written (e.g. ``"gpx"`` or ``"g:gpx"``).
    """

    encoding: str
    has_bom: bool
    root_name: str

    @property
    def root_local_name(self) -> str:
        """Root element name without its namespace prefix."""
        return self.root_name.rpartition(":")[2]


def _detect_codec(head: bytes, path: Path) -> tuple[str, int]:
    for signature, codec, bom_bytes in _SIGNATURES:
        if head.startswith(signature):
            return codec, bom_bytes
    if head.startswith(_EBCDIC_SIGNATURE):
        raise InputDataError(f"{path}: EBCDIC-encoded XML is not supported; expected UTF-8 or UTF-16")
    return "latin-1", 0


def _refuse_declaration(path: Path, text: str, pos: int) -> InputDataError:
    word = _NAME.match(text, pos + 2)
    what = f"<!{word.group(0)}" if word else "<!"
    return InputDataError(
        f"{path}: refused: {what} declaration before the root element (at character {pos}); "
        "a GPX file needs no document type or entity declarations, and they can expand entities or read files"
    )


_SKIPPED: Final = (("<?", "?>", "processing instruction or XML declaration"), ("<!--", "-->", "comment"))
"""Prolog markup the scan steps over: (opener, closer, what it is)."""


def _skip_markup(text: str, pos: int) -> tuple[int, str | None]:
    """If ``text[pos:]`` opens a comment or PI, return (position after it or -1, its name); else (pos, None)."""
    for opener, closer, what in _SKIPPED:
        if text.startswith(opener, pos):
            close = text.find(closer, pos + len(opener))
            return (close + len(closer) if close >= 0 else -1), what
    return pos, None


def _scan(text: str, path: Path, truncated: bool) -> str:
    """Walk the prolog of ``text``; return the root element's name or raise."""
    window = f"within the first {PROLOG_LIMIT_BYTES} bytes; refused"
    pos, end = 0, len(text)
    while True:
        while pos < end and text[pos] in _WHITESPACE:
            pos += 1
        if pos >= end:
            if truncated:
                raise InputDataError(f"{path}: no root element {window}")
            raise InputDataError(f"{path}: no root element; expected an XML document starting with <gpx")
        pos, skipped = _skip_markup(text, pos)
        if skipped is None and text.startswith("<!", pos):
            raise _refuse_declaration(path, text, pos)
        if skipped is None and text.startswith("<", pos):
            name = _NAME.match(text, pos + 1)
            if name is None:
                raise InputDataError(f"{path}: malformed start tag at character {pos}; expected <gpx")
            return name.group(0)
        if skipped is None:
            found = text[pos : pos + 12].encode("unicode_escape").decode("ascii")
            raise InputDataError(f"{path}: not XML: expected '<' at character {pos}, found {found!r}")
        if pos < 0:
            where = window if truncated else "before the end of the file; not a complete XML document"
            raise InputDataError(f"{path}: {skipped} not closed {where}")


def scan_prolog(path: Path, limit_bytes: int = PROLOG_LIMIT_BYTES) -> Prolog:
    """Pre-scan the start of ``path`` and refuse DOCTYPE/ENTITY declarations.

    Reads at most ``limit_bytes`` bytes; never hands the file to an XML parser.

    Parameters
    ----------
    path : Path
        File to check.
    limit_bytes : int
        Bytes to read; the root element must start within them.

    Returns
    -------
    Prolog
        Encoding, byte-order mark and root element name of an acceptable file.

    Raises
    ------
    InputDataError
        One line naming the file: unreadable, empty, not XML, a declaration (``<!DOCTYPE``,
        ``<!ENTITY``, ...) before the root element, or a prolog longer than ``limit_bytes``.
    """
    try:
        with open(path, "rb") as handle:
            head = handle.read(limit_bytes + 1)
    except OSError as exc:
        raise InputDataError(f"{path}: cannot open: {exc.strerror or exc}") from None
    truncated = len(head) > limit_bytes
    head = head[:limit_bytes]
    if not head.strip():
        raise InputDataError(f"{path}: empty file; expected a GPX (XML) document")
    codec, bom_bytes = _detect_codec(head, path)
    body = head[bom_bytes:]
    unit = _CODE_UNIT_BYTES[codec]
    body = body[: len(body) - len(body) % unit]
    text = body.decode(codec, errors="replace")
    root_name = _scan(text, path, truncated)
    return Prolog(encoding=codec, has_bom=bom_bytes > 0, root_name=root_name)


_PARSER_OPTIONS: Final = {
    "resolve_entities": False,
    "no_network": True,
    "load_dtd": False,
    "dtd_validation": False,
    "huge_tree": False,
    "remove_comments": True,
    "remove_pis": True,
}


def safe_xml_parser() -> etree.XMLParser:
    """An lxml parser that resolves no entities, loads no DTD and never touches the network."""
    return etree.XMLParser(**_PARSER_OPTIONS)


def safe_iterparse(
    source: IO[bytes] | str | Path, *, events: tuple[str, ...], tag: tuple[str, ...] | None = None
) -> Iterator[tuple[str, etree._Element]]:
    """``lxml.etree.iterparse`` with the settings of :func:`safe_xml_parser`.

    Call :func:`scan_prolog` on the file first: the parser settings are the second line of defence.
    """
    return etree.iterparse(str(source) if isinstance(source, Path) else source, events=events, tag=tag, **_PARSER_OPTIONS)
