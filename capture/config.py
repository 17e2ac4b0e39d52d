"""The lab configuration: an optional ``masstrail.toml`` at the notebook root.

Every key is checked; a misspelt or unknown key is an error that names the key
and the file, because a silently ignored setting is worse than none.
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    ValidationError,
    field_validator,
    model_validator,
)

from capture.paths import CONFIG_NAME


class ConfigError(Exception):
    """A lab configuration that cannot be used; the message names the file and key."""


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid")


class EFactorSettings(_Section):
    include_water: bool = Field(
        True, description="count water and aqueous solutions in the headline E-factor"
    )


class ExtraMaterial(_Section):
    name: str
    synonyms: list[str] = Field(default_factory=list)
    formula: str | None = None
    density_g_ml: float | None = Field(None, gt=0)
    density_temp_c: float | None = None
    category: str = "reagent"
    halogenated: bool = False
    water_fraction: float | None = Field(None, ge=0, le=1)
    source: str = Field(description="where the numbers come from")


class OutputSettings(_Section):
    card: bool = Field(False, description="also write a human-readable NAME.waste.md")


class ScanSettings(_Section):
    ignore: list[str] = Field(
        default_factory=list, description="glob patterns, relative to the notebook root"
    )
    max_entry_mb: float = Field(5.0, gt=0, description="entries larger than this are not read")
    max_text_kb: float = Field(
        200, gt=0, description="procedure text read per entry; the rest is a gap, not read"
    )
    max_materials: int = Field(
        1000, gt=0, description="materials an entry may list (front matter and tables)"
    )
    max_readings: int = Field(
        2000, gt=0, description="balance readings read per entry; the rest is a gap"
    )
    max_gaps: int = Field(200, gt=0, description="gaps listed per entry; the rest are summed up")

    @property
    def max_entry_bytes(self) -> int:
        """The size limit for every file masstrail reads from the notebook (entries, logs)."""
        return int(self.max_entry_mb * 1024 * 1024)


class GapSettings(_Section):
    major_fraction: float = Field(
        0.05,
        gt=0,
        lt=1,
        description="a gap is major when its allowance exceeds this fraction of the recorded waste",
    )
    aspirator_water: bool = Field(True, description="flag water used by water aspirators")


class AllowanceSettings(_Section):
    """Overrides for the allowance table (plugins/data/allowances.toml); None keeps the default."""

    filter_paper_diameter_mm: float | None = Field(None, gt=0)
    filter_paper_grammage_g_m2: float | None = Field(None, gt=0)
    cotton_plug_g: float | None = Field(None, ge=0)
    syringe_filter_g: float | None = Field(None, ge=0)
    filter_pad_g: float | None = Field(None, ge=0)
    pad_rinse_ml: float | None = Field(None, ge=0)
    drying_agent_g_per_100_ml: float | None = Field(None, ge=0)
    organic_phase_ml: float | None = Field(None, gt=0)
    liquid_ml: float | None = Field(None, gt=0)
    silica_g_per_g_crude: float | None = Field(None, gt=0)
    eluent_ml_per_g_silica: float | None = Field(None, gt=0)
    eluent_density_g_ml: float | None = Field(None, gt=0)
    recrystallisation_ml_per_g: float | None = Field(None, gt=0)
    aspirator_l_per_min: float | None = Field(None, ge=0)
    aspirator_minutes: float | None = Field(None, ge=0)
    drop_ml: float | None = Field(None, gt=0)
    spatula_tip_g: float | None = Field(None, gt=0)
    spatulaful_g: float | None = Field(None, gt=0)
    crystal_g: float | None = Field(None, gt=0)
    catalytic_amount_g: float | None = Field(None, gt=0)
    assumed_density_g_ml: float | None = Field(None, gt=0)
    assumed_molar_mass_g_mol: float | None = Field(None, gt=0)


class BalanceLayout(_Section):
    """How the lab's balance writes its CSV export; anything left out is detected."""

    delimiter: str | None = Field(None, description="',', ';' or 'tab'")
    decimal: str | None = Field(None, description="'.' or ','")
    encoding: str | None = Field(None, description="e.g. 'utf-8', 'utf-16', 'cp1252'")
    header_line: int | None = Field(None, ge=1, description="1-based line of the column names")
    label_column: str | None = None
    net_column: str | None = None
    gross_column: str | None = None
    tare_column: str | None = None
    unit_column: str | None = None
    unit: str | None = Field(None, description="the unit when the file names none, e.g. 'g'")
    date_column: str | None = None
    time_column: str | None = None
    stable_column: str | None = None
    date_order: str | None = Field(None, description="'dmy', 'mdy' or 'ymd' for ambiguous dates")
    max_days_from_entry: float = Field(
        2, ge=0, description="readings further than this from the entry's date are flagged"
    )


STREAMS = ("reactive", "metal-bearing", "halogenated organic", "non-halogenated organic",
           "aqueous", "solid")  # fmt: skip


