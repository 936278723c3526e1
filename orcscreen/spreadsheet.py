"""``DIR/ranking.xlsx``: ranking.csv as a spreadsheet, with units, number formats, the inputs and
the cautions.

Three sheets, written with openpyxl (imported here only, and only when a file is written) in its
write-only mode, which streams the rows to the file, so memory does not grow with the cases:

* "ranking": ranking.csv's header, a row of units under it, then ranking.csv's rows in its
  order, read back from ranking.csv itself (every value is the CSV's). Panes frozen below the two
  header rows and right of the first column; the autofilter sits on the units row, so sorting
  moves neither header row; each numeric cell gets its column's number format
  (:func:`column_style`). A sheet holds at most :data:`SHEET_ROWS` rows: a longer ranking is
  cut there, and the inputs sheet says so.
* "inputs": run-info.json's entries, then the study as run (the store's normalised study, with
  its defaults), one dotted key a row, with the unit of the key's ending.
* "cautions": ``orcscreen.fluids.CAUTIONS`` (the one copy of the general cautions), one line a
  row, then each fluid of the ranking, best first, with its catalogue safety class, GWP100, ODP
  and cautions (``orcscreen.fluids.FluidInfo.cautions``).

Units come from the endings of the names (``_kW``, ``_C``, ``_kg_s``...: DESIGN.md section 5);
the money columns carry the study's currency (run-info.json ``money``). The file is written to
a temporary file and renamed (orcscreen.safe_files), like ranking.csv.
"""

from __future__ import annotations

import itertools
import json
import math
import os
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path
from typing import Any

from orcscreen.safe_files import atomic_writer

__all__ = ["SPREADSHEET_FILE", "SHEET_ROWS", "ENDINGS", "NAMES", "PREFIXES", "column_style",
           "write_spreadsheet"]

SPREADSHEET_FILE = "ranking.xlsx"

#: (ending of a column or key name, unit, number format); the first ending that matches wins,
#: so longer endings come before the shorter ones they end with. "{currency}" is the study's
#: currency. Formats only change what is shown: the cells hold ranking.csv's values.
ENDINGS: tuple[tuple[str, str, str], ...] = (
    ("_per_MWh", "{currency}/MWh", "0.0"),
    ("_per_kW", "{currency}/kW", "0"),
    ("_kJ_kgK2", "kJ/(kg·K²)", "0.000000"),
    ("_kJ_kgK", "kJ/(kg·K)", "0.000"),
    ("_W_m2K", "W/(m²·K)", "0"),
    ("_kW_K", "kW/K", "0.00"),
    ("_kg_s", "kg/s", "0.000"),
    ("_MWh", "MWh", "0"),
    ("_kW", "kW", "0.0"),
    ("_W", "W", "0"),
    ("_bar", "bar", "0.000"),
    ("_Pa", "Pa", "0"),
    ("_m2", "m²", "0.0"),
    ("_m", "m", "0.000"),
    ("_C", "°C", "0.0"),
    ("_K", "K", "0.0"),
    ("_s", "s", "0.0"),
    ("_hours", "h", "0"),
    ("_years", "years", "0"),
    ("_efficiency", "-", "0.000"),
    ("_factor", "-", "0.000"),
    ("_fraction", "-", "0.000"),
    ("_quality", "-", "0.000"),
    ("_pressure", "-", "0.000"),  # reduced pressure p/p_crit
    ("_ratio", "-", "0.00"),
    ("_per_stage", "-", "0.00"),
    ("_rate", "-", "0.000"),
)
#: Whole names with their own unit and format (checked before the endings).
NAMES: dict[str, tuple[str, str]] = {
    "rank": ("", "0"),
    "evaluations": ("", "0"),
    "turbine_stages": ("", "0"),
    "hours_not_running": ("h", "0"),
    "gwp100": ("-", "0"),
    "odp": ("-", "0.000"),
    "net_present_value": ("{currency}", "#,##0"),
}
#: Beginnings of names with their unit and format (checked after the whole names).
PREFIXES: tuple[tuple[str, str, str], ...] = (("investment_", "{currency}", "#,##0"),
                                               ("rank_", "", "0"))  # rank_<criterion>: an integer

#: Rows of a worksheet at most (Microsoft, "Excel specifications and limits": 1,048,576 rows by
#: 16,384 columns); rows of ranking.csv beyond it are left out of the sheet, and the inputs sheet
#: says so.
SHEET_ROWS = 1_048_576
_CHUNK_ROWS = 5000  # ranking.csv rows read at a time
_MIN_WIDTH, _MAX_WIDTH, _NUMBER_WIDTH = 6, 50, 10  # column widths [characters]


