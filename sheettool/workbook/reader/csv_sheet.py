"""A .csv file as one sheet: its text decoded, its separator found, its records read as valid CSV.

UTF-8 (with or without a byte-order mark), else Windows-1252. The separator is the one of tab, ";",
"," and "|" that splits the most records into the same number of fields, counted outside quotes, so
that a ";" or "," in a note does not decide it; where two are as consistent, tab before ";" before ","
(an export with decimal commas separates its fields with ";"), and commas that are all between digits
are decimal commas where a ";" or tab occurs. Quoted fields may hold separators,
quotes and line breaks. A file the csv module cannot read is an InputError in words, naming the line.
"""

from __future__ import annotations

import csv
import io
from collections import Counter
from pathlib import Path

from sheettool.base.errors import InputError
from sheettool.workbook.reader.raw_sheet import RawSheet

SEPARATORS = ("\t", ";", ",", "|")  # in order of preference where equally consistent
SAMPLE_RECORDS = 500  # records looked at to find the separator
_OPENS = ("\r", "\n", '"', *SEPARATORS)  # what a quote that opens a quoted field follows


def csv_sheet(path: Path) -> RawSheet:
    """A .csv as one sheet named after the file; InputError naming the line where it is not valid CSV."""
    text = _decoded(path.read_bytes())
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=separator(text), strict=True)
    rows: list[list[object]] = []
    start = 1  # the line the record being read starts on
    try:
        for row in reader:
            rows.append([cell if cell.strip() else None for cell in row])
            start = reader.line_num + 1
    except csv.Error as exc:
        raise InputError(f"{path}: line {start}: {_words(str(exc), start, reader.line_num)}; save it again as CSV "
                         "from the spreadsheet application, or as .xlsx") from None
    return RawSheet(title=path.stem, rows=rows)


def _decoded(raw: bytes) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return raw.decode("cp1252", errors="replace")


def separator(text: str) -> str:
    """The separator that splits the first records most consistently, counted outside quotes ("," by default).

    Where every comma sits between two digits and a ";" or tab occurs too, the commas are decimal commas.
    """
    counts, loose_commas = _counts(text)
    decimal = not loose_commas and any(c[";"] or c["\t"] for c in counts)
    best, best_share = (";" if any(c[";"] for c in counts) else "\t") if decimal else ",", 0.0
    for sep in SEPARATORS:
        per_record = [c[sep] for c in counts]
        usual, times = Counter(per_record).most_common(1)[0] if per_record else (0, 0)
        share = times / len(per_record) if usual and not (sep == "," and decimal) else 0.0
        if share > best_share:
            best, best_share = sep, share
    return best


def _counts(text: str) -> tuple[list[Counter[str]], int]:
    """For each of the first records that are not blank, how often each separator occurs outside quotes; and
    how many commas outside quotes are not between two digits (so cannot be decimal commas)."""
    records: list[Counter[str]] = []
    current: Counter[str] = Counter()
    quoted = filled = False
    loose = 0
    sample = text[: 1 << 20]  # the first MB is plenty for SAMPLE_RECORDS records
    for i, char in enumerate(sample):
        before = sample[i - 1] if i else "\n"
        if quoted:
            quoted = char != '"'
        elif char == '"' and before in _OPENS:  # as csv reads: a quote opens a field, or doubles a closing one
            quoted = True
        elif char in "\r\n":
            if filled:
                records.append(current)
                if len(records) == SAMPLE_RECORDS:
                    break
            current, filled = Counter(), False
        else:
            if char in SEPARATORS:
                current[char] += 1
                loose += char == "," and not (before.isdigit() and sample[i + 1: i + 2].isdigit())
            filled = filled or not char.isspace()
    else:
        if filled:
            records.append(current)
    return records, loose


def _words(message: str, start: int, end: int) -> str:
    """The csv module's complaint as the technician needs it (the record ran from line start to line end)."""
    if "unexpected end of data" in message:
        return "a quoted field opens here and its closing quote never comes" + (
            f" (the rest of the file, {end - start + 1} lines, would be one field)" if end > start else "")
    if "expected after" in message:
        return "text follows the closing quote of a quoted field; quote the whole field, doubling any quote in it"
    if "NUL" in message:
        return "it holds a NUL character, so it is a binary file, not CSV text"
    if "field larger than field limit" in message:
        return (f"a field is longer than {csv.field_size_limit():,} characters, most likely a quote that is "
                "opened and never closed")
    return f"not valid CSV ({message})"
