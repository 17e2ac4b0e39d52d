"""The data that flows through a masstrail run, as pydantic models.

An :class:`Entry` is what a reader makes of one notebook file. Its materials
become :class:`MaterialLine` objects, each holding the amounts as written
(:class:`AmountMention`) and, once converted, a mass in grams with the basis of
that mass. Rules add :class:`Gap` records, metric plugins fill
:class:`Metrics`, and everything is written out as one :class:`Result`: the
sidecar ``NAME.waste.json`` whose JSON Schema is ``capture/result.schema.json``.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, field_validator, model_validator

RESULT_FORMAT = "masstrail-result/1"

Severity = Literal["blocking", "major", "minor"]
# the one order of severities, worst first: tables, sorts and filters use it
SEVERITIES: tuple[Severity, ...] = ("blocking", "major", "minor")
SEVERITY_RANK: dict[str, int] = {s: i for i, s in enumerate(SEVERITIES)}
Origin = Literal["front-matter", "table", "text", "balance"]
Stage = Literal["reaction", "workup", "purification"]
Kind = Literal["mass", "volume", "amount", "equivalents", "concentration"]

# Front-matter values arrive as strings (see capture.safeio); these spellings
# mean "no value".
_NULL_WORDS = {"", "~", "null", "Null", "NULL", "none", "None"}


def _nullish(value: Any) -> Any:
    if isinstance(value, str) and value.strip() in _NULL_WORDS:
        return None
    return value


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid")


class AmountMention(_Model):
    """One amount as the chemist wrote it, parsed into a value and a unit.

    ``value`` is in ``unit``; ``multiplier`` is the ``3`` of ``3 × 40 mL``.
    ``low``/``high`` hold the two ends of a range (``10–15 mL``), in which
    case ``value`` is their midpoint.
    """

    value: float = Field(description="the number, in `unit` (the midpoint of a range)")
    unit: str = Field(description="canonical unit: g, mL, mmol, equiv or M")
    kind: Kind = Field(description="what the amount measures")
    multiplier: int = Field(1, description="the N of `N × amount`")
    approximate: bool = Field(False, description="written with ca., ~, approx. or ≈")
    low: float | None = Field(None, description="lower end of a range, in `unit`")
    high: float | None = Field(None, description="upper end of a range, in `unit`")
    text: str = Field(description="the amount exactly as written")
    span: tuple[int, int] | None = Field(
        None, description="character offsets of `text` in the entry's body, if it came from there"
    )

    @property
    def total(self) -> float:
        """The value times the multiplier, in ``unit``."""
        return self.value * self.multiplier


class _Named(BaseModel):
    """A front-matter mapping with a name. YAML flow mappings split at commas: ``{name:
    3,4-difluoro…}`` gives the name '3' and an empty key '4-difluoro…'; that is refused,
    never weighed (or named) as the wrong material."""

    model_config = ConfigDict(extra="allow")

    @model_validator(mode="after")
    def _no_split_names(self) -> _Named:
        for key, value in (self.model_extra or {}).items():
            if value is None or value == "":
                raise ValueError(
                    f"unexpected empty key {key!r} next to name {self.name!r}; a name that "
                    f'contains commas must be quoted, e.g. name: "{self.name},{key}"'
                )
        return self


class StructuredMaterial(_Named):
    """One item of the front-matter ``materials`` list or of a materials table."""

    name: str
    amount: str | None = None
    role: str | None = None
    stage: Stage | None = None

    _v = field_validator("amount", "role", "stage", mode="before")(_nullish)

    @field_validator("name", mode="before")
    @classmethod
    def _name_is_text(cls, value: Any) -> Any:
        if value is None or (isinstance(value, str) and not value.strip()):
            raise ValueError("a material needs a name")
        return str(value) if isinstance(value, (int, float)) else value

    @field_validator("amount", mode="before")
    @classmethod
    def _amount_has_unit(cls, value: Any) -> Any:
        if isinstance(value, bool):
            raise ValueError(f"amount {value!r} is not an amount")
        if isinstance(value, (int, float)):
            # JSON numbers: kept as text, so the amount reader reports the missing unit
            return str(value)
        return value


class Product(_Named):
    """The desired product of an entry."""

    name: str | None = None
    mass: str | None = None
    formula: str | None = None
    smiles: str | None = None

    _v = field_validator("name", "mass", "formula", "smiles", mode="before")(_nullish)
    _u = field_validator("mass", mode="before")(StructuredMaterial._amount_has_unit.__func__)


class Recovered(_Named):
    """Material recovered and credited against the waste (e.g. distilled solvent)."""

    name: str
    amount: str

    _u = field_validator("amount", mode="before")(StructuredMaterial._amount_has_unit.__func__)


class Entry(BaseModel):
    """One notebook entry, as a reader made it from one file.

    ``path`` is relative to the notebook root, with forward slashes.
    ``sha256`` is the hash of the file's bytes. Front-matter keys that masstrail
    does not know are kept in ``extra``.
    """

    id: str
    path: str
    sha256: str
    format: Literal["markdown", "yaml", "json", "ipynb"]
    title: str | None = None
    author: str | None = None
    group: str | None = None
    project: str | None = None
    date: dt.date | None = None
    product: Product = Field(default_factory=Product)
    equation: str | None = None
    uses: list[str] = Field(
        default_factory=list, description="ids of entries whose product this one uses"
    )
    balance_log: list[str] = Field(default_factory=list)
    materials: list[StructuredMaterial] = Field(default_factory=list)
    table_materials: list[StructuredMaterial] = Field(default_factory=list)
    unread_tables: list[str] = Field(default_factory=list)  # "line N: | header |", a gap each
    recovered: list[Recovered] = Field(default_factory=list)
    amounts_from_text: bool = Field(
        True,
        description="false: the front matter lists every amount; the body (its text and its "
        "tables) only describes",
    )
    body: str = ""
    extra: dict[str, Any] = Field(default_factory=dict)

    _v = field_validator("title", "author", "group", "project", "equation", "date", mode="before")(
        _nullish
    )

    @field_validator("balance_log", "uses", mode="before")
    @classmethod
    def _one_or_many(cls, value: Any) -> Any:
        value = _nullish(value)
        if value is None:
            return []
        return [value] if isinstance(value, str) else value

    @field_validator("materials", "recovered", mode="before")
    @classmethod
    def _list_or_none(cls, value: Any) -> Any:
        value = _nullish(value)
        return [] if value is None else value

    @field_validator("product", mode="before")
    @classmethod
    def _product_or_name(cls, value: Any) -> Any:
        value = _nullish(value)
        if value is None:
            return {}
        return {"name": value} if isinstance(value, str) else value


class MaterialInfo(_Model):
    """What the material knowledge says about a substance.

    Densities are in g/mL at ``density_temp_c``. Every number names its source.
    """

    name: str = Field(description="canonical name")
    formula: str | None = None
    molar_mass: float | None = Field(None, description="g/mol, from the formula")
    density_g_ml: float | None = None
    density_temp_c: float | None = None
    density_source: str | None = None
    category: str = "reagent"
    halogenated: bool = False
    water_fraction: float | None = Field(
        None, description="mass fraction of water, for water and aqueous solutions"
    )
    chem21: str | None = Field(None, description="CHEM21 solvent rank (Prat et al. 2016)")
    reactive: bool = Field(False, description="reactive or pyrophoric: quench before disposal")
    source: str = Field(description="where this record comes from")


class MaterialLine(_Model):
    """One material that went into the experiment, with its mass and the basis of it."""

    name: str = Field(description="the name as written")
    resolved: str | None = Field(None, description="canonical name from the material knowledge")
    role: str | None = None
    operation: str | None = Field(
        None, description="the operation the text mention belongs to (wash, drying, …)"
    )
    category: str | None = None
    stage: Stage | None = None
    stated: str | None = Field(None, description="the amount exactly as written")
    amounts: list[AmountMention] = Field(default_factory=list)
    mass_g: float | None = None
    moles_mmol: float | None = None
    basis: str | None = Field(None, description="how mass_g was obtained, with the constants used")
    origin: Origin
    evidence: str | None = Field(None, description="the text the amount was read from")
    problem: str | None = Field(None, description="why no mass could be given, if none")
    problem_kind: str | None = Field(None, description="the gap kind of that problem")
    water_g: float | None = Field(None, description="water contained in this mass, in g")
    formula: str | None = Field(None, description="molecular formula, if known")
    halogenated: bool | None = None
    chem21: str | None = Field(None, description="CHEM21 solvent rank, for solvents")
    reactive: bool | None = Field(None, description="reactive or pyrophoric")
    solvent: str | None = Field(
        None,
        description="for a solution: its solvent, whose density stands in when the "
        "solution's own is not known",
    )
    note: str | None = Field(
        None, description="how the amount was derived before weighing (e.g. a mixture's share)"
    )
    stated_yield: float | None = Field(
        None, description="for the product's mention: the yield the text states, 0–1"
    )
    # set by masstrail_waste_stream; read by the waste figures and the store's materials
    # table. Kept out of the sidecar, whose format it would change (the streams' totals are
    # in its `waste.streams`).
    stream: str | None = Field(None, exclude=True)


class BalanceReading(_Model):
    """One reading from a balance's CSV export."""

    file: str = Field(description="the log, relative to the notebook root")
    line: int = Field(description="1-based line in the file")
    label: str
    mass_g: float | None = Field(description="net mass in g; None if it could not be read")
    as_written: str = Field(description="the value (and unit) as the balance wrote it")
    stable: bool | None = Field(None, description="the balance's stability flag, if it gives one")
    timestamp: str | None = Field(None, description="ISO date and time of the reading, if known")
    assigned_to: str | None = Field(None, description="the material or product it was used for")


