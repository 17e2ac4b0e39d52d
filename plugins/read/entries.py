"""Readers: Markdown with YAML front matter, YAML, JSON and Jupyter notebooks.

Each reader answers ``masstrail_read_entry`` for its own file endings and
returns None for the rest. All of them share the same front-matter keys (see
the README's "Entry format"), and all of them read Markdown pipe tables in the
procedure text as structured materials.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, StructuredMaterial
from capture.quantities import canonical_factor, normalise
from capture.safeio import InputError, decode_text, load_json
from capture.safeyaml import load_yaml

KNOWN_KEYS = {
    "id",
    "title",
    "author",
    "group",
    "project",
    "date",
    "product",
    "equation",
    "balance_log",
    "uses",
    "materials",
    "recovered",
    "amounts_from_text",
}

_NAME_HEADERS = {"material", "materials", "reagent", "reagents", "chemical", "chemicals",
                 "compound", "compounds", "name", "substance", "reactant", "reactants",
                 "component", "components"}  # fmt: skip
_AMOUNT_HEADERS = {"amount", "quantity", "qty", "mass", "volume", "amount used", "weight"}
_ROLE_HEADERS = {"role", "function", "use"}
# a header that names its unit: "Mass (mg)", "V [mL]", "mass / g", or a unit alone: "mmol",
# "Equiv" (the stoichiometry table of an electronic notebook: its cells are bare numbers)
_HEADER_UNIT = re.compile(
    r"^(?P<label>[^(\[/]*?)\s*(?:\((?P<a>[^()]+)\)|\[(?P<b>[^\]]+)\]|/\s*(?P<c>\S+))$"
)
_BARE_NUMBER = re.compile(
    r"^(?:ca\.?\s*|approx\.?\s*|[~≈]\s*)?\d+(?:[.,]\d+)?(?:\s*[-–]\s*\d+(?:[.,]\d+)?)?$"
)
_TABLE_KINDS = {"mass", "volume", "amount", "equivalents", "concentration"}
_DIGIT = re.compile(r"\d")


def _header_unit(header: str) -> str | None:
    """The unit an amount column's header names ("Mass (mg)" → "mg", "mmol", "Equiv"), or
    None (a plain "Amount" column, whose cells hold their units, or not an amount column:
    "MW (g/mol)", "Density (g/mL)", "Yield (%)")."""
    m = _HEADER_UNIT.match(header)
    unit = (m.group("a") or m.group("b") or m.group("c")) if m else header
    unit = normalise(unit.strip())
    for written in (unit, unit.lower()):
        known = canonical_factor(written)
        if known is not None and known[1] in _TABLE_KINDS:
            return written
    return None


_ROW = re.compile(r"^\s*\|(.*)\|\s*$")
_RULE = re.compile(r"^\s*\|?\s*:?-{2,}:?\s*(\|\s*:?-{2,}:?\s*)*\|?\s*$")


def _cells(line: str) -> list[str]:
    m = _ROW.match(line)
    return [c.strip() for c in m.group(1).split("|")] if m else []


def read_tables(body: str, limit: int | None = None,
                unread: list[str] | None = None) -> list[StructuredMaterial]:  # fmt: skip
    """Materials from every pipe table whose header has a name and an amount column; a table
    with a name column and numbers but no amount column masstrail reads is added to
    ``unread`` ("line 3: | Reagent | MW | n |"), so that its amounts are a gap, not lost."""
    lines = body.split("\n")
    found: list[StructuredMaterial] = []
    i = 0
    while i < len(lines) - 1:
        header = _cells(lines[i])
        if not header or not _RULE.match(lines[i + 1]):
            i += 1
            continue
        low = [h.casefold() for h in header]
        name_col = next((k for k, h in enumerate(low) if h in _NAME_HEADERS), None)
        units = {k: _header_unit(h) for k, h in enumerate(header) if low[k] not in _NAME_HEADERS}
        amount_cols = [k for k, h in enumerate(low) if h in _AMOUNT_HEADERS or units.get(k)]
        role_col = next((k for k, h in enumerate(low) if h in _ROLE_HEADERS), None)
        if unread is not None and name_col is not None and not amount_cols and any(
                _DIGIT.search(c) for row in _rows_of(lines, i + 2)
                for k, c in enumerate(row) if k != name_col):  # fmt: skip
            unread.append(f"line {i + 1}: {lines[i].strip()[:200]}")
        i += 2
        while i < len(lines) and _ROW.match(lines[i]):
            row = _cells(lines[i])
            i += 1
            if name_col is None or not amount_cols or name_col >= len(row):
                continue
            name = row[name_col].strip("*_ ")
            if not name:
                continue
            amounts = [_with_unit(row[k], units.get(k)) for k in amount_cols
                       if k < len(row) and row[k] not in {"", "-", "–"}]  # fmt: skip
            role = row[role_col] if role_col is not None and role_col < len(row) else None
            found.append(
                StructuredMaterial(
                    name=name,
                    amount=", ".join(amounts) or None,
                    role=role or None,
                    line=i,  # 1-based line in the body
                )
            )
            if limit is not None and len(found) >= limit:
                return found  # enough to know the entry is over the limit
    return found


def _rows_of(lines: list[str], start: int):
    """The cells of each row of the table whose rows begin at ``start``."""
    for line in lines[start:]:
        if not _ROW.match(line):
            return
        yield _cells(line)


def _with_unit(cell: str, unit: str | None) -> str:
    """A cell as an amount: a bare number takes its column's unit ("244" under "Mass (mg)")."""
    return f"{cell} {unit}" if unit and _BARE_NUMBER.match(cell) else cell


