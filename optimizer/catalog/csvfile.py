"""CSV catalog files: decoding, the header line, the column map, rows of the wrong width."""

from __future__ import annotations

import csv
import difflib
import io
import re
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Final

import numpy as np
import yaml

from ..errors import CatalogError
from .cells import _combined, _did_you_mean, _discrete_from_table, _Table
from .series import IntArray
from .table import CSV_OPTIONAL, CSV_REQUIRED
from .yamlfile import _scalar_text

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import pandas as pd


_NETWORK_ONLY_COLUMNS: Final = frozenset({"values", "ratio_tolerance", "tracking", "ratio_drift"})
_PARSER_LINE_RE: Final = re.compile(r"Expected (\d+) fields in line (\d+), saw (\d+)")


#: Column separators recognised in a CSV header line, in order of preference on a tie.
_DELIMITERS: Final = (",", ";", "\t", "|")
_DELIMITER_NAMES: Final = {",": "commas", ";": "semicolons", "\t": "tabs", "|": "bars"}
#: Suffix of the optional file beside a CSV catalog that maps its headers to Quartet's columns.
COLUMNS_SUFFIX: Final = ".columns.yaml"


def _decode(path: str, data: bytes) -> tuple[str, str | None]:
    """The text of a catalog file and a note on how it was read: UTF-8 with or without a
    byte-order mark, UTF-16 with one, or else Latin-1 (ISO 8859-1, every byte a character) with
    a note. Bytes that no text file holds (NUL and other control characters) are refused."""
    import codecs

    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return data.decode("utf-16"), None
        except UnicodeDecodeError as exc:
            raise CatalogError(
                f"cannot read the file as UTF-16 text ({exc.reason} at byte {exc.start})",
                path=path,
            ) from None
    try:
        text = data.decode("utf-8-sig")
        note = None
    except UnicodeDecodeError as exc:
        text = data.decode("latin-1")
        note = (
            f"{path}: not UTF-8 text (byte 0x{data[exc.start]:02x} at byte {exc.start}); "
            "read as Latin-1 (ISO 8859-1)"
        )
    control = re.search(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]", text)
    if control is not None:
        line = text[: control.start()].count("\n") + 1
        raise CatalogError(
            f"not a text file: character 0x{ord(control.group()):02x} found; expected "
            "UTF-8, UTF-16 (with a byte-order mark) or Latin-1 text, as a spreadsheet saves "
            "a CSV file",
            path=path,
            row=line,
        )
    return text, note


def _lines_as_newlines(text: str) -> str:
    """``text`` with CR LF and lone CR line ends written as LF (a copy only when needed)."""
    if "\r" not in text:
        return text
    return text.replace("\r\n", "\n").replace("\r", "\n")


def _find_header(path: str, text: str) -> tuple[int, str, int]:
    """The 0-based index of the header line (first line that is neither blank nor a ``#``
    comment), the line, and the offset in ``text`` where the line after it starts. ``text``
    has LF line ends; only the lines up to the header are looked at (a large file is not
    split into lines)."""
    start = index = 0
    while start < len(text):
        end = text.find("\n", start)
        end = len(text) if end < 0 else end
        line = text[start:end]
        stripped = line.strip()
        if stripped and not stripped.startswith("#"):
            return index, line, min(end + 1, len(text))
        start, index = end + 1, index + 1
    raise CatalogError(
        f"the file is empty: expected a header line with the columns {', '.join(CSV_REQUIRED)}",
        path=path,
    )


def _column_map(path: str) -> tuple[dict[str, str], str | None]:
    """The header mapping of the file ``<name>.columns.yaml`` beside a CSV catalog (``columns:``
    the file's own header -> a Quartet column), lower-cased; empty when there is no such file."""
    from ..inputs import MAX_DEPTH, read_bounded, yaml_too_deep

    side = str(Path(path).with_suffix("")) + COLUMNS_SUFFIX
    if not Path(side).exists():
        return {}, None

    def fail(message: str, line: int | None = None) -> CatalogError:
        return CatalogError(message, path=side, row=line)

    text = read_bounded(side, 1024 * 1024, fail, "column mapping").decode("utf-8-sig", "replace")
    if yaml_too_deep(text) is not None:
        raise fail(f"mappings nest deeper than {MAX_DEPTH} levels; expected columns: {{...}}")
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        raise fail("not valid YAML", None if mark is None else mark.line + 1) from None
    expected = "a mapping columns: {their header: one of Quartet's columns}"
    known = (*CSV_REQUIRED, *CSV_OPTIONAL)
    if not isinstance(root, yaml.MappingNode):
        raise fail(f"expected {expected}", 1)
    mapping: dict[str, str] = {}
    problems: list[CatalogError] = []
    for key, value in root.value:
        if not isinstance(key, yaml.ScalarNode) or key.value != "columns":
            problems.append(fail(f"unknown key: expected {expected}", key.start_mark.line + 1))
            continue
        if not isinstance(value, yaml.MappingNode):
            problems.append(fail(f"expected {expected}", value.start_mark.line + 1))
            continue
        for theirs, ours in value.value:
            line = theirs.start_mark.line + 1
            name = _scalar_text(theirs)
            target = _scalar_text(ours)
            if name is None or target is None:
                problems.append(fail(f"expected {expected}", line))
                continue
            target = target.strip().lower()
            if target not in known:
                problems.append(fail(f"{name!r}: {_did_you_mean(target, known, 'column')}", line))
                continue
            mapping[name.strip().lower()] = target
    if problems:
        raise _combined(side, problems)
    return mapping, f"{path}: columns named by {side}"