class Gap(_Model):
    """A record the waste figure needs but the entry lacks, or a record that is wrong."""

    kind: str
    item: str = Field(description="what the gap is about (a material, the product, a file)")
    severity: Severity
    evidence: str | None = Field(None, description="the text or key that shows the gap")
    message: str = Field(description="what is missing and what to do about it")
    allowance_g: float | None = Field(
        None, description="estimated mass of the missing record, in g (assumed, not recorded)"
    )
    allowance_basis: str | None = Field(None, description="how allowance_g was estimated")
    in_estimate: bool = Field(
        True, description="whether allowance_g is added to e_factor_estimated and completeness"
    )
    missing_mass: bool = Field(
        False, description="it stands for input mass the figures lack (sized or not given)"
    )


class RecordCheck(_Model):
    """One operation found in the entry and whether the record it needs is there."""

    operation: str = Field(description="filtration, drying, wash, chromatography, …")
    needs: str = Field(description="the record the operation needs, e.g. 'drying agent mass'")
    item: str = Field(description="the material or consumable concerned")
    recorded: bool
    evidence: str | None = Field(None, description="the sentence that shows the operation")
    gap: Gap | None = Field(
        None, exclude=True, description="the gap, when the record is missing (listed in gaps)"
    )


class Metrics(_Model):
    """The entry's figures. Fractions are 0–1, not percent; null where not computable."""

    model_config = ConfigDict(extra="allow", populate_by_name=True)

    e_factor: float | None = Field(None, description="complete E-factor from recorded masses")
    e_factor_simple: float | None = Field(None, description="simple E-factor (sEF)")
    e_factor_estimated: float | None = Field(None, description="E-factor with gap allowances")
    pmi: float | None = Field(None, description="process mass intensity")
    atom_economy: float | None = None
    yield_: float | None = Field(None, alias="yield", serialization_alias="yield")
    rme: float | None = Field(None, description="reaction mass efficiency")
    completeness: float | None = Field(
        None,
        description="recorded input mass ÷ (recorded + allowance mass), 0–1; null when a "
        "missing_mass gap has no allowance_g",
    )
    theoretical_yield_g: float | None = Field(None, description="from the limiting reagent")
    stoichiometric_factor: float | None = Field(
        None, description="SF: reactants used ÷ stoichiometric reactants (Andraos 2005)"
    )
    mrp: float | None = Field(None, description="materials recovery parameter (Andraos 2005)")
    rme_global: float | None = Field(
        None, description="yield × AE × (1/SF) × MRP: RME with all auxiliaries (Andraos 2005)"
    )
    carbon_efficiency: float | None = None
    mass_intensity: float | None = Field(None, description="total mass without water ÷ product")
    hazard_weighted_e: float | None = Field(
        None, description="Σ waste × rank weight ÷ product, in the spirit of Sheldon's EQ"
    )


