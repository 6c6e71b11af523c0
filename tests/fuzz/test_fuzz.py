"""Fuzz the command line with malformed input: packages with parts dropped, corrupted or truncated, sheets
of odd rows, columns, merges and cell types, odd cell values, and CSV text. For every case, through
`main` in-process: no traceback, exit 0 or 3 (README, exit codes), the input's bytes unchanged, and the
output written whole or not at all (nothing else is left in its folder); a refusal is said in the tool's
own words, never an exception's name. Examples are few and derandomized so the suite stays fast and
stable (hypothesis explores the same cases each run)."""

from __future__ import annotations

import contextlib
import hashlib
import io
import re
import tempfile
from pathlib import Path
from xml.sax.saxutils import escape

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sheettool.cli.main import main
from tests.fuzz.packages import SHEET, count_parts, count_rows, sheet_xml, write_package

FUZZ = settings(max_examples=10, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
EXCEPTION_NAME = re.compile(r"\b[A-Z][A-Za-z]*(Error|Exception|Forbidden)\b|Traceback")


def check_cli(name: str, content: bytes, words: bool = True) -> int:
    """Evaluate `content` saved as `name` and hold the run to the invariants; the exit code."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        path, out = folder / name, folder / "out.xlsx"
        path.write_bytes(content)
        before = hashlib.sha256(content).hexdigest()
        err = io.StringIO()
        with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
            code = main(["evaluate", str(path), "-o", str(out), "--quiet"])
        message = err.getvalue()
        assert code in (0, 3), message
        assert hashlib.sha256(path.read_bytes()).hexdigest() == before
        left = {p.name for p in folder.iterdir()}
        assert left == ({name, "out.xlsx"} if code == 0 else {name}), (left, message)
        assert "Traceback" not in message
        if code:
            assert message.count("\n") == 1 and str(path) in message, message
        if words:
            assert not EXCEPTION_NAME.search(message), message
        return code


def package_bytes(parts: dict[str, bytes]) -> bytes:
    with tempfile.TemporaryDirectory() as tmp:
        return write_package(Path(tmp) / "p.xlsx", parts).read_bytes()


PART_NAMES = sorted(count_parts())


@st.composite
def broken_packages(draw: st.DrawFn) -> bytes:
    """A sound package with one part dropped, corrupted, truncated or replaced, or the zip itself cut or
    overwritten somewhere."""
    parts = count_parts()
    how = draw(st.sampled_from(["drop", "corrupt", "truncate", "replace", "cut zip", "overwrite zip"]))
    name = draw(st.sampled_from(PART_NAMES))
    content = parts[name]
    if how == "drop":
        del parts[name]
    elif how == "corrupt":
        at = draw(st.integers(0, len(content) - 1))
        parts[name] = content[:at] + draw(st.binary(min_size=1, max_size=8)) + content[at + 8:]
    elif how == "truncate":
        parts[name] = content[:draw(st.integers(0, len(content) - 1))]
    elif how == "replace":
        parts[name] = draw(st.binary(max_size=64))
    whole = package_bytes(parts)
    if how == "cut zip":
        return whole[:draw(st.integers(4, len(whole) - 1))]
    if how == "overwrite zip":
        at = draw(st.integers(4, len(whole) - 1))
        return whole[:at] + draw(st.binary(min_size=1, max_size=16)) + whole[at + 16:]
    return whole


# Numbers of every size: a count of units inspected near 10**8 once made an attribute chart's run-length work
# take minutes (the chain enumerated every count); it now keeps a few counts per threshold.
NUMBERS = st.one_of(st.integers(-10**4, 10**4).map(str), st.floats(allow_nan=False, allow_infinity=True).map(repr),
                    st.sampled_from(["1e400", "-1e400", "NaN", "inf", "", " ", "0x10", "1,5", "1.2.3"]))
REFS = st.one_of(st.from_regex(r"\A[A-Z]{1,3}[0-9]{1,8}\Z"), st.sampled_from(["", "A0", "1A", "XFE1", "ZZZZ1", "$A$1"]))
ROW_NUMBERS = st.one_of(st.integers(-3, 2_000_000).map(str), st.sampled_from(["", "x", "1.5", "1e3"]))


@st.composite
def odd_cells(draw: st.DrawFn) -> str:
    """A <c> element with any reference, type and value (text escaped, so the XML stays well formed)."""
    ref = draw(st.one_of(st.none(), REFS))
    kind = draw(st.sampled_from([None, "n", "s", "str", "inlineStr", "b", "e", "d", "junk"]))
    value = escape(draw(st.one_of(NUMBERS, st.text(max_size=12))))
    attrs = (f' r="{ref}"' if ref is not None else "") + (f' t="{kind}"' if kind else "")
    body = f"<is><t>{value}</t></is>" if kind == "inlineStr" else f"<v>{value}</v>"
    return f"<c{attrs}>{body}</c>"


@st.composite
def odd_sheets(draw: st.DrawFn) -> bytes:
    """The sound count sheet followed by odd rows, and odd column ranges and merged ranges."""
    rows = []
    for _ in range(draw(st.integers(0, 4))):
        number = draw(st.one_of(st.none(), ROW_NUMBERS))
        cells = "".join(draw(st.lists(odd_cells(), max_size=4)))
        rows.append(f'<row{f" r={chr(34)}{number}{chr(34)}" if number is not None else ""}>{cells}</row>')
    cols = "".join(f'<col min="{a}" max="{b}" hidden="1"/>' for a, b in draw(
        st.lists(st.tuples(ROW_NUMBERS, ROW_NUMBERS), max_size=2)))
    xml = sheet_xml(count_rows() + "".join(rows), f"<cols>{cols}</cols>" if cols else "")
    merges = "".join(f'<mergeCell ref="{a}:{b}"/>' for a, b in draw(st.lists(st.tuples(REFS, REFS), max_size=2)))
    if merges:
        xml = xml.replace(b"</worksheet>", f"<mergeCells>{merges}</mergeCells></worksheet>".encode())
    return xml


@FUZZ
@given(broken_packages())
def test_broken_packages(content):
    check_cli("book.xlsx", content)


@FUZZ
@given(odd_sheets())
def test_odd_sheets(sheet):
    check_cli("book.xlsx", package_bytes({**count_parts(), SHEET: sheet}))


@FUZZ
@given(st.lists(st.tuples(st.integers(2, 26), st.sampled_from("ABC"), NUMBERS), min_size=1, max_size=4))
def test_odd_cell_values(changes):
    rows = count_rows()
    for row, column, value in changes:
        rows = re.sub(rf'<c r="{column}{row}"><v>[^<]*</v></c>', f'<c r="{column}{row}"><v>{escape(value)}</v></c>',
                      rows)
    code = check_cli("book.xlsx", package_bytes({**count_parts(), SHEET: sheet_xml(rows)}))
    assert code == 0 or any(v.strip() for _, _, v in changes)  # a sound sheet is never refused


@FUZZ
@given(st.lists(st.lists(st.one_of(NUMBERS, st.text(max_size=8)), max_size=5), max_size=30),
       st.sampled_from([",", ";", "\t"]), st.sampled_from(["utf-8", "cp1252", "utf-16"]))
def test_csv_text(rows, separator, encoding):
    text = "\n".join(separator.join(cells) for cells in rows)
    check_cli("book.csv", text.encode(encoding, errors="replace"), words=False)  # CSV wording: its own reader's


def test_sound_count_package_evaluates():
    # The base of the fuzzing is sound: without damage it evaluates (so the cases above are near misses).
    assert check_cli("book.xlsx", package_bytes(count_parts())) == 0