class WasteStreamSettings(_Section):
    metals: list[str] = Field(
        default_factory=lambda: [
            "Pd",
            "Pt",
            "Rh",
            "Ru",
            "Ir",
            "Os",
            "Ni",
            "Cu",
            "Co",
            "Cr",
            "Hg",
            "Sn",
            "Ag",
            "Au",
            "Cd",
            "Pb",
            "Zn",
            "Mn",
        ],
        description="elements that make a waste metal-bearing",
    )
    assign: dict[str, str] = Field(
        default_factory=dict, description="material name → stream, overriding the rule"
    )

    def model_post_init(self, _context) -> None:
        for name, stream in self.assign.items():
            if stream not in STREAMS:
                raise ValueError(f"waste stream {stream!r} for {name!r} is not one of {STREAMS}")


class HazardWeights(_Section):
    """Weights per CHEM21 rank for the hazard-weighted E-factor (this tool's convention)."""

    recommended: float = Field(1.0, ge=0)
    problematic: float = Field(2.0, ge=0)
    hazardous: float = Field(5.0, ge=0)
    highly_hazardous: float = Field(10.0, ge=0)
    other: float = Field(1.0, ge=0, description="waste that is not a ranked solvent")


class StoreSettings(_Section):
    enabled: bool = Field(True, description="keep results and their history in SQLite")
    path: str | None = Field(
        None,
        description="database file; default .masstrail/records.db (local data folder on "
        "network shares)",
    )
    late_record_days: float = Field(
        7, ge=0, description="flag amounts first recorded this many days after the experiment"
    )
    url: str | None = Field(
        None,
        description="a shared PostgreSQL store, postgresql://USER@HOST/DB (the password from "
        "PGPASSWORD, ~/.pgpass or a service file, never here); MASSTRAIL_STORE_URL wins",
    )
    notebook: str | None = Field(
        None, description="this notebook's name in the shared store (default: its folder's)"
    )

    @model_validator(mode="after")
    def _fed_from_the_local_store(self) -> StoreSettings:
        if self.url and not self.enabled:
            raise ValueError("a shared store (url) is fed from the local store: leave "
                             "[store] enabled = true")  # fmt: skip
        return self

    @field_validator("url")
    @classmethod
    def _no_password(cls, url: str | None) -> str | None:
        from capture.store.address import has_password

        if url and has_password(url):
            raise ValueError(
                "holds a password; keep it out of masstrail.toml: use PGPASSWORD, ~/.pgpass "
                "or a PostgreSQL service file"
            )
        return url


class OrdSettings(_Section):
    creator: str | None = Field(
        None,
        description='who creates exported ORD records, "Name <email>" (the standard needs both)',
    )


class PluginSettings(_Section):
    block: list[str] = Field(default_factory=list, description="plugin names not to load")


class LabConfig(_Section):
    """The whole ``masstrail.toml``; every section is optional."""

    e_factor: EFactorSettings = Field(default_factory=EFactorSettings)
    densities: dict[str, float] = Field(
        default_factory=dict, description="g/mL at 20 °C, by material name; overrides built-ins"
    )
    materials: list[ExtraMaterial] = Field(default_factory=list)
    output: OutputSettings = Field(default_factory=OutputSettings)
    scan: ScanSettings = Field(default_factory=ScanSettings)
    plugins: PluginSettings = Field(default_factory=PluginSettings)
    gaps: GapSettings = Field(default_factory=GapSettings)
    allowances: AllowanceSettings = Field(default_factory=AllowanceSettings)
    balance_layout: BalanceLayout = Field(default_factory=BalanceLayout)
    waste_streams: WasteStreamSettings = Field(default_factory=WasteStreamSettings)
    hazard_weights: HazardWeights = Field(default_factory=HazardWeights)
    store: StoreSettings = Field(default_factory=StoreSettings)
    ord: OrdSettings = Field(default_factory=OrdSettings)
    source: str | None = Field(None, exclude=True, description="the file this was read from")


def load_config(root: Path) -> LabConfig:
    """Read ``masstrail.toml`` at ``root`` if there is one, else the defaults."""
    from capture.safeio import InputError, decode_text, read_bounded

    path = root / CONFIG_NAME
    if not os.path.lexists(path):
        return LabConfig()
    try:
        raw = tomllib.loads(decode_text(read_bounded(path, 2**20, follow=True)))
    except InputError as exc:
        raise ConfigError(f"{path}: cannot be read: {exc.message}") from exc
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: invalid TOML: {exc}") from exc
    try:
        config = LabConfig.model_validate(raw)
    except ValidationError as exc:
        problems = []
        for err in exc.errors():
            key = ".".join(str(p) for p in err["loc"])
            msg = "unknown key" if err["type"] == "extra_forbidden" else err["msg"]
            problems.append(f"{path}: key '{key}': {msg}")
        raise ConfigError("\n".join(problems)) from None
    for name, value in config.densities.items():
        if value <= 0:
            raise ConfigError(f"{path}: key 'densities.{name}': a density must be positive")
    config.source = str(path)
    return config
