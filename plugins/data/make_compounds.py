"""Generate masstrail's compound table, plugins/data/compounds.sqlite, from open property data.

    pip install -e '.[test]'          # the chemicals and thermo libraries (test dependencies)
    python plugins/data/make_compounds.py

Which compounds: every compound of the CRC Handbook's tables of physical constants of organic
and of inorganic compounds, as the ``chemicals`` library compiles them (about 13,000: the
substances a synthesis lab meets, and many more). For each:

- names: the handbook's name, PubChem's common and IUPAC names and short synonyms (from the
  ``chemicals`` library's PubChem identifier table); a name that several compounds share is
  kept only where it is one compound's own name; the abbreviations in curation.toml are looked
  up at run time, not stored;
- CAS number, formula, SMILES (PubChem's, where known); the molar mass is not stored: it is
  worked out from the formula with IUPAC atomic weights at run time;
- the state at 20 °C from the handbook's melting and boiling points;
- for liquids (and solids that melt below 30 °C, used as liquids: tert-butanol), the density
  at 20 °C and where it comes from, in this order: the handbook's
  tabulated density (measured; the tables mostly give 20 °C), the VDI Heat Atlas PPDS fit and
  the DIPPR-105 fit of Perry's handbook (both fitted to measurements, evaluated at 20 °C), the
  handbook's constant densities of inorganic liquids, and last the COSTALD correlation
  (Hankinson & Thomson, AIChE J. 1979, 25, 653) from critical constants, which is marked as
  an estimate;
- solvents (curation.toml) and their rank in the CHEM21 guide.
"""

from __future__ import annotations

import csv
import re
import sqlite3
import sys
import tomllib
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE / "compounds.sqlite"
T20 = 293.15
_CAS = re.compile(r"^\d{2,7}-\d\d-\d$")


def _rows(path: Path) -> list[list[str]]:
    with path.open(encoding="utf-8") as fh:
        return list(csv.reader(fh, delimiter="\t"))[1:]


def _float(text: str) -> float | None:
    try:
        return float(text) if text else None
    except ValueError:
        return None


def handbook(lib: Path) -> dict[str, dict]:
    """CAS → {name, Tm, Tb, rho} from the CRC tables of organic and inorganic compounds."""
    out: dict[str, dict] = {}
    for table, source in (
        ("Physical Constants of Organic Compounds.csv", "crc-org"),
        ("Physical Constants of Inorganic Compounds.csv", "crc-inorg"),
    ):
        for row in _rows(lib / "Misc" / table):
            cas, name, tm, tb, rho = row[:5]
            if cas in out or not _CAS.match(cas):
                continue
            out[cas] = {
                "name": name.strip(),
                "Tm": _float(tm),
                "Tb": _float(tb),
                "rho": _float(rho),
                "table": source,
            }
    return out


def curated(curation: dict) -> dict[str, dict]:
    """The compounds the abbreviations name and the curated solvents, when the handbook's
    tables lack them (modern reagents: DEAD, Boc2O, Pd(OAc)2 …), found by name in the
    ``chemicals`` library's identifiers."""
    from chemicals.identifiers import search_chemical

    out: dict[str, dict] = {}
    for name in sorted({*curation["abbreviations"].values(), *curation["solvents"]}):
        try:
            found = search_chemical(name)
        except Exception:
            print(f"curation.toml: {name!r} is not in the chemicals library", file=sys.stderr)
            continue
        if _CAS.match(name):  # a curated solvent, by CAS number
            name = found.common_name or found.iupac_name
        out[found.CASs] = {"name": name, "Tm": None, "Tb": None, "rho": None, "table": "pubchem",
                           "formula": found.formula, "smiles": found.smiles}  # fmt: skip
    return out


def _state(cas: str, c: dict) -> str:
    tm, tb = c["Tm"], c["Tb"]
    if tm is None or tb is None:  # the handbook gives no melting or boiling point: other data
        from chemicals.phase_change import Tb, Tm

        try:
            tm = tm if tm is not None else Tm(cas)
            tb = tb if tb is not None else Tb(cas)
        except Exception:
            pass
    if tb is not None and tb <= T20:
        return "gas"
    if tm is not None and tm > T20:
        return "solid"
    if tm is not None and tb is not None:
        return "liquid"
    return "unknown"


