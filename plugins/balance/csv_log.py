"""Balance logs: the CSV exports balances write, read into readings.

Exports differ from balance to balance, so the reader detects what it safely can:

- the encoding: a UTF-16 or UTF-8 byte-order mark, else UTF-8, else cp1252;
- the header line: the first line naming a label column and a mass column, in
  English or German, French, Italian or Spanish (Net/Netto/Peso, Unit/Einheit,
  ID/Label/Sample/Bezeichnung, Date/Datum, Time/Zeit/Uhrzeit); lines before it
  (instrument and operator details) and summary lines after the data (Total,
  Summe, Mean, n =) are passed over;
- the delimiter: tab, semicolon or comma, whichever splits the header;
- the decimal separator: a comma when the delimiter is not one and the values
  use it; thousands separators are dropped. In a comma-separated file a comma can
  only be inside a quoted value: ``"2,1209"`` is a decimal comma, ``"1,234.5"`` a
  thousands separator, and ``"1,234"`` (1.234 or 1234?) is refused, never guessed;
- the unit: its own column, inside the value (``3.276 g``, ``2046,5 mg``) or in
  the header (``Net [g]``); a file that names no unit anywhere is refused
  unless ``[balance_layout] unit`` says it;
- net, gross and tare columns: net wins; else gross − tare;
- the stability flag: a column (S/ST/stable/yes vs U/US/unstable/no/D) or a
  ``?`` or ``*`` beside the value;
- dates: ISO, dd.mm.yyyy, mm/dd/yyyy; a date that could be read both ways is
  settled by ``[balance_layout] date_order`` and otherwise left unknown.

Everything detected can be declared instead under ``[balance_layout]``.
"""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path

from capture.config import BalanceLayout, LabConfig
from capture.hookspecs import hookimpl
from capture.models import BalanceReading
from capture.quantities import canonical_factor
from capture.safeio import InputError

_HEADERS = {
    "label": {"id", "label", "sample", "sample id", "bezeichnung", "name", "probe", "description",
              "campione", "etiqueta", "item", "identifier", "kennung", "artikel", "échantillon"},
    "net": {"net", "netto", "peso", "peso netto", "mass", "weight", "gewicht", "value", "wert",
            "result", "ergebnis", "net weight", "nettogewicht", "masse", "poids", "poids net",
            "reading"},
    "gross": {"gross", "brutto", "bruttogewicht", "peso lordo", "gross weight"},
    "tare": {"tare", "tara", "tare weight"},
    "unit": {"unit", "einheit", "unità", "unidad", "unité", "units", "u"},
    "date": {"date", "datum", "data", "fecha"},
    "time": {"time", "zeit", "uhrzeit", "ora", "hora", "heure"},
    "stable": {"stable", "stability", "status", "stabil", "stabilität", "flag", "st", "state"},
}  # fmt: skip
_SUMMARY = re.compile(r"^\s*(total|sum|summe|mean|mittelwert|average|n\s*=|statisti|count|anzahl)",
                      re.I)  # fmt: skip
_STABLE_YES = {"s", "st", "stable", "yes", "y", "1", "true", "ok", "ja", "stabil", "si", "sì"}
_STABLE_NO = {"u", "us", "unstable", "no", "n", "0", "false", "d", "dyn", "nein", "instabil", "?"}
_VALUE = re.compile(
    r"^\s*(?P<sign>[-+])?\s*(?P<num>[\d.,'\u00a0 ]*\d)\s*(?P<unit>[a-zA-Zµμ]+)?\s*"
    r"(?P<flag>[?*])?\s*$"
)
_HEADER_UNIT = re.compile(r"[\[(]\s*(?P<unit>[a-zA-Zµμ]+)\s*[\])]")


def decode(data: bytes, layout: BalanceLayout) -> str:
    """The text of a log: BOMs honoured, UTF-8 tried before cp1252."""
    if layout.encoding:
        try:
            return data.decode(layout.encoding)
        except (UnicodeDecodeError, LookupError) as exc:
            raise InputError(f"cannot decode as {layout.encoding}: {exc}") from None
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise InputError(f"broken UTF-16 text at byte {exc.start}") from None
    if b"\x00" in data[:4096]:
        raise InputError("this is a binary file (it contains NUL bytes), not a CSV export")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("cp1252", errors="replace")


def _split(line: str, delimiter: str) -> list[str]:
    import csv

    return [c.strip().strip('"') for c in next(csv.reader([line], delimiter=delimiter))]


def _role(header: str) -> str | None:
    h = _HEADER_UNIT.sub("", header).strip().casefold().rstrip(":.")
    for role, words in _HEADERS.items():
        if h in words:
            return role
    return None