def column_style(name: str, currency: str | None = None) -> tuple[str, str | None]:
    """(unit, number format) of a column or key from its name: a whole name of :data:`NAMES`,
    a beginning of :data:`PREFIXES`, else the first ending of :data:`ENDINGS` (the last part of
    a dotted path counts). ("", None) when none matches: text, or a number without a unit."""
    base = name.rsplit(".", 1)[-1]
    money = currency or "currency"
    if base in NAMES:
        unit, fmt = NAMES[base]
        return unit.format(currency=money), fmt
    for start, unit, fmt in PREFIXES:
        if base.startswith(start):
            return unit.format(currency=money), fmt
    for ending, unit, fmt in ENDINGS:
        if base.endswith(ending):
            return unit.format(currency=money), fmt
    return "", None


def write_spreadsheet(target: str | os.PathLike[str], ranking_csv: str | os.PathLike[str],
                      info: Mapping[str, Any], study: Mapping[str, Any] | None = None, *,
                      text_columns: Iterable[str] = ()) -> Path:
    """Write ``target`` (ranking.xlsx, module docstring) from the file ``ranking_csv`` just
    written, run-info.json's entries ``info`` and the normalised ``study``; return its path.

    text_columns: columns read as text whatever they look like (keys and hashes, which may be
    all digits). Written to a temporary file, then renamed over ``target``.
    """
    from openpyxl import Workbook

    target = Path(target)
    currency = (info.get("money") or {}).get("currency")
    wb = Workbook(write_only=True)
    fluids, written, total = _ranking_sheet(wb, Path(ranking_csv), currency, tuple(text_columns))
    note = {} if written == total else {SPREADSHEET_FILE: (
        f"the first {written} of {total} rows of ranking.csv (a sheet holds at most "
        f"{SHEET_ROWS} rows); every row is in ranking.csv")}
    _inputs_sheet(wb, {**info, **note}, study, currency)
    _cautions_sheet(wb, fluids)
    wb.properties.title = f"orcscreen ranking: {info.get('study_name') or ''}".strip()
    wb.properties.creator = f"orcscreen {info.get('orcscreen_version') or ''}".strip()
    with atomic_writer(target) as stream:
        wb.save(stream.buffer)  # the binary layer of the temporary file's text stream
    return target


# --------------------------------------------------------------------------- ranking sheet

def _ranking_sheet(wb, ranking_csv: Path, currency: str | None,
                   text_columns: tuple[str, ...]) -> tuple[list[str], int, int]:
    """The "ranking" sheet, at most :data:`SHEET_ROWS` rows in all; returns the fluids of the
    ranking in order of first appearance, the rows written and the rows of ranking.csv."""
    import pandas as pd
    from openpyxl.utils import get_column_letter

    ws = wb.create_sheet("ranking")
    header = pd.read_csv(ranking_csv, nrows=0).columns.tolist()
    styles = [column_style(c, currency) for c in header]
    chunks = _csv_chunks(ranking_csv, header, text_columns)
    first = next(chunks, None)
    for i, (name, (unit, _)) in enumerate(zip(header, styles), 1):  # widths go before the rows
        ws.column_dimensions[get_column_letter(i)].width = _width(name, unit, first, i - 1)
    ws.freeze_panes = "B3"
    ws.append(_styled(ws, header, bold=True))
    ws.append(_styled(ws, [u for u, _ in styles], italic=True))
    formats = [f for _, f in styles]
    fluids: dict[str, None] = {}
    room = SHEET_ROWS - 2  # below the header and units rows
    n = total = 0
    for chunk in itertools.chain([first] if first is not None else [], chunks):
        if "fluid" in header:
            fluids.update(dict.fromkeys(str(f) for f in chunk[header.index("fluid")] if _present(f)))
        for values in itertools.islice(zip(*chunk), max(room - n, 0)):
            ws.append(_row(ws, values, formats))
            n += 1
        total += len(chunk[0]) if chunk else 0
    ws.auto_filter.ref = f"A2:{get_column_letter(max(len(header), 1))}{n + 2}"
    return list(fluids), n, total


def _csv_chunks(path: Path, header: list[str],
                text_columns: tuple[str, ...]) -> Iterator[list[list]]:
    """ranking.csv in pieces of :data:`_CHUNK_ROWS` rows, each a list of columns of Python
    values (NaN where the CSV field is empty)."""
    import pandas as pd

    dtype = {c: str for c in text_columns if c in header}
    with pd.read_csv(path, chunksize=_CHUNK_ROWS, dtype=dtype, keep_default_na=False,
                     na_values=[""]) as reader:
        for frame in reader:
            yield [frame[c].tolist() for c in header]


def _present(value) -> bool:
    return value is not None and not (isinstance(value, float) and math.isnan(value))