def identifiers(lib: Path, wanted: set[str]) -> dict[str, dict]:
    """CAS → formula, SMILES and names from the PubChem identifier tables of ``chemicals``."""
    out: dict[str, dict] = {}
    for table in (
        "chemical identifiers pubchem large.tsv",
        "chemical identifiers pubchem small.tsv",
        "Inorganic db.tsv",
    ):
        with (lib / "Identifiers" / table).open(encoding="utf-8") as fh:
            for line in fh:
                cells = line.rstrip("\n").split("\t")
                if len(cells) < 9 or cells[1] not in wanted or cells[1] in out:
                    continue
                out[cells[1]] = {
                    "formula": cells[2],
                    "smiles": cells[4],
                    "names": [c for c in cells[7:] if c],
                }
    from chemicals.identifiers import search_chemical

    for cas in sorted(wanted - set(out)):  # the library's other identifier tables, by CAS
        try:
            found = search_chemical(cas)
        except Exception:
            continue
        names = [found.iupac_name, found.common_name, *found.synonyms]
        out[cas] = {
            "formula": found.formula,
            "smiles": found.smiles,
            "names": [n for n in names if n],
        }
    return out


# a word of the handbook's name → an element the formula must have ('quinine hydrochloride'
# must hold Cl): PubChem's row for a salt, hydrate or metal alkoxide is often its parent's
_NAME_ELEMENTS = {
    "hydrochloride": "Cl", "dihydrochloride": "Cl", "hydrobromide": "Br", "hydroiodide": "I",
    "sodium": "Na", "disodium": "Na", "potassium": "K", "lithium": "Li", "calcium": "Ca",
    "magnesium": "Mg", "chloride": "Cl", "dichloride": "Cl", "bromide": "Br", "iodide": "I",
    "fluoride": "F", "sulfate": "S", "nitrate": "N", "phosphate": "P", "titanate": "Ti",
    "platinum": "Pt", "palladium": "Pd", "zinc": "Zn", "copper": "Cu", "iron": "Fe",
    "borate": "B", "silver": "Ag", "tribromide": "Br",
}  # fmt: skip
_HYDRATE = re.compile(r"\b(?:mono|di|tri|tetra|penta|hexa|hepta|octa|nona|deca)?hydrate\b")


def consistent(cas: str, name: str, formula: str | None, ids: dict, handbook_names: dict) -> bool:
    """Whether PubChem's identifier row for ``cas`` is the compound the handbook names: not an
    ion, its formula holds the elements the name says (a hydrate holds water's hydrogen and
    oxygen), and its common name is not another handbook compound's name (a salt's parent,
    an isomer)."""
    from capture.chem import material_key

    if not formula or re.search(r"[+-]", formula):
        return False
    elements = set(re.findall(r"[A-Z][a-z]?", formula))
    words = set(re.findall(r"[a-z]+", name.lower()))
    if any(el not in elements for w, el in _NAME_ELEMENTS.items() if w in words):
        return False
    if _HYDRATE.search(name.lower()) and not {"H", "O"} <= elements:
        return False
    other = handbook_names.get(material_key(ids["names"][1])) if len(ids["names"]) > 1 else None
    return other is None or other == cas


def density(cas: str, c: dict, formula: str | None) -> tuple[float, str] | None:
    """(g/mL at 20 °C, source key) for a liquid, or None."""
    import chemicals.volume as volume
    from chemicals.dippr import EQ105
    from molmass import Formula

    if c["rho"]:
        return c["rho"] / 1000, c["table"]
    try:
        mw = Formula(formula).mass if formula else None
    except Exception:
        mw = None
    vdi = volume.rho_data_VDI_PPDS_2
    if cas in vdi.index:
        r = vdi.loc[cas]
        if r.Tc > T20:
            return volume.volume_VDI_PPDS(T20, r.Tc, r.rhoc, r.A, r.B, r.C, r.D) / 1000, "vdi"
    perry = volume.rho_data_Perry_8E_105_l
    if cas in perry.index and mw:
        r = perry.loc[cas]
        if r.Tmin <= T20 <= r.Tmax:
            return EQ105(T20, r.C1, r.C2, r.C3, r.C4) * mw / 1e6, "perry"
    const = volume.rho_data_CRC_inorg_l_const
    if cas in const.index and mw:
        return mw / const.loc[cas].Vm / 1e6, "crc-inorg-liquid"
    return _costald(cas, mw)


def _costald(cas: str, mw: float | None) -> tuple[float, str] | None:
    from chemicals.acentric import omega
    from chemicals.critical import Tc, Vc
    from chemicals.volume import COSTALD

    try:
        tc, vc, w = Tc(cas), Vc(cas), omega(cas)
    except Exception:
        return None
    if not (tc and vc and w is not None and mw) or tc <= T20:
        return None
    return mw / COSTALD(T20, tc, vc, w) / 1e6, "costald"


