"""Stage 2 for text files: decode the bytes, find the delimiter and the first record of
the table, and read every cell as text.

Encodings: UTF-8 with or without BOM, UTF-16 with BOM, else Windows-1252. Delimiters
(tab, semicolon, comma) are counted outside quoted fields record by record (RFC 4180: a
quoted field may hold the delimiter, doubled quotes and line breaks); rows are the file
line where each record starts."""

from __future__ import annotations

import csv
import io
import re

import numpy as np
import pandas as pd

from ..errors import Location, Problem, fail
from ..settings import Settings
from .codes import IN003, IN004, IN007, IN037
from .problems import clip
from .source import Source
from .table import MAX_TITLE_ROWS, Grid

DELIMITERS = {"\t": "tab", ";": "semicolon", ",": "comma"}

# Windows-1252 characters of the 0x80-0x9F range that real text rarely holds; text in
# another encoding read as Windows-1252 is full of them (Shift_JIS lead bytes 0x82/0x83
# become '‚' and 'ƒ')
_ODD_1252 = frozenset("‚ƒ„†‡ˆ‰Š‹ŒŽ›œžŸ˜š¤¦¨¯´¸")
_RUN = re.compile(r"[^\x00-\x7f\W\d_]{3,}")  # three or more non-ASCII letters in a row
# encodings a doubtful Windows-1252 text may really be in, with the script they write
_CANDIDATES = (("shift_jis", ("CJK", "HIRAGANA", "KATAKANA")), ("euc_jp", ("CJK", "HIRAGANA", "KATAKANA")),
               ("gb18030", ("CJK",)), ("big5", ("CJK",)), ("euc_kr", ("HANGUL",)),
               ("koi8_r", ("CYRILLIC",)), ("cp1251", ("CYRILLIC",)), ("iso8859_7", ("GREEK",)),
               ("cp1256", ("ARABIC",)), ("cp1255", ("HEBREW",)))


def doubtful_1252(text: str) -> bool:
    """True when text decoded as Windows-1252 looks like another encoding read wrongly:
    many of its non-ASCII characters are rare punctuation or letters in runs of three or
    more (Western words hold one or two accented letters among plain ones)."""
    sample = text[:65536]
    non_ascii = [c for c in sample if ord(c) > 127]
    if len(non_ascii) < 4:
        return False
    odd = sum(1 for c in non_ascii if c in _ODD_1252)
    runs = sum(len(m.group(0)) for m in _RUN.finditer(sample))
    return (odd + runs) / len(non_ascii) > 0.4


def _natural_case(text: str) -> float:
    """Share of words written lower case, Capitalised or UPPER case (not mIxEd)."""
    words = re.findall(r"[^\W\d_]{2,}", text)
    if not words:
        return 0.0
    ok = sum(1 for w in words if w.islower() or w.isupper() or (w[0].isupper() and w[1:].islower()))
    return ok / len(words)


def guess_encoding(data: bytes) -> str | None:
    """The encoding that turns the bytes into text of one script (and natural letter case),
    or None."""
    import unicodedata

    sample = data[:65536]
    best, score = None, 0.0
    for enc, scripts in _CANDIDATES:
        try:
            t = sample.decode(enc)
        except UnicodeDecodeError:
            continue
        wide = [c for c in t if ord(c) > 127]
        if len(wide) < 2:
            continue
        share = sum(1 for c in wide if unicodedata.name(c, "").startswith(scripts)) / len(wide)
        value = share + 0.5 * _natural_case(t)
        if share >= 0.9 and value > score:
            best, score = enc, value
    return best