def _width(name: str, unit: str, chunk: list[list] | None, column: int) -> float:
    """Characters of the widest of the name, the unit and the first rows' values, within
    [_MIN_WIDTH, _MAX_WIDTH]."""
    widest = max(len(name), len(unit))
    if chunk is not None:
        for v in chunk[column][:200]:
            if isinstance(v, str):
                widest = max(widest, len(v))
            elif _present(v):
                widest = max(widest, _NUMBER_WIDTH)
    return float(min(max(widest + 2, _MIN_WIDTH), _MAX_WIDTH))


def _row(ws, values: Iterable, formats: list[str | None]) -> list:
    """One ranking row for ``ws.append``: numbers in a cell of their column's format, NaN as an
    empty cell, infinities as the CSV's text."""
    from openpyxl.cell import WriteOnlyCell

    row: list = []
    for v, fmt in zip(values, formats):
        if isinstance(v, float):
            if math.isnan(v):
                v = None
            elif math.isinf(v):
                v = "inf" if v > 0 else "-inf"
        if fmt is not None and isinstance(v, (int, float)) and not isinstance(v, bool):
            cell = WriteOnlyCell(ws, v)
            cell.number_format = fmt
            row.append(cell)
        elif isinstance(v, str):
            row.append(_text(ws, v))
        else:
            row.append(v)
    return row


def _text(ws, text: str, font=None):
    """A text value as written, never read as a formula (a cell when it begins with "=" or has
    a ``font``); characters XML cannot hold become U+FFFD."""
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    text = ILLEGAL_CHARACTERS_RE.sub("\ufffd", text)
    if font is None and not text.startswith("="):
        return text
    cell = WriteOnlyCell(ws, text)
    cell.data_type = "s"
    if font is not None:
        cell.font = font
    return cell


def _styled(ws, texts: Iterable[str], *, bold: bool = False, italic: bool = False) -> list:
    """Header cells in a bold or italic font."""
    from openpyxl.styles import Font

    font = Font(bold=bold, italic=italic)
    return [_text(ws, str(t), font) for t in texts]


# --------------------------------------------------------------------------- inputs sheet

def _inputs_sheet(wb, info: Mapping[str, Any], study: Mapping[str, Any] | None,
                  currency: str | None) -> None:
    """The "inputs" sheet: key, value, unit; run-info.json's entries, then the study."""
    ws = wb.create_sheet("inputs")
    for letter, width in zip("ABC", (45, 45, 14)):
        ws.column_dimensions[letter].width = width
    ws.freeze_panes = "A2"
    ws.append(_styled(ws, ["key", "value", "unit"], bold=True))
    for title, data in (("run (run-info.json)", info),
                        ("study (as run, with defaults)", study or {})):
        ws.append(_styled(ws, [title], bold=True))
        for key, value in _flat(data):
            ws.append([_text(ws, key), _text(ws, value) if isinstance(value, str) else value,
                       column_style(key, currency)[0]])
        ws.append([])


def _flat(data: Mapping[str, Any], prefix: str = "") -> Iterator[tuple[str, Any]]:
    """(dotted key, value) of nested tables; lists and empty tables as JSON text."""
    for key, value in data.items():
        path = f"{prefix}{key}"
        if isinstance(value, Mapping) and value:
            yield from _flat(value, path + ".")
        elif isinstance(value, (Mapping, list, tuple)):
            yield path, json.dumps(value, ensure_ascii=False, default=str)
        elif value is None or isinstance(value, (bool, int, float, str)):
            yield path, (None if isinstance(value, float) and not math.isfinite(value) else value)
        else:
            yield path, str(value)


# --------------------------------------------------------------------------- cautions sheet

def _cautions_sheet(wb, fluids: list[str]) -> None:
    """The "cautions" sheet: the general cautions, then each fluid's catalogue cautions."""
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.styles import Alignment

    from orcscreen import fluids as catalogue

    ws = wb.create_sheet("cautions")
    # column A is the fluid's; a caution line overflows into the empty cells to its right
    for letter, width in zip("ABCDEF", (24, 24, 12, 10, 10, 90)):
        ws.column_dimensions[letter].width = width
    ws.append(_styled(ws, ["Cautions"], bold=True))
    for line in catalogue.CAUTIONS.strip().splitlines():
        ws.append([line])
    ws.append([])
    ws.append(_styled(ws, ["Fluids of this ranking (fluid catalogue)"], bold=True))
    ws.append(_styled(ws, ["fluid", "name", "safety class", "GWP100", "ODP", "cautions"], bold=True))
    wrap = Alignment(wrap_text=True, vertical="top")
    for name in fluids:
        try:
            info = catalogue.get_info(name)
        except catalogue.UnknownFluidError:
            ws.append([_text(ws, name), None, None, None, None,
                       "not in the fluid catalogue: see the cautions above"])
            continue
        text = WriteOnlyCell(ws, info.cautions)
        text.alignment = wrap
        ws.append([_text(ws, name), _text(ws, info.display_name), info.safety_class or None,
                   info.gwp100, info.odp, text])