def _find_header(lines: list[str], layout: BalanceLayout) -> tuple[int, str, list[str]]:
    delimiters = [{"tab": "\t"}.get(layout.delimiter, layout.delimiter)] if layout.delimiter else [
        "\t", ";", ","]  # fmt: skip
    candidates = range(layout.header_line - 1, layout.header_line) if layout.header_line else range(
        min(len(lines), 60))  # fmt: skip
    for i in candidates:
        if i >= len(lines):
            break
        for d in delimiters:
            if d not in lines[i]:
                continue
            cells = _split(lines[i], d)
            roles = {_role(c) for c in cells}
            named = layout.label_column or layout.net_column
            if ({"label"} <= roles and roles & {"net", "gross"}) or (named and named in cells):
                return i, d, cells
    raise InputError(
        "no header line with a label column and a mass column (e.g. 'ID;Netto;Einheit') was "
        "found; declare the layout under [balance_layout] in masstrail.toml"
    )


def _columns(cells: list[str], layout: BalanceLayout) -> dict[str, int]:
    cols: dict[str, int] = {}
    for k, c in enumerate(cells):
        role = _role(c)
        if role and role not in cols:
            cols[role] = k
    for role in ("label", "net", "gross", "tare", "unit", "date", "time", "stable"):
        name = getattr(layout, f"{role}_column")
        if name is not None:
            if name not in cells:
                raise InputError(f"[balance_layout] {role}_column {name!r} is not in the header")
            cols[role] = cells.index(name)
    return cols


def _number(raw: str, decimal: str) -> float:
    s = raw.replace("\u00a0", "").replace(" ", "").replace("'", "")
    if decimal == "quoted":  # a comma-separated file: a comma in a value was quoted
        return _quoted_number(s)
    s = s.replace(".", "").replace(",", ".") if decimal == "," else s.replace(",", "")
    return float(s)


def _quoted_number(s: str) -> float:
    """A value of a comma-separated file that holds a comma (it was quoted): '2,1209' is a
    decimal comma, '1,234.5' has a thousands separator; '1,234' (1.234 or 1234?) and '1,234,5'
    cannot be read one way only and raise ValueError: refused, never guessed."""
    if "," not in s:
        return float(s)
    if re.fullmatch(r"\d{1,3}(?:,\d{3})+\.\d+", s):
        return float(s.replace(",", ""))
    if re.fullmatch(r"\d+,\d+", s) and not re.fullmatch(r"\d{1,3},\d{3}", s):
        return float(s.replace(",", "."))
    raise ValueError(f"{s!r} can be read more than one way")


def _decimal(rows: list[list[str]], col: int, delimiter: str, layout: BalanceLayout) -> str:
    if layout.decimal:
        return layout.decimal
    if delimiter == ",":
        return "quoted"  # decided value by value: see _quoted_number
    values = [r[col] for r in rows if col < len(r)]
    commas = sum(1 for v in values if re.search(r"\d,\d", v))
    dots = sum(1 for v in values if re.search(r"\d\.\d", v) and not re.search(r"\d,\d", v))
    return "," if commas > dots else "."


def _to_grams(value: float, unit: str | None) -> float | None:
    if unit is None:
        return None
    unit = unit.replace("µ", "μ")
    known = canonical_factor(unit)
    if known is None or known[1] != "mass":
        return None
    return value * known[0]  # the canonical mass unit is g


_DATE_FORMS = [
    (re.compile(r"^(\d{4})-(\d{1,2})-(\d{1,2})$"), "ymd"),
    (re.compile(r"^(\d{1,2})\.(\d{1,2})\.(\d{4})$"), "dmy"),
    (re.compile(r"^(\d{1,2})/(\d{1,2})/(\d{4})$"), "slash"),
]


def parse_date(text: str, order: str | None) -> dt.date | None:
    """A reading's date; None when it is missing or could be read two ways without a rule."""
    text = text.strip()
    for rx, form in _DATE_FORMS:
        m = rx.match(text)
        if not m:
            continue
        a, b, c = (int(x) for x in m.groups())
        try:
            if form == "ymd":
                return dt.date(a, b, c)
            if form == "dmy":
                return dt.date(c, b, a)
            if a > 12:
                return dt.date(c, b, a)  # 25/11/2026: only day-first makes sense
            if b > 12:
                return dt.date(c, a, b)  # 11/25/2026: only month-first
            if order == "dmy":
                return dt.date(c, b, a)
            if order == "mdy":
                return dt.date(c, a, b)
            return None  # 03/04/2026 with no date_order: not guessed
        except ValueError:
            return None
    return None


