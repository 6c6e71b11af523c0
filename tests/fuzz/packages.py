"""Minimal .xlsx packages written part by part, so that tests can break any part of them (drop, corrupt,
truncate) and plant hostile content (far rows, huge column ranges, zip bombs) small on disk."""

from __future__ import annotations

import zipfile
import zlib
from collections.abc import Iterable
from pathlib import Path

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
SHEET = "xl/worksheets/sheet1.xml"
STRINGS = "xl/sharedStrings.xml"

CONTENT_TYPES = (
    '<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
    '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
    '<Default Extension="xml" ContentType="application/xml"/>'
    '<Override PartName="/xl/workbook.xml" '
    'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
    '<Override PartName="/xl/worksheets/sheet1.xml" '
    'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
    '<Override PartName="/xl/sharedStrings.xml" '
    'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/>'
    "</Types>")
ROOT_RELS = (f'<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="{PKG_REL}">'
             f'<Relationship Id="rId1" Type="{REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>')
WORKBOOK = (f'<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="{MAIN}" xmlns:r="{REL}"><sheets>'
            '<sheet name="Data" sheetId="1" r:id="rId1"/></sheets></workbook>')
WORKBOOK_RELS = (f'<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="{PKG_REL}">'
                 f'<Relationship Id="rId1" Type="{REL}/worksheet" Target="worksheets/sheet1.xml"/>'
                 f'<Relationship Id="rId2" Type="{REL}/sharedStrings" Target="sharedStrings.xml"/>'
                 "</Relationships>")


def sheet_xml(rows: str, before: str = "") -> bytes:
    """A worksheet part with `rows` (the <row> elements) and `before` (e.g. <cols>) ahead of sheetData."""
    return f'<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="{MAIN}">{before}<sheetData>{rows}' \
           "</sheetData></worksheet>".encode()


def data_rows(subgroups: int = 25, size: int = 4, first: int = 1) -> str:
    """A header row (shared strings 0..size) and `subgroups` rows of `size` readings, from row `first`."""
    letters = "ABCDEFGHIJ"
    header = "".join(f'<c r="{letters[j]}{first}" t="s"><v>{j}</v></c>' for j in range(size + 1))
    rows = [f'<row r="{first}">{header}</row>']
    for i in range(subgroups):
        r = first + 1 + i
        cells = f'<c r="A{r}"><v>{i + 1}</v></c>' + "".join(
            f'<c r="{letters[j + 1]}{r}"><v>{10 + 0.01 * ((i * 7 + j * 3) % 11):.2f}</v></c>' for j in range(size))
        rows.append(f'<row r="{r}">{cells}</row>')
    return "".join(rows)


def strings_xml(texts: Iterable[str]) -> bytes:
    """A shared-strings part holding `texts`."""
    items = "".join(f"<si><t>{t}</t></si>" for t in texts)
    return f'<?xml version="1.0" encoding="UTF-8"?><sst xmlns="{MAIN}">{items}</sst>'.encode()


def good_parts(subgroups: int = 25, size: int = 4) -> dict[str, bytes]:
    """The parts of a small sound workbook: one sheet 'Data' of subgroups across."""
    return {
        "[Content_Types].xml": CONTENT_TYPES.encode(),
        "_rels/.rels": ROOT_RELS.encode(),
        "xl/workbook.xml": WORKBOOK.encode(),
        "xl/_rels/workbook.xml.rels": WORKBOOK_RELS.encode(),
        STRINGS: strings_xml(["Subgroup", *(f"Reading {j + 1}" for j in range(size))]),
        SHEET: sheet_xml(data_rows(subgroups, size)),
    }


def write_package(path: Path, parts: dict[str, bytes | Iterable[bytes]]) -> Path:
    """Write `parts` as a deflated zip; a part given as an iterable of pieces is streamed (a bomb of
    gigabytes takes no memory to write)."""
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as package:
        for name, content in parts.items():
            if isinstance(content, bytes):
                package.writestr(name, content)
            else:
                with package.open(name, "w", force_zip64=True) as part:
                    for piece in content:
                        part.write(piece)
    return path


def repeated(head: bytes, body: bytes, times: int, tail: bytes) -> Iterable[bytes]:
    """`head`, `body` `times` times, `tail`, in pieces of about 4 MB."""
    yield head
    per = max(1, (4 << 20) // len(body))
    block = body * per
    full, rest = divmod(times, per)
    for _ in range(full):
        yield block
    yield body * rest
    yield tail


def ratio_of(content: bytes) -> float:
    """How much deflate compresses `content` (uncompressed / compressed)."""
    return len(content) / len(zlib.compress(content, 6))


def count_rows(subgroups: int = 25) -> str:
    """A header row (shared strings 0..2: lot, defectives, inspected) and `subgroups` rows of counts:
    an attribute sheet evaluates quickly (no fit of the data's shape)."""
    rows = ['<row r="1">' + "".join(f'<c r="{c}1" t="s"><v>{j}</v></c>' for j, c in enumerate("ABC")) + "</row>"]
    for i in range(subgroups):
        r = i + 2
        rows.append(f'<row r="{r}"><c r="A{r}"><v>{i + 1}</v></c><c r="B{r}"><v>{(i * 7) % 5}</v></c>'
                    f'<c r="C{r}"><v>200</v></c></row>')
    return "".join(rows)


def count_parts(subgroups: int = 25) -> dict[str, bytes]:
    """The parts of a small sound workbook of attribute counts (one sheet 'Data', a p chart)."""
    parts = good_parts()
    parts[STRINGS] = strings_xml(["Lot", "Defectives", "Inspected"])
    parts[SHEET] = sheet_xml(count_rows(subgroups))
    return parts