def _split_front_matter(text: str) -> tuple[str, str, int]:
    """(front matter, body, lines before the front matter's first line) of a Markdown text."""
    lines = text.split("\n")
    first = 0
    while first < len(lines) and not lines[first].strip():
        first += 1
    if first >= len(lines) or lines[first].strip() != "---":
        raise InputError(
            "no front matter: an entry starts with a YAML block between two '---' lines",
            location="line 1",
        )
    for end in range(first + 1, len(lines)):
        if lines[end].strip() in {"---", "..."}:
            return "\n".join(lines[first + 1 : end]), "\n".join(lines[end + 1 :]), first + 1
    raise InputError("the front matter is not closed: add a line '---' after it",
                     location=f"line {first + 1}")  # fmt: skip


def build_entry(
    meta: Any, body: str, *, data: bytes, relpath: str, fmt: str, where: str = "",
    max_materials: int = 1000,
) -> Entry:  # fmt: skip
    """Type the front-matter mapping with masstrail's schema; keep unknown keys. An entry that
    lists more than ``max_materials`` materials is refused before its list is typed."""
    import hashlib

    if meta is None:
        meta = {}
    if not isinstance(meta, dict):
        raise InputError(f"the {where or 'front matter'} must be a mapping of keys to values")
    listed = meta.get("materials")
    unread: list[str] = []
    tables = read_tables(body, max_materials + 1, unread)
    count = (len(listed) if isinstance(listed, list) else 0) + len(tables)
    if count > max_materials:
        raise InputError(
            f"the entry lists more than {max_materials:,} materials (front matter and tables); "
            "masstrail reads entries of one experiment ([scan] max_materials in masstrail.toml)",
            location="key materials",
        )
    known = {k: v for k, v in meta.items() if k in KNOWN_KEYS}
    extra = {str(k): v for k, v in meta.items() if k not in KNOWN_KEYS and k != "procedure"}
    known.setdefault("id", Path(relpath).name.split(".")[0])
    if isinstance(known.get("id"), str) and not known["id"].strip():
        known["id"] = Path(relpath).name.split(".")[0]
    try:
        return Entry(
            **known,
            path=relpath,
            sha256=hashlib.sha256(data).hexdigest(),
            format=fmt,
            body=body,
            table_materials=tables,
            unread_tables=unread,
            extra=extra,
        )
    except ValidationError as exc:
        err = exc.errors()[0]
        key = ".".join(str(p) for p in err["loc"])
        raise InputError(f"key '{key}': {err['msg']}", location=f"key {key}") from None