def _header_unit(cells: list[str], cols: dict[str, int]) -> str | None:
    """The unit the mass column's header names (``Netto [g]``), if any."""
    for role in ("net", "gross"):
        if role in cols:
            m = _HEADER_UNIT.search(cells[cols[role]])
            if m:
                return m.group("unit")
    return None


def _body(lines: list[str], head: int, delimiter: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) of each data line after the header, up to a summary line."""
    body = []
    for n in range(head + 1, len(lines)):
        line = lines[n]
        if not line.strip():
            continue
        if _SUMMARY.match(line):
            break
        body.append((n + 1, _split(line, delimiter)))
    return body


def read_log(
    data: bytes, relpath: str, layout: BalanceLayout, most: int | None = None
) -> list[BalanceReading]:
    """Readings from one balance CSV export; InputError with the line for what cannot be read.
    With ``most``, reading stops after that many readings (the caller says what was left)."""
    text = decode(data, layout).replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    head, delimiter, cells = _find_header(lines, layout)
    cols = _columns(cells, layout)
    if "label" not in cols or not ({"net", "gross"} & set(cols)):
        raise InputError("the header has no label or no mass column", location=f"line {head + 1}")
    header_unit = _header_unit(cells, cols)
    body = _body(lines, head, delimiter)
    mass_col = cols.get("net", cols.get("gross"))
    decimal = _decimal([r for _, r in body], mass_col, delimiter, layout)
    readings = []
    for lineno, row in body:
        if most is not None and len(readings) >= most:
            break
        if cols["label"] >= len(row) or not row[cols["label"]]:
            continue
        label = row[cols["label"]]

        def cell(role: str, row=row) -> str | None:
            k = cols.get(role)
            return row[k] if k is not None and k < len(row) and row[k] != "" else None

        raw = cell("net") or cell("gross") or ""
        as_written = raw + (f" {cell('unit')}" if cell("unit") else "")
        mass_g = None
        stable = None
        m = _VALUE.match(raw)
        if m:
            unit = m.group("unit") or cell("unit") or header_unit or layout.unit
            try:
                value = _number(m.group("num"), decimal)
            except ValueError:
                value = None
            if value is not None and m.group("sign") == "-":
                value = -value
            if value is not None and cell("net") is None and cell("gross") and cell("tare"):
                tm = _VALUE.match(cell("tare") or "")
                try:
                    value = value - _number(tm.group("num"), decimal) if tm else None
                except ValueError:
                    value = None
                if tm:
                    as_written = f"{raw} − {cell('tare')} (gross − tare)" + (
                        f" {cell('unit')}" if cell("unit") else ""
                    )
            if value is not None:
                mass_g = _to_grams(value, unit)
                if mass_g is None and unit is None:
                    raise InputError(
                        "the file names no unit (no unit column, none in the values or the "
                        "header); set [balance_layout] unit in masstrail.toml",
                        location=f"line {lineno}",
                    )
            if m.group("flag"):
                stable = False
        stable, stamp = _flag_and_stamp(cell, stable, layout)
        readings.append(
            BalanceReading(
                file=relpath,
                line=lineno,
                label=label,
                mass_g=None if mass_g is None else round(mass_g, 6),
                as_written=as_written.strip() or "(empty)",
                stable=stable,
                timestamp=stamp,
            )
        )
    if not readings:
        raise InputError("the log has a header but no readings", location=f"line {head + 1}")
    return readings


def _flag_and_stamp(
    cell, stable: bool | None, layout: BalanceLayout
) -> tuple[bool | None, str | None]:
    """A row's stability (its column wins over a flag beside the value) and its time stamp."""
    flag = cell("stable")
    if flag is not None:
        f = flag.strip().casefold()
        stable = True if f in _STABLE_YES else False if f in _STABLE_NO else stable
    stamp = None
    day = parse_date(cell("date") or "", layout.date_order) if cell("date") else None
    if day is not None:
        stamp = day.isoformat() + (f"T{cell('time')}" if cell("time") else "")
    return stable, stamp


@hookimpl(trylast=True, specname="masstrail_read_balance_log")
def read_csv_export(
    path: Path, data: bytes, relpath: str, config: LabConfig
) -> list[BalanceReading]:
    """Balance CSV exports, layout detected or declared in [balance_layout]; one reading more
    than ``[scan] max_readings`` at most, so that the run can say the rest was not read."""
    return read_log(data, relpath, config.balance_layout, config.scan.max_readings + 1)