class Totals(_Model):
    """Mass sums behind the metrics, in grams."""

    inputs_g: float = Field(description="every recorded input")
    product_g: float | None
    recovered_g: float = Field(description="credited as recovered")
    waste_g: float | None = Field(description="inputs − product − recovered")
    water_g: float = Field(description="water in the inputs (pure water and aqueous solutions)")


class Breakdown(_Model):
    """Where the input mass goes, by category and by stage."""

    by_category: dict[str, float] = Field(default_factory=dict)
    by_stage: dict[str, float] = Field(default_factory=dict)
    largest: str | None = Field(None, description="the largest single contributor, in words")


class ProductOut(_Model):
    name: str | None
    mass_g: float | None
    basis: str | None = None
    molar_mass: float | None = Field(None, description="g/mol, from product.formula")
    formula: str | None = None


class EntryRef(_Model):
    id: str
    path: str
    sha256: str | None
    balance_log: list[str] = Field(
        default_factory=list, description="the balance logs the entry names, as written"
    )
    inputs_sha256: str | None = Field(
        None,
        description="fingerprint of everything this result depends on: the entry, its balance "
        "logs, the lab configuration, and the versions of masstrail, its plugins, the libraries "
        "it weighs with and the material data it answers from; a scan recomputes the entry only "
        "when it changes",
    )
    # the entry file's stat when it was read, "mtime_ns:ctime_ns:inode:size", for the store
    # only (not in the sidecar: a copy of the notebook has other stats); None when the file
    # changed too shortly before it was read to be trusted (see capture.fingerprint.file_stat)
    _stat: str | None = PrivateAttr(None)


