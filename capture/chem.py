"""Chemistry helpers shared by the core and the plugins: name folding, molar masses and
formulas from SMILES."""

from __future__ import annotations

import functools
import re
import unicodedata

# words that describe the state of a material, not which material it is
_DROP_PREFIXES = ("anhydrous ", "dry ", "freshly distilled ", "degassed ", "distilled ",
                  "ice-cold ", "ice cold ", "cold ", "hot ", "warm ", "boiling ", "chilled ",
                  "fresh ", "cooled ", "pre-cooled ", "wet ")  # fmt: skip
_TOKEN_MAP = {
    "sat.": "saturated",
    "sat": "saturated",
    "satd.": "saturated",
    "satd": "saturated",
    "aq.": "aqueous",
    "aq": "aqueous",
}


@functools.lru_cache(maxsize=8192)
def material_key(name: str) -> str:
    """The form in which names are compared: case, spacing, dashes and 'sat. aq.' folded."""
    s = unicodedata.normalize("NFKC", name).replace("\u2212", "-").replace("–", "-")
    s = re.sub(r"\s+", " ", s.replace("·", ".")).strip().strip(".,;:").casefold()
    changed = True
    while changed:
        changed = False
        for prefix in _DROP_PREFIXES:
            if s.startswith(prefix):
                s, changed = s[len(prefix) :], True
    out: list[str] = []
    for t in (_TOKEN_MAP.get(t, t) for t in s.split(" ")):
        if t == "aqueous" and out and out[-1] == "saturated":
            continue  # "saturated aqueous X" and "saturated X" are the same solution
        out.append(t)
    return " ".join(out)


@functools.lru_cache(maxsize=4096)
def molar_mass(formula: str) -> float:
    """Molar mass in g/mol from IUPAC standard atomic weights (the molmass library).

    Raises ValueError for a formula that cannot be read.
    """
    import molmass

    try:
        return float(molmass.Formula(formula).mass)
    except Exception as exc:  # molmass raises its own FormulaError and others
        raise ValueError(f"cannot read the formula {formula!r}: {exc}") from exc


def formula_from_smiles(smiles: str) -> str | None:
    """The molecular formula of a SMILES string, through RDKit when it is installed."""
    try:
        from rdkit import Chem, RDLogger
        from rdkit.Chem.rdMolDescriptors import CalcMolFormula
    except ImportError:
        return None
    RDLogger.DisableLog("rdApp.*")
    mol = Chem.MolFromSmiles(smiles)
    return CalcMolFormula(mol) if mol is not None else None
