"""``DIR/ranking.xlsx``: ranking.csv as a spreadsheet, with units, number formats, the inputs and
the cautions.

Three sheets, written with XlsxWriter (imported here only, and only when a file is written) in its
constant-memory mode, which streams each row to a temporary file as it is written, so memory
does not grow with the cases. XlsxWriter rather than a reading-and-writing library: it loads in
a quarter of the time and writes the cells about twice as fast (a 135-case ranking: 0.25 s
against 0.7-0.9 s with openpyxl's write-only mode, 2026-12-03); the tests read the file back
with openpyxl, a second, independent implementation of the format:

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
a temporary file and renamed (orcscreen.safe_files), like ranking.csv. Text is always written as
text, never as a formula or a number, with the characters XML cannot hold replaced by U+FFFD.
"""

from __future__ import annotations

import itertools
import json
import math
import os
import re
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
    import xlsxwriter

    target = Path(target)
    currency = (info.get("money") or {}).get("currency")
    with atomic_writer(target) as stream:
        # the binary layer of the temporary file's text stream; every text cell through
        # write_string, so no option of XlsxWriter's guessing is needed
        wb = xlsxwriter.Workbook(stream.buffer, {"constant_memory": True, "strings_to_formulas": False,
                                                 "strings_to_numbers": False, "strings_to_urls": False})
        sheet = _Sheets(wb)
        fluids, written, total = _ranking_sheet(sheet, Path(ranking_csv), currency, tuple(text_columns))
        note = {} if written == total else {SPREADSHEET_FILE: (
            f"the first {written} of {total} rows of ranking.csv (a sheet holds at most "
            f"{SHEET_ROWS} rows); every row is in ranking.csv")}
        _inputs_sheet(sheet, {**info, **note}, study, currency)
        _cautions_sheet(sheet, fluids)
        wb.set_properties({"title": f"orcscreen ranking: {info.get('study_name') or ''}".strip(),
                           "author": f"orcscreen {info.get('orcscreen_version') or ''}".strip()})
        wb.close()
    return target


class _Sheets:
    """The workbook's sheets, each written row after row (constant-memory mode), with one format
    object per distinct set of properties."""

    def __init__(self, wb):
        self.wb, self._formats = wb, {}

    def new(self, name: str, widths: Iterable[float] = ()) -> "_Rows":
        ws = self.wb.add_worksheet(name)
        for i, width in enumerate(widths):
            ws.set_column(i, i, width)
        return _Rows(ws, self)

    def format(self, **props):
        key = tuple(sorted(props.items()))
        if key not in self._formats:
            self._formats[key] = self.wb.add_format(props) if props else None
        return self._formats[key]


class _Rows:
    """One sheet, appended to a row at a time (XlsxWriter's constant-memory mode needs the rows
    in order)."""

    def __init__(self, ws, sheets: _Sheets):
        self.ws, self.sheets, self.n = ws, sheets, 0

    def append(self, values: Iterable, formats: Iterable | None = None) -> None:
        """One row: numbers and booleans as such (with the format given for their column, or
        none), text as text, None and NaN as an empty cell."""
        ws, r = self.ws, self.n
        for c, (v, fmt) in enumerate(zip(values, formats if formats is not None else itertools.repeat(None))):
            if v is None or (isinstance(v, float) and math.isnan(v)):
                continue
            if isinstance(v, bool):
                ws.write_boolean(r, c, v, fmt)
            elif isinstance(v, (int, float)):
                ws.write_number(r, c, v, fmt)
            else:
                ws.write_string(r, c, _clean(str(v)), fmt)
        self.n += 1


#: Characters XML 1.0 cannot hold (C0 controls but tab, newline and carriage return).
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f]")


def _clean(text: str) -> str:
    return _NOT_XML.sub("\ufffd", text)


# --------------------------------------------------------------------------- ranking sheet