class EntryError(_Model):
    """Why an entry could not be processed at all."""

    message: str
    location: str | None = Field(None, description="file, line or key")


class Result(_Model):
    """Everything masstrail says about one entry: the content of ``NAME.waste.json``."""

    format: Literal["masstrail-result/1"] = RESULT_FORMAT
    generator: str = Field(description="masstrail and its version")
    status: Literal["ok", "error"]
    error: EntryError | None = None
    entry: EntryRef
    meta: dict[str, str | None] = Field(
        default_factory=dict, description="title, author, group, project, date"
    )
    uses: list[str] = Field(default_factory=list, description="entries whose product this one uses")
    product: ProductOut
    materials: list[MaterialLine] = Field(default_factory=list)
    recovered: list[MaterialLine] = Field(
        default_factory=list, description="credited as recovered, not counted as waste"
    )
    set_aside: list[MaterialLine] = Field(
        default_factory=list,
        description="every other quantity the text states, with its role: the product's "
        "mentions, intermediates and crude masses, samples, equipment, conditions, "
        "characterisation, and unread quantities (each unread one is also a gap)",
    )
    gaps: list[Gap] = Field(default_factory=list)
    readings: list[BalanceReading] = Field(
        default_factory=list, description="balance readings from the entry's balance_log files"
    )
    checks: list[RecordCheck] = Field(
        default_factory=list, description="operations found and whether their records are there"
    )
    metrics: Metrics = Field(default_factory=Metrics)
    totals: Totals | None = None
    breakdown: Breakdown | None = None
    waste: WasteProfile | None = None
    context: dict[str, str] = Field(default_factory=dict)
    caution: str

    def sidecar_json(self) -> str:
        """The sidecar text: stable key order, two-space indent, trailing newline."""
        return self.model_dump_json(indent=2, by_alias=True) + "\n"


class MassContext(_Model):
    """What the weighing of one line may need to know about the rest of the entry."""

    limiting_name: str | None = None
    limiting_mmol: float | None = Field(None, description="amount of the limiting reagent, mmol")


class MassAssignment(_Model):
    """A mass for one material line, or the reason there is none."""

    mass_g: float | None = None
    moles_mmol: float | None = None
    water_g: float | None = Field(None, description="water contained in mass_g, in g")
    basis: str | None = None
    problem: str | None = Field(None, description="why no mass could be given")
    problem_kind: str | None = Field(None, description="gap kind for the problem")


class WasteProfile(_Model):
    """What the waste is: by stream and, for solvents, by CHEM21 rank (masses in g)."""

    streams: dict[str, float] = Field(default_factory=dict)
    solvent_ranks: dict[str, float] = Field(
        default_factory=dict, description="solvent waste by CHEM21 rank (Prat et al. 2016)"
    )
    summary: str | None = None
    rule: str = Field(description="how each mass was assigned to a stream")


class MetricsReport(_Model):
    """One metrics plugin's answer, merged into the result."""

    metrics: dict[str, float | None] = Field(default_factory=dict)
    waste: WasteProfile | None = None
    totals: Totals | None = None
    breakdown: Breakdown | None = None
    context: dict[str, str] = Field(default_factory=dict)