def _split_header(
    path: str, line: str, mapping: Mapping[str, str], note: str | None
) -> tuple[str, list[str]]:
    """The separator of the header line (the one that gives the most known columns) and the
    header cells, lower-cased and mapped by ``mapping``."""
    known = {*CSV_REQUIRED, *CSV_OPTIONAL}
    best: tuple[int, str, list[str]] | None = None
    for delimiter in _DELIMITERS:
        cells = [c.strip().lower() for c in next(csv.reader([line], delimiter=delimiter))]
        names = [mapping.get(c, c) for c in cells]
        score = sum(1 for n in names if n in known)
        if best is None or score > best[0]:
            best = (score, delimiter, names)
    assert best is not None
    score, delimiter, names = best
    if score == 0:
        from ..inputs import quote

        raise CatalogError(
            f"no known column in the header line (found {quote(line)}): expected the columns "
            f"{', '.join(CSV_REQUIRED)} separated by commas, semicolons or tabs (or a "
            f"{Path(path).stem}{COLUMNS_SUFFIX} file beside it that maps the headers)"
            + (f"; {note.removeprefix(path + ': ')}" if note else ""),
            path=path,
        )
    return delimiter, names


def _check_columns(
    path: str,
    names: Sequence[str],
    required: Sequence[str],
    optional: Sequence[str],
    line_of: Callable[[str], int],
    what: str,
    *,
    extra_allowed: bool = False,
) -> list[str]:
    """Check the column (or key) names; returns the names that are ignored (``extra_allowed``:
    unknown names are ignored rather than refused)."""
    known = (*required, *optional)
    seen: set[str] = set()
    ignored: list[str] = []
    problems: list[CatalogError] = []
    for name in names:
        if name in seen and name in known:
            problems.append(
                CatalogError(f"the {what} appears twice", path=path, row=line_of(name), column=name)
            )
        seen.add(name)
        if name not in known:
            if what == "column" and name in _NETWORK_ONLY_COLUMNS:
                message = (
                    "unknown column: a CSV catalog lists discrete parts only; "
                    "list networks in a YAML catalog under networks:"
                )
            elif extra_allowed:
                if name and name not in ignored:
                    ignored.append(name)
                continue
            else:
                message = _did_you_mean(name, known, what)
            problems.append(CatalogError(message, path=path, row=line_of(name), column=name))
    missing = [name for name in required if name not in seen]
    if missing:
        have = ", ".join(n for n in names if n) or "none"
        hints = []
        for name in missing:
            close = difflib.get_close_matches(name, ignored, n=1, cutoff=0.6)
            if close:
                hints.append(f"is {close[0]!r} meant to be {name!r}?")
        which = f"s {', '.join(missing)}" if len(missing) > 1 else ""
        problems.append(
            CatalogError(
                f"missing required {what}{which} (found: {have})"
                + ("; " + " ".join(hints) if hints else ""),
                path=path,
                row=line_of(missing[0]),
                column=missing[0] if len(missing) == 1 else "",
            )
        )
    if problems:
        raise _combined(path, problems)
    return ignored


def _row_lengths(
    path: str, body: str, delimiter: str, width: int, first_line: int
) -> tuple[list[CatalogError], list[tuple[int, int]]]:
    """A problem for each data row with more or fewer cells than the header (blank lines
    aside), and the span of body lines (0-based, end exclusive) each such row occupies."""
    problems: list[CatalogError] = []
    spans: list[tuple[int, int]] = []
    reader = csv.reader(io.StringIO(body), delimiter=delimiter)
    start = 1
    for cells in reader:
        line = first_line + start - 1
        span = (start - 1, reader.line_num)
        start = reader.line_num + 1
        if not cells or len(cells) == width or not any(c.strip() for c in cells):
            continue
        problems.append(
            CatalogError(
                f"found {len(cells)} cells: expected {width} as in the header line "
                f"{first_line - 1}",
                path=path,
                row=line,
            )
        )
        spans.append(span)
    return problems, spans