def _ranking_sheet(sheets: _Sheets, ranking_csv: Path, currency: str | None,
                   text_columns: tuple[str, ...]) -> tuple[list[str], int, int]:
    """The "ranking" sheet, at most :data:`SHEET_ROWS` rows in all; returns the fluids of the
    ranking in order of first appearance, the rows written and the rows of ranking.csv."""
    import pandas as pd

    header = pd.read_csv(ranking_csv, nrows=0).columns.tolist()
    styles = [column_style(c, currency) for c in header]
    chunks = _csv_chunks(ranking_csv, header, text_columns)
    first = next(chunks, None)
    ws = sheets.new("ranking", [_width(name, unit, first, i) for i, (name, (unit, _)) in enumerate(zip(header, styles))])
    ws.ws.freeze_panes(2, 1)  # below the header and units rows, right of the first column
    bold, italic = sheets.format(bold=True), sheets.format(italic=True)
    ws.append(header, itertools.repeat(bold))
    ws.append([u or None for u, _ in styles], itertools.repeat(italic))
    formats = [sheets.format(num_format=f) if f is not None else None for _, f in styles]
    fluids: dict[str, None] = {}
    room = SHEET_ROWS - 2  # below the header and units rows
    n = total = 0
    for chunk in itertools.chain([first] if first is not None else [], chunks):
        if "fluid" in header:
            fluids.update(dict.fromkeys(str(f) for f in chunk[header.index("fluid")] if _present(f)))
        for values in itertools.islice(zip(*chunk), max(room - n, 0)):
            ws.append(_row(values), formats)
            n += 1
        total += len(chunk[0]) if chunk else 0
    ws.ws.autofilter(1, 0, n + 1, max(len(header), 1) - 1)  # on the units row: sorting moves no header
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


def _row(values: Iterable) -> list:
    """One ranking row: infinities as the CSV's text (a number format cannot show them)."""
    return [("inf" if v > 0 else "-inf") if isinstance(v, float) and math.isinf(v) else v for v in values]


# --------------------------------------------------------------------------- inputs sheet

def _inputs_sheet(sheets: _Sheets, info: Mapping[str, Any], study: Mapping[str, Any] | None,
                  currency: str | None) -> None:
    """The "inputs" sheet: key, value, unit; run-info.json's entries, then the study."""
    ws = sheets.new("inputs", (45, 45, 14))
    ws.ws.freeze_panes(1, 0)
    bold = sheets.format(bold=True)
    ws.append(["key", "value", "unit"], itertools.repeat(bold))
    for title, data in (("run (run-info.json)", info),
                        ("study (as run, with defaults)", study or {})):
        ws.append([title], [bold])
        for key, value in _flat(data):
            ws.append([key, value, column_style(key, currency)[0] or None])
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

def _cautions_sheet(sheets: _Sheets, fluids: list[str]) -> None:
    """The "cautions" sheet: the general cautions, then each fluid's catalogue cautions."""
    from orcscreen import fluids as catalogue

    # column A is the fluid's; a caution line overflows into the empty cells to its right
    ws = sheets.new("cautions", (24, 24, 12, 10, 10, 90))
    bold = sheets.format(bold=True)
    ws.append(["Cautions"], [bold])
    for line in catalogue.CAUTIONS.strip().splitlines():
        ws.append([line])
    ws.append([])
    ws.append(["Fluids of this ranking (fluid catalogue)"], [bold])
    ws.append(["fluid", "name", "safety class", "GWP100", "ODP", "cautions"], itertools.repeat(bold))
    wrap = [None] * 5 + [sheets.format(text_wrap=True, valign="top")]
    for name in fluids:
        try:
            info = catalogue.get_info(name)
        except catalogue.UnknownFluidError:
            ws.append([name, None, None, None, None, "not in the fluid catalogue: see the cautions above"])
            continue
        ws.append([name, info.display_name, info.safety_class or None, info.gwp100, info.odp, info.cautions], wrap)