def _keep_name(name: str) -> bool:
    return (
        2 <= len(name) <= 60
        and not _CAS.match(name)
        and ";" not in name
        and "(8ci" not in name
        and "(9ci" not in name
    )


def names_of(c: dict, ids: dict | None) -> list[tuple[str, int]]:
    """(name, level) for each of the compound's names: its handbook name (level 0), PubChem's
    IUPAC and common names (1), then up to ten synonyms (2)."""
    named = [(c["name"], 0)]
    if ids:
        named += [(n, 1) for n in ids["names"][:2]]
        named += [(n, 2) for n in ids["names"][2:] if _keep_name(n)][:10]
    seen, out = set(), []
    for n, level in named:
        if n.lower() not in seen:
            seen.add(n.lower())
            out.append((n, level))
    return out


_INITIAL_CAPITAL = re.compile(r"^((?:[^A-Za-z]|[A-Za-z](?![a-z]))*)([A-Z])(?=[a-z])")


def display_name(c: dict, ids: dict | None) -> str:
    """The name shown for a compound: PubChem's common name where it is short, else the
    handbook's; a capital that only starts the name is lowered ('4-Bromoanisole' →
    '4-bromoanisole'), one that means something ('N-methyl…', 'DL-…') is kept."""
    name = c["name"]
    common = ids["names"][1] if ids and len(ids["names"]) > 1 else ""
    # PubChem's names come lower-cased, which would lose the capital of 'N-methyl…': a name with a
    # one-letter locant keeps the handbook's spelling
    if _keep_name(common) and len(common) <= 40 and not re.search(r"(^|[^a-z])[a-z][,'-]", common):
        name = common
    if not re.match(r"^[A-Z][a-z]?$", name):
        name = _INITIAL_CAPITAL.sub(lambda m: m.group(1) + m.group(2).lower(), name, count=1)
    return name


SOURCES = {
    "crc-org": "CRC Handbook of Chemistry and Physics, physical constants of organic compounds "
    "(as compiled in the chemicals library {v}); density at 20 °C or 25 °C (the compilation "
    "does not say which; for common solvents the two differ by about 0.5 %)",
    "crc-inorg": "CRC Handbook of Chemistry and Physics, physical constants of inorganic "
    "compounds (as compiled in the chemicals library {v}); density at room temperature (the "
    "compilation does not say at which)",
    "vdi": "VDI Heat Atlas, PPDS saturated-liquid density fit, at 20 °C (chemicals library {v})",
    "perry": "Perry's Chemical Engineers' Handbook, 8th ed., DIPPR equation 105 fit, at 20 °C "
    "(chemicals library {v})",
    "crc-inorg-liquid": "CRC Handbook, constant densities of inorganic liquids (chemicals "
    "library {v})",
    "costald": "estimate: COSTALD correlation (Hankinson & Thomson, AIChE J. 1979, 25, 653) from "
    "critical constants, at 20 °C (chemicals library {v}); not a measured value",
    "pubchem": "PubChem identifiers (as compiled in the chemicals library {v})",
}


_SCHEMA = """
    CREATE TABLE compounds (id INTEGER PRIMARY KEY, name TEXT NOT NULL, cas TEXT NOT NULL,
        formula TEXT, smiles TEXT, state TEXT NOT NULL, density REAL, density_source TEXT,
        solvent_rank TEXT);
    CREATE TABLE names (key TEXT PRIMARY KEY, compound INTEGER NOT NULL, own INTEGER NOT NULL)
        WITHOUT ROWID;
    CREATE TABLE formulas (key TEXT PRIMARY KEY, compound INTEGER NOT NULL) WITHOUT ROWID;
    CREATE TABLE smiles (key TEXT PRIMARY KEY, compound INTEGER NOT NULL) WITHOUT ROWID;
    CREATE TABLE sources (key TEXT PRIMARY KEY, text TEXT NOT NULL);
    CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
"""