@hookimpl(trylast=True, specname="masstrail_entry_suffixes")
def builtin_suffixes() -> list[str]:
    """The entry formats read by the built-in readers."""
    return [".md", ".markdown", ".yaml", ".yml", ".json", ".ipynb"]


@hookimpl(specname="masstrail_read_entry")
def read_markdown(path: Path, data: bytes, relpath: str, config: LabConfig) -> Entry | None:
    """Markdown with a YAML front-matter block."""
    if path.suffix.lower() not in {".md", ".markdown"}:
        return None
    text = decode_text(data)
    front, body, offset = _split_front_matter(text)
    meta = load_yaml(front, line_offset=offset)
    return build_entry(meta, body, data=data, relpath=relpath, fmt="markdown",
                       max_materials=config.scan.max_materials)  # fmt: skip


def _procedure(meta: Any) -> str:
    if not isinstance(meta, dict):
        return ""
    proc = meta.get("procedure")
    if proc is None:
        return ""
    if isinstance(proc, list):
        return "\n\n".join(str(p) for p in proc)
    return str(proc)


def _document_entry(meta: Any, data: bytes, relpath: str, fmt: str,
                    config: LabConfig) -> Entry:  # fmt: skip
    """A YAML or JSON entry: the front-matter keys at the top level, the text under
    ``procedure``."""
    return build_entry(meta, _procedure(meta), data=data, relpath=relpath, fmt=fmt,
                       where=f"{fmt.upper()} document",
                       max_materials=config.scan.max_materials)  # fmt: skip


@hookimpl(specname="masstrail_read_entry")
def read_yaml(path: Path, data: bytes, relpath: str, config: LabConfig) -> Entry | None:
    """A YAML entry: the front-matter keys at the top level, the text under ``procedure``."""
    if path.suffix.lower() not in {".yaml", ".yml"}:
        return None
    return _document_entry(load_yaml(decode_text(data)), data, relpath, "yaml", config)


def _typed_as_text(value: Any) -> Any:
    """JSON scalars to text, so that JSON and YAML entries are typed by the same schema."""
    if isinstance(value, dict):
        return {k: _typed_as_text(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_typed_as_text(v) for v in value]
    if isinstance(value, bool) or value is None:
        return value
    return str(value) if isinstance(value, (int, float)) else value


@hookimpl(specname="masstrail_read_entry")
def read_json(path: Path, data: bytes, relpath: str, config: LabConfig) -> Entry | None:
    """A JSON entry, laid out like a YAML one."""
    if path.suffix.lower() != ".json":
        return None
    meta = _typed_as_text(load_json(decode_text(data)))
    return _document_entry(meta, data, relpath, "json", config)


@hookimpl(specname="masstrail_read_entry")
def read_notebook(path: Path, data: bytes, relpath: str, config: LabConfig) -> Entry | None:
    """A Jupyter notebook: front matter in the first Markdown cell, text from all Markdown cells."""
    if path.suffix.lower() != ".ipynb":
        return None
    nb = load_json(decode_text(data))
    cells = nb.get("cells") if isinstance(nb, dict) else None
    if not isinstance(cells, list):
        raise InputError("not a Jupyter notebook: it has no list of cells", location="key cells")
    texts = []
    for cell in cells:
        if isinstance(cell, dict) and cell.get("cell_type") == "markdown":
            src = cell.get("source", "")
            texts.append("".join(src) if isinstance(src, list) else str(src))
    if not texts:
        raise InputError("the notebook has no Markdown cell with front matter")
    try:
        front, first_body, _ = _split_front_matter(texts[0])
    except InputError as exc:
        raise InputError(f"first Markdown cell: {exc.message}") from None
    meta = load_yaml(front)
    body = "\n\n".join([first_body, *texts[1:]])
    return build_entry(meta, body, data=data, relpath=relpath, fmt="ipynb",
                       max_materials=config.scan.max_materials)  # fmt: skip