def _blank_rows(body: str, spans: Sequence[tuple[int, int]], delimiter: str, width: int) -> str:
    """``body`` with the lines of each span replaced by rows of empty cells (one per line, so
    later lines keep their numbers); the reader drops such rows as blank."""
    lines = body.split("\n")
    empty = delimiter * (width - 1)
    for first, end in spans:
        for i in range(first, min(end, len(lines))):
            lines[i] = empty
    return "\n".join(lines)


def _load_csv(path: str, data: bytes) -> tuple[pd.DataFrame, IntArray, tuple[str, ...]]:
    text, encoding_note = _decode(path, data)
    text = _lines_as_newlines(text)
    notes = [encoding_note] if encoding_note else []
    mapping, mapping_note = _column_map(path)
    if mapping_note:
        notes.append(mapping_note)
    header_index, header, body_start = _find_header(path, text)
    delimiter, names = _split_header(path, header, mapping, encoding_note)
    if delimiter != ",":
        notes.append(f"{path}: columns separated by {_DELIMITER_NAMES[delimiter]}")
    header_line = header_index + 1
    ignored = _check_columns(
        path,
        names,
        CSV_REQUIRED,
        CSV_OPTIONAL,
        lambda _: header_line,
        "column",
        extra_allowed=True,
    )
    if ignored:
        shown = ", ".join(repr(n) for n in ignored[:20])
        more = f" and {len(ignored) - 20} more" if len(ignored) > 20 else ""
        notes.append(f"{path}: columns ignored (not used by Quartet): {shown}{more}")
    known = {*CSV_REQUIRED, *CSV_OPTIONAL}
    used = [i for i, n in enumerate(names) if n in known]
    body = text[body_start:]
    del text
    row_problems, spans = _row_lengths(path, body, delimiter, len(names), header_line + 1)
    if not row_problems:
        return _read_rows(path, body, names, used, delimiter, header_line, notes)
    # rows of the wrong width are reported together with the problems of every other row
    body = _blank_rows(body, spans, delimiter, len(names))
    try:
        _read_rows(path, body, names, used, delimiter, header_line, notes, require_rows=False)
    except CatalogError as exc:
        raise _combined(path, [*row_problems, *exc.problems]) from None
    raise _combined(path, row_problems)


def _read_rows(
    path: str,
    body: str,
    names: Sequence[str],
    used: Sequence[int],
    delimiter: str,
    header_line: int,
    notes: list[str],
    *,
    require_rows: bool = True,
) -> tuple[pd.DataFrame, IntArray, tuple[str, ...]]:
    """The discrete parts of a CSV catalog's data rows (``body``, below the header line);
    with ``require_rows`` a file without data rows is refused."""
    import pandas as pd

    text_columns = {"part_id": str, "size": str}
    column_names = [n if i in used else f"\x00ignored{i}" for i, n in enumerate(names)]
    try:
        raw = pd.read_csv(
            io.StringIO(body),
            header=None,
            names=column_names,
            usecols=[column_names[i] for i in used],
            sep=delimiter,
            dtype={k: v for k, v in text_columns.items() if k in names},
            keep_default_na=False,
            na_values=[""],
            skip_blank_lines=False,
            low_memory=False,
            engine="c",
        )
    except pd.errors.ParserError as exc:
        match = _PARSER_LINE_RE.search(str(exc))
        if match:
            raise CatalogError(
                f"found {match.group(3)} cells: expected {match.group(1)} "
                f"as in the header line {header_line}",
                path=path,
                row=int(match.group(2)) + header_line,
            ) from None
        raise CatalogError(f"cannot read as CSV: {exc}", path=path) from None
    except pd.errors.EmptyDataError:
        raw = pd.DataFrame({names[i]: pd.Series([], dtype=object) for i in used})
    lines = np.arange(len(raw), dtype=np.int64) + header_line + 1
    # blank lines (and lines of bare commas): every cell missing; only rows without a part id
    # can be blank, so test the other columns only on those
    blank = np.array(raw["part_id"].isna().to_numpy(), dtype=bool)
    if blank.any():
        blank[blank] = raw.loc[blank].isna().all(axis=1).to_numpy()
    if blank.any():
        raw = raw.loc[~blank].reset_index(drop=True)
        lines = lines[~blank]
    if len(raw) == 0:
        if not require_rows:
            return raw, lines, tuple(notes)
        raise CatalogError(
            f"no parts: expected data rows below the header line {header_line}", path=path
        )
    table = _Table(path, {names[i]: raw[names[i]] for i in used}, lines)
    frame = _discrete_from_table(table)
    return frame, lines, tuple(notes)
