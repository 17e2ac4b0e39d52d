"""The generated compound table (``data/compounds.sqlite``) and the lab abbreviations.

About 13,000 substances (the CRC Handbook's tables of organic and inorganic compounds and the
reagents the abbreviations name), generated offline by ``data/make_compounds.py`` from the
``chemicals`` library's data: names and synonyms, CAS number, formula, SMILES, the state at
20 °C, and for liquids the density at 20 °C with its source (an estimate says so). The
curated ``materials.toml`` wins over it; it wins over the optional ``chemicals`` extra.

Opened read-only on first use (no start-up cost), one indexed query per name. A public
module, not a plugin: the ``materials`` resolver uses it.
"""

from __future__ import annotations

import functools
import re
import sqlite3
import threading
import tomllib
from pathlib import Path

from capture.chem import (
    compact_key,
    hill_formula,
    looks_like_formula,
    looks_like_smiles,
    material_key,
    molar_mass,
)
from capture.models import MaterialInfo

DATA = Path(__file__).resolve().parent.parent / "data"
TABLE = DATA / "compounds.sqlite"
CURATION = DATA / "curation.toml"
SOURCE = "masstrail compound table (plugins/data/compounds.sqlite)"
_HALOGENS = ("F", "Cl", "Br", "I")
_CHAIN = re.compile(r"(?=.*[CN].*[CNOS])[CNOS]{5,}")  # SMILES of plain atoms, five or more
_AT_20_C = {"vdi", "perry", "costald"}  # the fits, evaluated at 20 °C; the handbook's may be 25
_lock = threading.Lock()


@functools.lru_cache(maxsize=1)
def _connection() -> sqlite3.Connection:
    return sqlite3.connect(f"file:{TABLE}?mode=ro&immutable=1", uri=True,
                           check_same_thread=False)  # fmt: skip


@functools.lru_cache(maxsize=1)
def table_version() -> str:
    """The first 12 hex digits of the sha256 of the table and of ``curation.toml`` (whose
    abbreviations are read at run time): their version, for results' fingerprints."""
    import hashlib

    h = hashlib.sha256(TABLE.read_bytes())
    h.update(CURATION.read_bytes())
    return h.hexdigest()[:12]


@functools.lru_cache(maxsize=1)
def abbreviations() -> dict[str, str]:
    """{key of an abbreviation: the full name it stands for} (curation.toml)."""
    raw = tomllib.loads(CURATION.read_text(encoding="utf-8"))["abbreviations"]
    return {material_key(abbr): full for abbr, full in raw.items()}


@functools.lru_cache(maxsize=1)
def _sources() -> dict[str, str]:
    with _lock:
        return dict(_connection().execute("SELECT key, text FROM sources"))


_COLUMNS = (
    "SELECT c.name, c.cas, c.formula, c.state, c.density, c.density_source, "
    "c.solvent_rank FROM compounds c"
)


@functools.lru_cache(maxsize=8192)
def _row(key: str) -> tuple | None:
    with _lock:
        return _connection().execute(_COLUMNS + " JOIN names n ON c.id = n.compound "
                                     "WHERE n.key = ?", (key,)).fetchone()  # fmt: skip


@functools.lru_cache(maxsize=2048)
def _row_of_formula(name: str) -> tuple | None:
    """The one compound of the table with the formula ``name`` is written as, if one only."""
    if not looks_like_formula(name) or (hill := hill_formula(name)) is None:
        return None
    with _lock:
        found = (
            _connection().execute("SELECT compound FROM formulas WHERE key = ?", (hill,)).fetchone()
        )
        if found is None:
            return None
        return _connection().execute(_COLUMNS + " WHERE c.id = ?", found).fetchone()


@functools.lru_cache(maxsize=2048)
def _row_of_smiles(smiles: str) -> tuple | None:
    """The compound whose SMILES is exactly ``smiles`` as PubChem writes it, if one only."""
    with _lock:
        return _connection().execute(_COLUMNS + " JOIN smiles s ON c.id = s.compound "
                                     "WHERE s.key = ?", (smiles,)).fetchone()  # fmt: skip


def look_up(name: str) -> MaterialInfo | None:
    """What the table says of ``name`` (or of the full name of an abbreviation, or of the one
    compound with the formula the name is written as), or None."""
    key = material_key(name)
    row = _row(compact_key(key))
    if row is None and key in abbreviations():
        row = _row(compact_key(material_key(abbreviations()[key])))
    if row is None:
        row = _row_of_formula(name.strip())
    text = name.strip()
    if row is None and (looks_like_smiles(text) or _CHAIN.fullmatch(text)):
        row = _row_of_smiles(text)  # "CC(=O)N(C)C", or a chain of atoms ("COCCOC", "CCNCC")
    if row is None:
        return None
    table_name, cas, formula, state, density, density_source, rank = row
    try:
        mm = round(molar_mass(formula), 4) if formula else None
    except ValueError:
        mm = None
    elements = set(_elements(formula or ""))
    return MaterialInfo(
        name=table_name,
        formula=formula,
        molar_mass=mm,
        density_g_ml=density,
        density_temp_c=20.0 if density and density_source in _AT_20_C else None,
        density_source=_sources().get(density_source) if density else None,
        category="water" if cas == "7732-18-5" else "solvent" if rank else "reagent",
        halogenated="C" in elements and bool(elements & set(_HALOGENS)),
        chem21=rank if rank else None,
        source=f"{SOURCE}, CAS {cas}; {state} at 20 °C",
    )


def _elements(formula: str) -> list[str]:
    import re

    return re.findall(r"[A-Z][a-z]?", formula)


def table_facts() -> dict[str, str]:
    """The table's own record: how many compounds, names and densities, its data's version."""
    with _lock:
        return dict(_connection().execute("SELECT key, value FROM meta"))