# --------------------------------------------------------------------------------------
# What the stages of one entry's run hand each other (see capture.hookspecs)
# --------------------------------------------------------------------------------------
# roles that mark a line of masstrail_extract_amounts as not an input: every quantity of an
# entry is an input, recovered, or one of these
SET_ASIDE_ROLES = frozenset({"product", "intermediate", "sample", "equipment", "condition",
                             "characterisation", "unread"})  # fmt: skip


class MergedMaterials(_Model):
    """The entry's material lines after the text was merged with the structured records."""

    materials: list[MaterialLine] = Field(description="the inputs, each counted once")
    recovered: list[MaterialLine] = Field(default_factory=list, description="credited lines")
    product_mention: MaterialLine | None = Field(
        None, description="the product as the text reports it (`... to give X (2.41 g)`)"
    )
    set_aside: list[MaterialLine] = Field(
        default_factory=list, description="the quantities that are not inputs (SET_ASIDE_ROLES)"
    )
    gaps: list[Gap] = Field(default_factory=list, description="conflicting records")


class BalanceMass(_Model):
    """What the balance says one material (or the product) weighed, and from which readings."""

    mass_g: float
    basis: str = Field(description="the readings: file, line, time stamp, value")


class ReadingPlacement(_Model):
    """Where an entry's balance readings went."""

    inputs: list[MaterialLine] = Field(
        default_factory=list,
        description="new input lines: materials the text names without an amount that a "
        "reading weighs; they follow the entry's materials",
    )
    masses: dict[int, BalanceMass] = Field(
        default_factory=dict,
        description="by position in the materials list followed by ``inputs``: the balance "
        "mass that replaces what was typed for that line",
    )
    product: BalanceMass | None = None
    gaps: list[Gap] = Field(default_factory=list, description="readings that could not be used")


class ProductFinding(_Model):
    """The product with its mass, and the gaps its records raise."""

    product: ProductOut
    gaps: list[Gap] = Field(default_factory=list)


class ReactionFigures(_Model):
    """What the entry's ``equation`` and records give, worked out once per entry.

    ``error`` says why there are no figures (an equation that cannot be read or does
    not balance); every figure is then None.
    """

    equation: str = Field(description="the equation as written")
    error: str | None = None
    product_term: str | None = Field(None, description="the equation's desired product")
    product_formula: str | None = None
    product_molar_mass: float | None = Field(None, description="g/mol")
    atom_economy: float | None = None
    limiting: str | None = Field(None, description="the limiting reactant, by the equation")
    limiting_mmol_per_coef: float | None = None
    theoretical_yield_g: float | None = None
    yield_: float | None = None
    reactant_mass_g: float | None = Field(None, description="Σ m of the matched reactants")
    stoichiometric_mass_g: float | None = Field(
        None, description="Σ m the equation needs at the limiting reactant's amount"
    )
    carbon_efficiency: float | None = None
    reactants: list[str] = Field(
        default_factory=list, description="names of the material lines matched to reactants"
    )


@dataclass(slots=True)
class EntrySummary:
    """What a scan keeps of one entry's current result: its summary, and what tells whether
    it is still current (the fingerprint of its inputs, its hash and stat, the balance logs
    it names). A scan of 100,000 entries keeps these, not the full results; the store keeps
    the same (``masstrail_previous_results``), so the next scan can skip unchanged entries.
    """

    path: str
    status: str
    product_g: float | None = None
    e_factor: float | None = None
    pmi: float | None = None
    blocking: int = 0
    major: int = 0
    minor: int = 0
    error: str | None = None
    location: str | None = None
    recomputed: bool = True
    inputs_sha256: str | None = None
    sha256: str | None = None  # the entry file's hash
    stat: str | None = None  # its stat when read (see capture.fingerprint.file_stat)
    logs: tuple[str, ...] = ()  # the balance logs the entry names, as written

    @classmethod
    def of(cls, r: Result) -> EntrySummary:
        counts = dict.fromkeys(SEVERITIES, 0)
        for g in r.gaps:
            counts[g.severity] += 1
        return cls(
            path=r.entry.path,
            status=r.status,
            product_g=r.product.mass_g,
            e_factor=r.metrics.e_factor,
            pmi=r.metrics.pmi,
            error=r.error.message if r.error else None,
            location=r.error.location if r.error else None,
            inputs_sha256=r.entry.inputs_sha256,
            sha256=r.entry.sha256,
            stat=r.entry._stat,
            logs=tuple(r.entry.balance_log),
            **counts,
        )
