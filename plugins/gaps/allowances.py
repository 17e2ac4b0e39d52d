"""The allowance table and the scale of an entry, from which allowances are estimated.

Defaults live in ``plugins/data/allowances.toml`` with their basis; a lab overrides
any of them under ``[allowances]`` in ``masstrail.toml``. Scale-dependent
allowances (a wash volume, a drying-agent mass, a column) are worked out from
the entry's own recorded amounts where it has them, so that a pilot-bay run and a
teaching-lab run are not given the same allowance.
"""

from __future__ import annotations

import functools
import hashlib
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialLine, ProductOut

TABLE_FILE = Path(__file__).resolve().parent.parent / "data" / "allowances.toml"
WATER_DENSITY = 0.9982  # g/mL at 20 °C, CRC Handbook (see data/materials.toml)


@functools.lru_cache(maxsize=1)
def table() -> dict[str, tuple[float, str]]:
    """key → (default value, basis)."""
    raw = tomllib.loads(TABLE_FILE.read_text(encoding="utf-8"))
    return {k: (float(v["value"]), v["basis"]) for k, v in raw.items()}


@hookimpl(specname="masstrail_knowledge_versions")
def allowances_version(config: LabConfig) -> list[tuple[str, str]]:
    """The version of the allowance table: a changed allowance changes the estimates, so every
    result is computed again (a lab's own overrides are part of its configuration)."""
    digest = hashlib.sha256(TABLE_FILE.read_bytes()).hexdigest()[:12]
    return [("masstrail's consumable allowances (allowances.toml)", digest)]


def value(key: str, config: LabConfig) -> tuple[float, str]:
    """The allowance parameter ``key``: the lab's override, else the default, with its basis."""
    override = getattr(config.allowances, key)
    if override is not None:
        return float(override), "lab value in masstrail.toml"
    return table()[key]


def filter_paper_g(config: LabConfig) -> tuple[float, str]:
    """One filter-paper circle: π(d/2)² × grammage."""
    d, _ = value("filter_paper_diameter_mm", config)
    g, g_basis = value("filter_paper_grammage_g_m2", config)
    mass = math.pi * (d / 2000) ** 2 * g
    return mass, f"one {d:g} mm circle at {g:g} g/m² = π(d/2)² × grammage ({g_basis})"


def _volume_ml(line: MaterialLine) -> float | None:
    vol = next((a for a in line.amounts if a.kind == "volume"), None)
    return vol.total if vol else None


@dataclass
class Scale:
    """How big the experiment is, read from its own records."""

    organic_ml: float | None  # organic solvent used in the workup (or the reaction)
    reaction_solvent_ml: float | None
    crude_g: float | None  # product mass, else the reaction's non-solvent inputs
    reagent_g: float | None  # a typical recorded reagent mass

    @classmethod
    def of(cls, materials: list[MaterialLine], product: ProductOut) -> Scale:
        def vols(stage: str) -> float:
            return sum(
                _volume_ml(m) or 0.0
                for m in materials
                if m.stage == stage and m.category == "solvent"
            )

        workup, reaction = vols("workup"), vols("reaction")
        weighed = [m for m in materials
                   if m.mass_g and m.category not in {"solvent", "water", "aqueous"}]  # fmt: skip
        solids = sorted(m.mass_g for m in weighed if m.stage == "reaction")
        # a typical reagent: the reaction's, else any stage's (an input with no stage counts)
        typical = solids or sorted(m.mass_g for m in weighed)
        return cls(
            organic_ml=workup or reaction or None,
            reaction_solvent_ml=reaction or None,
            crude_g=product.mass_g or (sum(solids) if solids else None),
            reagent_g=typical[len(typical) // 2] if typical else None,
        )

    def typical_reagent(self) -> tuple[float | None, str | None]:
        """The allowance of last resort: the entry's median recorded reagent mass, if any."""
        if not self.reagent_g:
            return None, None
        return self.reagent_g, f"{self.reagent_g:g} g, the entry's median recorded reagent mass"