def decode(data: bytes, name: str) -> tuple[str, str]:
    """(text, encoding) or IN004."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16"), "utf-16"
        except UnicodeDecodeError:
            pass
    elif b"\x00" not in data:
        try:
            return data.decode("utf-8-sig"), ("utf-8-sig" if data.startswith(b"\xef\xbb\xbf")
                                              else "utf-8")
        except UnicodeDecodeError:
            pass
        try:
            return data.decode("cp1252"), "cp1252"
        except UnicodeDecodeError:
            pass
    raise fail(IN004, "the file is not text in an encoding intake reads",
               expected="UTF-8 (with or without BOM), UTF-16 with BOM, or Windows-1252 text; "
                        "or a workbook (.xlsx, .xls, .ods)",
               found="bytes that are none of these" + (" (it contains NUL bytes)" if b"\x00" in data else ""),
               fix="Save the file as 'CSV UTF-8' or as an .xlsx workbook.", file=name)


def records(text: str, sep: str, limit: int | None = None) -> tuple[list[int], list[int]]:
    """Quote-aware split of ``text`` into records (RFC 4180: a field that starts with a
    double quote runs to the closing quote; inside it delimiters, line breaks and doubled
    quotes ``""`` are data; a quote inside an unquoted field is an ordinary character, as
    in ``pandas.read_csv``). Returns per record the number of delimiters outside quotes
    (-1 for a blank line) and the 1-based line where the record starts. Stops after
    ``limit`` records; an unreadable rest (e.g. a field over the csv module's size limit)
    ends the lists early."""
    counts: list[int] = []
    starts: list[int] = []
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep, quotechar='"',
                        doublequote=True, skipinitialspace=False, strict=False)
    line = 0
    try:
        for record in reader:
            starts.append(line + 1)
            blank = len(record) == 0 or (len(record) == 1 and not record[0].strip())
            counts.append(-1 if blank else len(record) - 1)
            line = reader.line_num
            if limit is not None and len(counts) >= limit:
                break
    except csv.Error:
        pass
    return counts, starts


def _head(text: str) -> str:
    """The first 200,000 characters, cut after the last complete line."""
    if len(text) <= 200_000:
        return text
    head = text[:200_000]
    cut = max(head.rfind("\n"), head.rfind("\r"))
    return head[: cut + 1] if cut > 0 else head


def sniff(text: str) -> tuple[str, int]:
    """(delimiter, number of records above the header: title lines and blank lines).

    Delimiters are counted outside quoted fields, record by record (a quoted field may
    hold the delimiter, doubled quotes and line breaks), over the first 60 records; the
    delimiter is the one whose count is the same on most records, and the header is the
    first record with that count."""
    head = _head(text)
    per_sep = {sep: records(head, sep, 60)[0] for sep in ("\t", ";", ",")}
    best, best_score = ",", -1.0
    for sep, all_counts in per_sep.items():
        counts = [c for c in all_counts if c >= 0]
        if not counts or max(counts) == 0:
            continue
        mode = max(set(counts), key=counts.count)
        score = counts.count(mode) + (0.5 if counts[0] > 0 else 0) + (0.1 if mode > 0 else 0)
        if mode > 0 and score > best_score:
            best, best_score = sep, score
    nonblank = [(i, c) for i, c in enumerate(per_sep[best]) if c >= 0]
    if not nonblank:
        return best, 0
    values = [c for _, c in nonblank]
    mode = max(set(values), key=values.count)
    if mode == 0:
        return best, 0
    first = next(i for i, c in nonblank if c == mode)
    return best, first


def _record_lines(data: bytes, text: str, sep: str) -> np.ndarray | None:
    """1-based file line where each record starts, when some quoted field spans lines;
    None when every record is one line (no quote character, or every line break has an
    even number of quotes before it). Quote parity is only the cheap trigger; the lines
    themselves come from the quote-aware :func:`records`."""
    if b'"' not in data:
        return None
    raw = np.frombuffer(data, dtype=np.uint8)
    quotes = np.flatnonzero(raw == 34)
    before = np.searchsorted(quotes, np.flatnonzero(raw == 10))  # quotes before each line break
    if not (before % 2).any():
        return None
    _, starts = records(text, sep)
    return np.asarray(starts, dtype=np.int64) if starts else None


def read(src: Source, settings: Settings) -> Grid:
    """The cells of a text file (every cell text), from the first record of the table."""
    data, name = src.data, src.name
    text, encoding = decode(data, name)
    if not text.strip():
        raise fail(IN003, "the file is empty", expected="a header row and at least one data row",
                   found="only blank text", fix="Choose the file that holds the data.", file=name)
    sep, skip = sniff(text)
    # read enough rows to see whether there are more than max_rows data rows: blank lines
    # and title rows do not count as data, so allow for them (counted without a loop)
    raw = np.frombuffer(data if encoding != "utf-16" else text.encode("utf-8"), dtype=np.uint8)
    nl = np.flatnonzero(raw == 10)
    starts = np.r_[0, nl + 1]
    ends = np.r_[nl, len(raw)]
    length = ends - starts
    blank_lines = int((length == 0).sum() + ((length == 1) & (raw[np.minimum(starts, len(raw) - 1)] == 13)).sum())
    nrows = settings.max_rows + 2 + MAX_TITLE_ROWS + blank_lines
    # file line of each record (only differs from the record number when a quoted field
    # holds a line break)
    lines = _record_lines(raw.tobytes() if encoding == "utf-16" else data, text, sep)

    def line_of(record: int) -> int:  # 0-based record number -> 1-based file line
        if lines is not None and 0 <= record < len(lines):
            return int(lines[record])
        return record + 1

    fast = _split_plain(text, sep, skip, nrows)
    if fast is not None:  # no quotes anywhere, few lines: str.split is many times faster
        values, n = fast
        rows = np.arange(n) + 1 + skip
        return _grid(values, rows, encoding, sep, skip, data, text, name)
    try:
        # the C reader decodes bytes itself (faster than a Python text buffer)
        buf = (io.BytesIO(data) if encoding in ("utf-8", "utf-8-sig", "cp1252")
               else io.StringIO(text))
        df = pd.read_csv(buf, encoding=encoding if isinstance(buf, io.BytesIO) else None,
                         sep=sep, header=None, dtype=object, keep_default_na=False,
                         na_filter=False, skip_blank_lines=False, skiprows=skip, nrows=nrows,
                         engine="c", quotechar='"', skipinitialspace=False)
    except pd.errors.EmptyDataError:
        raise fail(IN003, "the file has no rows", expected="a header row and data rows",
                   found="nothing to read", fix="Choose the file that holds the data.",
                   file=name) from None
    except (pd.errors.ParserError, ValueError, OverflowError) as e:
        msg = str(e)
        m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", msg)
        if m:
            raise fail(IN007, "a row has more cells than the header",
                       expected=f"{m.group(1)} cells per row (as in the header)",
                       found=f"{m.group(3)} cells", row=line_of(int(m.group(2)) - 1),
                       fix="Remove the extra cells or quote cells that contain the delimiter.",
                       file=name) from None
        raise fail(IN007, "the text cannot be read as a table", expected="delimited rows",
                   found=clip(msg.splitlines()[0], 200) if msg else type(e).__name__,
                   fix="Save the data as a plain CSV with one header row.", file=name) from None
    rows = np.arange(len(df)) + 1 + skip
    if lines is not None and len(lines) >= skip + len(df):
        rows = lines[skip: skip + len(df)]
    values = df.to_numpy(dtype=object)
    short = pd.isna(values)  # a row shorter than the first is padded with NaN: blank cells
    if short.any():
        values[short] = ""
    return _grid(values, rows, encoding, sep, line_of(skip) - 1, data, text, name)


_PLAIN_LINES = 20_000  # up to this many lines an unquoted file is split with str.split


def _split_plain(text: str, sep: str, skip: int,
                 nrows: int) -> tuple[np.ndarray, int] | None:
    """The records of a text without any quote character, split with ``str.split``
    (wide tables of few rows: 240 rows x 10,000 columns in a fraction of what the CSV
    reader takes); None when the text has quotes, many lines, or a row longer than the
    first (the CSV reader then says where)."""
    if '"' in text or text.count("\n") > _PLAIN_LINES:
        return None
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    lines = lines[skip: skip + nrows]
    if not lines:
        return None
    records = [line.split(sep) for line in lines]
    width = len(records[0])
    if any(len(r) > width for r in records):
        return None
    values = np.empty((len(records), width), dtype=object)
    values[:] = ""
    for i, r in enumerate(records):
        if len(r) == width:
            values[i] = r
        else:
            values[i, : len(r)] = r
    return values, len(records)


def _grid(values: np.ndarray, rows: np.ndarray, encoding: str, sep: str, skipped: int,
          data: bytes, text: str, name: str) -> Grid:
    warnings: tuple[Problem, ...] = ()
    notes: tuple[str, ...] = ()
    if encoding == "cp1252" and doubtful_1252(text):
        other = guess_encoding(data)
        said = f"; it may be {other}" if other else ""
        warnings = (Problem(IN037, "the text was read as Windows-1252 but looks garbled" + said,
                            "UTF-8 text, or Windows-1252 text in a Western language",
                            "characters such as " + repr(clip(_odd_sample(text), 30))
                            + (f" (read as {other} they are one script)" if other else ""),
                            "Save the file as 'CSV UTF-8' and read it again.",
                            Location(file=name), "warning"),)
        notes = ("The text does not look like Windows-1252" + said + " (IN037).",)
    return Grid(values, np.asarray(rows), "csv", encoding, DELIMITERS[sep],
                skipped=skipped, notes=notes, warnings=warnings)


def _odd_sample(text: str) -> str:
    m = _RUN.search(text[:65536])
    if m:
        return m.group(0)
    return "".join(c for c in text[:2000] if c in _ODD_1252)[:12]


def first_records(text: str, sep: str, n: int) -> list[list[str]]:
    """The first ``n`` records of ``text`` as written (for a preview): quote-aware, blank
    lines kept; a record the csv reader cannot take (a field over its size limit) is
    shown as its line."""
    head = _head(text)
    out: list[list[str]] = []
    reader = csv.reader(io.StringIO(head, newline=""), delimiter=sep, quotechar='"',
                        doublequote=True, strict=False)
    try:
        for record in reader:
            out.append(record)
            if len(out) >= n:
                break
    except csv.Error:
        lines = head.splitlines()
        out.extend([line] for line in lines[len(out): n])
    return out