class NameIndex:
    """Name keys (``capture.chem.compact_key``: no spaces, no hyphens) → compound. A
    compound's handbook name wins over another's PubChem names, which win over another's
    synonyms; the same kind of name for two compounds is ambiguous
    and dropped. A formula names a compound only where one compound of the table has it
    ('NaNO2'; not 'C2H6O', which is ethanol and dimethyl ether)."""

    def __init__(self) -> None:
        self.keys: dict[str, tuple[int, int]] = {}  # key → (compound, level: 0 best)
        self.shared: set[str] = set()
        self.by_formula: dict[str, list[int]] = {}
        self.by_smiles: dict[str, list[int]] = {}

    def add(self, n: int, names: list[tuple[str, int]], hill: str | None, key_of) -> None:
        if hill:
            self.by_formula.setdefault(hill, []).append(n)
        for name, level in names:
            key = key_of(name)
            known = self.keys.get(key)
            if known is None or (known[0] != n and level < known[1]):
                self.keys[key] = (n, level)
                self.shared.discard(key)
            elif known[0] != n and level == known[1]:
                self.shared.add(key)

    def name_rows(self) -> list[tuple[str, int, int]]:
        return [(k, n, int(lv < 2)) for k, (n, lv) in self.keys.items() if k not in self.shared]

    def formula_rows(self) -> list[tuple[str, int]]:
        return [(hill, ns[0]) for hill, ns in self.by_formula.items() if len(ns) == 1]


def build(out: Path = OUT) -> dict[str, int]:
    import chemicals

    sys.path.insert(0, str(HERE.parent.parent))
    from capture.chem import compact_key, hill_formula, material_key

    lib = Path(chemicals.__file__).parent
    version = chemicals.__version__
    curation = tomllib.loads((HERE / "curation.toml").read_text(encoding="utf-8"))
    solvents = curation["solvents"]
    hb = handbook(lib)
    for cas, c in curated(curation).items():
        hb.setdefault(cas, c)  # the handbook's own record wins
    ids = identifiers(lib, set(hb))
    handbook_names = {material_key(c["name"]): cas for cas, c in hb.items()}
    mismatched = {
        cas for cas, i in ids.items()
        if not consistent(cas, hb[cas]["name"], i["formula"], i, handbook_names)
    }  # fmt: skip
    for cas in mismatched:
        del ids[cas]  # the handbook's name only: no formula is better than a wrong one
    out.unlink(missing_ok=True)
    db = sqlite3.connect(out)
    db.executescript(_SCHEMA)
    index = NameIndex()
    counts = {"compounds": 0, "liquids with a density": 0, "estimated densities": 0}
    for n, (cas, c) in enumerate(sorted(hb.items()), 1):
        idc = ids.get(cas)
        formula = idc["formula"] if idc else c.get("formula")
        state = _state(cas, c)
        warm = state == "solid" and c["Tm"] is not None and c["Tm"] < 303.15  # t-BuOH, mp 26 °C
        d = density(cas, c, formula) if state in {"liquid", "unknown"} or warm else None
        smiles = idc["smiles"] if idc else c.get("smiles")
        db.execute(
            "INSERT INTO compounds VALUES (?,?,?,?,?,?,?,?,?)",
            (n, display_name(c, idc), cas, formula, smiles, state, round(d[0], 5) if d else None,
             d[1] if d else None, solvents.get(cas)),
        )  # fmt: skip
        counts["compounds"] += 1
        counts["liquids with a density"] += d is not None
        counts["estimated densities"] += bool(d and d[1] == "costald")
        index.add(n, names_of(c, idc), hill_formula(formula) if formula else None,
                  lambda name: compact_key(material_key(name)))  # fmt: skip
        if smiles:  # written as PubChem writes it: a name exactly as given (SMILES keeps case)
            index.by_smiles.setdefault(smiles, []).append(n)
    names, formulas = index.name_rows(), index.formula_rows()
    db.executemany("INSERT INTO names VALUES (?,?,?)", names)
    db.executemany("INSERT INTO formulas VALUES (?,?)", formulas)
    smiles = [(k, ns[0]) for k, ns in index.by_smiles.items() if len(ns) == 1]
    db.executemany("INSERT INTO smiles VALUES (?,?)", smiles)
    counts |= {"names": len(names), "formulas": len(formulas), "SMILES": len(smiles)}
    db.executemany(
        "INSERT INTO sources VALUES (?,?)", [(k, v.format(v=version)) for k, v in SOURCES.items()]
    )
    meta = [
        ("chemicals", version),
        ("dropped ambiguous names", str(len(index.shared))),
        ("PubChem rows not matching the handbook's compound", str(len(mismatched))),
    ]
    db.executemany("INSERT INTO meta VALUES (?,?)", meta + [(k, str(v)) for k, v in counts.items()])
    db.commit()
    db.execute("VACUUM")
    db.close()
    return counts


if __name__ == "__main__":
    print(build(), f"{OUT.stat().st_size / 1e6:.2f} MB")
