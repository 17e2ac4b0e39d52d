"""Names no other resolver knows, through the ``chemicals`` library's offline name database.

The last resolver of ``masstrail_resolve_material`` (see plugins/resolve/materials.py): when the
``chemicals`` library is installed (``pip install -e '.[names]'``), a name that neither
the lab's config nor masstrail's material data knows gets the formula and molar mass the
library gives (no density). Block it with ``[plugins] block = ["names"]``.
"""

from __future__ import annotations

import functools
from pathlib import Path

from capture.chem import (
    compact_key,
    hill_formula,
    looks_like_cas,
    looks_like_formula,
    material_key,
    molar_mass,
)
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialInfo
from masstrail_plugins.resolve.knowledge import GENERIC_CLASS_NAMES, apply_lab_density


class _NameCache:
    """The chemicals library's answers, kept on disk between runs.

    Its name database is a large table that the library loads whole on the first
    unknown name (about 2.5 s and 200 MB). Its answers only change with its version,
    so each is kept in ``$XDG_CACHE_HOME/masstrail/names-<version>.json`` (default
    ``~/.cache``); a run whose names are all there never loads the table. The file is
    a cache: deleting it costs one load; a damaged one is ignored and rewritten.
    """

    def __init__(self) -> None:
        self.path: Path | None = None
        self.names: dict[str, list | None] | None = None

    def _load(self, version: str) -> dict[str, list | None]:
        import json
        import os

        base = Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache")
        self.path = base / "masstrail" / f"names-{version}-{ANSWER_RULE}.json"
        try:
            data = json.loads(self.path.read_text(encoding="utf-8"))
            return data if isinstance(data, dict) else {}
        except (OSError, ValueError):
            return {}

    def get(self, name: str, version: str) -> tuple[bool, list | None]:
        if self.names is None:
            self.names = self._load(version)
        return (name in self.names, self.names.get(name))

    def put(self, name: str, answer: list | None) -> None:
        import json

        from capture.safeio import atomic_write

        assert self.names is not None and self.path is not None
        self.names[name] = answer
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            atomic_write(self.path, json.dumps(self.names, sort_keys=True), sync_dir=False)
        except OSError:
            pass  # a cache that cannot be written only costs time


_name_cache = _NameCache()
# the rule by which an answer is accepted (see _names_it); a new rule makes a new cache file
# and, through the knowledge versions, recomputes the entries it may change
ANSWER_RULE = "names-checked-2"


@functools.lru_cache(maxsize=1)
def _chemicals_version() -> str | None:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("chemicals")
    except PackageNotFoundError:
        return None


def _chemicals_lookup(name: str) -> tuple[str, str, float] | None:
    lib = _chemicals_version()
    if lib is None:
        return None
    known, answer = _name_cache.get(name, lib)
    if not known:
        answer = _ask_chemicals(name)
        _name_cache.put(name, answer)
    return None if answer is None else (answer[0], answer[1], float(answer[2]))


def _ask_chemicals(name: str) -> list | None:
    try:
        from chemicals.identifiers import search_chemical
    except ImportError:
        return None
    try:
        found = search_chemical(name)
    except Exception:  # the library raises plain Exceptions for unknown names
        return None
    if not found or not found.formula or not _names_it(name, found):
        return None
    common = found.common_name or ""
    if not common or looks_like_cas(common):  # some compounds' "common name" is their CAS number
        common = found.iupac_name or name
    return [common, found.formula, float(found.MW)]


def _names_it(name: str, found) -> bool:
    """Whether the library's answer is the compound ``name`` names: the name is one of the
    answer's names (without spaces and hyphens only when that leaves 8 letters or more), or
    its SMILES, or a formula that is the answer's; never a radical or an ion. The library also
    reads a name that it does not know as a formula where it can ("N-methyl-4-piperidone
    hydrochloride" became the nitride ion, N³⁻) or without its spaces ("Step A" became
    thiotepa, "STEPA"): such answers are refused, and the name stays unknown rather than be
    weighed as another compound."""
    names = [found.common_name or "", found.iupac_name or "", *(found.synonyms or ())]
    if "radical" in (found.common_name or "") or getattr(found, "charge", 0):
        return False  # "tert-butyl" is a fragment of a name, not the radical; ions are not bottled
    keys = {material_key(n) for n in names if n}
    key = material_key(name)
    if key in keys:
        return True
    compact = compact_key(key)  # "ethylacetate" is ethyl acetate; "stepa" is not "Step A"
    if len(compact) >= 8 and compact in {compact_key(k) for k in keys}:
        return True
    text = name.strip()
    if found.smiles and text == found.smiles:
        return True
    hill = hill_formula(text) if looks_like_formula(text) else None
    return hill is not None and hill == hill_formula(found.formula)


@hookimpl(specname="masstrail_knowledge_versions")
def chemicals_version(config: LabConfig) -> list[tuple[str, str]]:
    """The version of the ``chemicals`` library, whose name database this plugin asks."""
    lib = _chemicals_version()
    return [("the chemicals name database (the names extra)",
             f"{lib}, answers {ANSWER_RULE}" if lib else "not installed")]  # fmt: skip


@hookimpl(trylast=True, specname="masstrail_resolve_material")
def resolve_with_chemicals(name: str, config: LabConfig) -> MaterialInfo | None:
    """The `chemicals` library's offline name database, if installed."""
    if sum(c.isalpha() for c in name) < 3:
        return None  # "3" is lithium to a name database; a real name has letters
    if material_key(name) in GENERIC_CLASS_NAMES:
        return None  # "the alcohol" is a class, not ethanol; "salt" is not NaCl
    hit = _chemicals_lookup(name.strip())
    if hit is None:
        return None
    common, formula, _mw = hit
    try:
        mm = molar_mass(formula)
    except Exception:
        return None
    info = MaterialInfo(
        name=common,
        formula=formula,
        molar_mass=round(mm, 4),
        category="reagent",
        source="chemicals library, offline name database (formula only; no density)",
    )
    return apply_lab_density(info, name, config)
