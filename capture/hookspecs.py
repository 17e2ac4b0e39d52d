"""Every hook of a masstrail run, in the order the run calls them.

A run over one entry goes: read → extract → describe → merge → balance → weigh → product →
reaction → checks → gaps → grade → metrics → write. :mod:`capture.run` only calls these hooks
and hands each answer to the next; the built-in behaviour lives in ``masstrail_plugins``,
loaded through the ``masstrail`` entry-point group like any lab's own plugin. Implementations
may take fewer arguments than the spec lists, so a spec can gain one later. Arguments keep
their names across hooks.

Units: masses g, volumes mL, amounts of substance mmol, densities g/mL, molar masses g/mol.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from pathlib import Path
from typing import TYPE_CHECKING

import pluggy

if TYPE_CHECKING:
    from capture.config import LabConfig
    from capture.models import (
        BalanceMass,
        BalanceReading,
        Entry,
        EntrySummary,
        Gap,
        MassAssignment,
        MassContext,
        MaterialInfo,
        MaterialLine,
        MergedMaterials,
        MetricsReport,
        ProductFinding,
        ProductOut,
        ReactionFigures,
        ReadingPlacement,
        RecordCheck,
        Result,
        Stage,
    )

hookspec = pluggy.HookspecMarker("masstrail")
hookimpl = pluggy.HookimplMarker("masstrail")


# --------------------------------------------------------------------------
# Finding and reading entries
# --------------------------------------------------------------------------


@hookspec
def masstrail_entry_suffixes(config: LabConfig) -> list[str]:
    """Name the file endings that are notebook entries.

    Called once per notebook that is opened (scan, watcher), before any folder is
    walked; the answers make :class:`capture.paths.EntryRule`.

    :param config: the lab configuration of the notebook.
    :returns: endings with their dot, e.g. ``[".md", ".yaml"]``; all answers are
        combined.
    """


@hookspec
def masstrail_knowledge_versions(config: LabConfig) -> list[tuple[str, str]]:
    """Name the data a plugin's answers come from, with its version.

    Called once per notebook opened, for every result's fingerprint: a new version
    recomputes every result, and the scan names the change.

    :param config: the lab configuration.
    :returns: ``[(what, version)]``; all answers are combined.
    """


@hookspec(firstresult=True)
def masstrail_read_entry(path: Path, data: bytes, relpath: str, config: LabConfig) -> Entry | None:
    """Turn the bytes of one file into an :class:`~capture.models.Entry`.

    Called once per entry file, after its bytes were read (size-capped) and
    hashed. A reader answers for the file types it knows and returns None for
    the rest. It raises :class:`capture.safeio.InputError` for a file it knows
    but cannot read; the message ends up in that entry's sidecar.

    :param path: the file on disk.
    :param data: its bytes, exactly as read and hashed.
    :param relpath: the path relative to the notebook root, with ``/``.
    :param config: the lab configuration.
    :returns: the entry, or None when the file is not this reader's type.

    Stops at first non-None result.
    """


# --------------------------------------------------------------------------
# Extracting and describing materials
# --------------------------------------------------------------------------


@hookspec
def masstrail_extract_amounts(entry: Entry, config: LabConfig) -> list[MaterialLine]:
    """List the materials an entry records, each with its amounts as written.

    Called once per entry that was read. The built-ins give the front matter's and the
    tables' materials, recovered material (role ``recovered``) and the text's mentions
    (the product's with role ``product``); ``masstrail_merge_materials`` then counts
    each material once.

    :param entry: the entry, with ``body`` holding the procedure text.
    :param config: the lab configuration.
    :returns: material lines, each with its amounts and its evidence (the key or text
        it was read from); all answers are combined, in plugin order.
    """


@hookspec(firstresult=True)
def masstrail_resolve_material(name: str, config: LabConfig) -> MaterialInfo | None:
    """Say what a material name stands for: formula, density, category.

    Called once per distinct material name in a run (answers are cached).

    :param name: the name as written, e.g. ``"EtOAc"`` or ``"sat. aq. NaHCO3"``.
    :param config: the lab configuration (its extra materials and density
        overrides).
    :returns: the material's properties, each number with its source, or None
        when this resolver does not know the name.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_line_material(
    line: MaterialLine, resolve: Callable[[str], MaterialInfo | None], config: LabConfig
) -> MaterialInfo | None:
    """Say which material knowledge one line is described and weighed with.

    Called once per input line, after extraction and before merging. The built-in takes
    the name's knowledge, lets a formula the entry gives for the line win, and weighs a
    solution with its solvent's density when its own is not known.

    :param line: the material line (``formula`` holds a formula the entry gave for it).
    :param resolve: the material knowledge (name → properties, or None).
    :param config: the lab configuration.
    :returns: the knowledge (its name, category, formula and flags are copied onto the
        line), or None when nothing is known.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_material_stage(line: MaterialLine, config: LabConfig) -> Stage | None:
    """Say which stage of the experiment a line belongs to: reaction, workup, purification.

    Called once per input line that has no stage yet (text mentions get theirs from
    the operation around them), after ``masstrail_line_material``.

    :param line: the material line, with its role and category.
    :param config: the lab configuration.
    :returns: the stage, or None when neither role nor category says.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_waste_stream(line: MaterialLine, config: LabConfig) -> str | None:
    """Say which waste stream an input goes to (reactive, metal-bearing, solid, …).

    Called once per input line, after its stage; the answer is kept on the line
    (``stream``) for the waste figures and the store.

    :param line: the material line, described.
    :param config: the lab configuration (``[waste_streams]``).
    :returns: the stream's name, or None.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_merge_materials(
    entry: Entry, lines: list[MaterialLine], config: LabConfig
) -> MergedMaterials | None:
    """Count each material once: merge the text's mentions with the structured records.

    Called once per entry, after every line was described.

    :param entry: the entry (its product's name: a mention of it is not an input).
    :param lines: every line of ``masstrail_extract_amounts``, described.
    :param config: the lab configuration.
    :returns: the inputs, the recovered lines, the product's text mention and the
        gaps for conflicting records.

    Stops at first non-None result.
    """


# --------------------------------------------------------------------------
# Balance logs
# --------------------------------------------------------------------------


@hookspec(firstresult=True)
def masstrail_read_balance_log(
    path: Path, data: bytes, relpath: str, config: LabConfig
) -> list[BalanceReading] | None:
    """Read a balance's CSV export into readings.

    Called once per file named in an entry's ``balance_log``, after the path was checked
    to lie inside the notebook and its bytes were read (size-capped). A lab adds its own
    balance's format here. A reader raises :class:`capture.safeio.InputError` (with the
    line) for a file it knows but cannot read.

    :param path: the log on disk.
    :param data: its bytes.
    :param relpath: the path relative to the notebook root, with ``/``.
    :param config: the lab configuration (``[balance_layout]``).
    :returns: the readings in file order, or None when the file is not this reader's.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_place_readings(
    entry: Entry,
    materials: list[MaterialLine],
    readings: list[BalanceReading],
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> ReadingPlacement | None:
    """Put each balance reading where it belongs: a line's mass, the product's, or a gap.

    Called once per entry, after merging and before weighing. A line given a balance
    mass is weighed from it (origin ``balance``); a reading of a material the text names
    without an amount is a new input line. Plugins may set readings' ``assigned_to``.

    :param entry: the entry (its product's name and date).
    :param materials: the input lines, merged, not yet weighed.
    :param readings: every reading of the entry's logs, in file order.
    :param resolve: the material knowledge (name → properties, or None).
    :param config: the lab configuration (``[balance_layout] max_days_from_entry``).
    :returns: new input lines, the balance masses by position in ``materials`` followed
        by those inputs, the product's, and gaps for readings that cannot be used (or
        disagree with a typed mass); None when there is nothing to place.

    Stops at first non-None result.
    """


# --------------------------------------------------------------------------
# Weighing
# --------------------------------------------------------------------------


@hookspec(firstresult=True)
def masstrail_assign_mass(
    line: MaterialLine, material: MaterialInfo | None, context: MassContext, config: LabConfig
) -> MassAssignment | None:
    """Convert one material line's amounts to a mass in g, with the basis of that mass.

    Called for every input line, the recovered lines and the product's recorded mass,
    once the line's material is described. Lines stated in equivalents only are weighed
    after the others, once ``context`` knows the limiting reagent.

    :param line: the material line, with its parsed amounts.
    :param material: what the material knowledge says about it, or None.
    :param context: the limiting reagent's name and amount (mmol), if known.
    :param config: the lab configuration.
    :returns: the mass, the amount of substance and the water in it, with the basis,
        or the reason no mass can be given; None to leave the line to another plugin.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_choose_limiting(
    materials: list[MaterialLine], config: LabConfig
) -> MaterialLine | None:
    """Choose the limiting reagent among the input lines.

    Called once per entry, after every line not stated in equivalents only was weighed;
    equivalents are reckoned from its amount, and the gap rules and reaction figures
    get it as ``limiting``.

    :param materials: the input lines, those with amounts of substance weighed.
    :param config: the lab configuration.
    :returns: the limiting reagent's line, or None when none can be told.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_product(
    entry: Entry,
    mention: MaterialLine | None,
    reading: BalanceMass | None,
    limiting: MaterialLine | None,
    resolve: Callable[[str], MaterialInfo | None],
    weigh: Callable[[MaterialLine, MaterialInfo | None], None],
    config: LabConfig,
) -> ProductFinding | None:
    """Give the product its mass: from the balance, the front matter, the text or a yield.

    Called once per entry, after the inputs were weighed.

    :param entry: the entry (its ``product``: name, mass, formula, SMILES, yield).
    :param mention: the product as the text reports it, or None.
    :param reading: the balance's mass for the product, or None.
    :param limiting: the limiting reagent's line, weighed, or None.
    :param resolve: the material knowledge (name → properties, or None).
    :param weigh: weighs a line with the given knowledge, setting its mass and basis.
    :param config: the lab configuration.
    :returns: the product with its mass (None when not recorded) and its records' gaps.

    Stops at first non-None result.
    """


@hookspec(firstresult=True)
def masstrail_reaction_figures(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    limiting: MaterialLine | None,
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> ReactionFigures | None:
    """Work out the reaction's figures once per entry: atom economy, yield, stoichiometry.

    Called once per entry, after the product's mass; the answer goes to the gap rules and
    the metrics as ``reaction``.

    :param entry: the entry (its ``equation``).
    :param materials: the input lines, weighed.
    :param product: the product with its mass.
    :param limiting: the limiting reagent's line, if one was chosen.
    :param resolve: the material knowledge (name → properties, or None).
    :param config: the lab configuration.
    :returns: the figures (with ``error`` saying why there are none), or None when the
        entry gives no equation.

    Stops at first non-None result.
    """


# --------------------------------------------------------------------------
# Record gaps
# --------------------------------------------------------------------------


@hookspec
def masstrail_check_records(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    recovered: list[MaterialLine],
    limiting: MaterialLine | None,
    reaction: ReactionFigures | None,
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> list[RecordCheck]:
    """Find the operations in an entry that consume material, and check their records.

    Called once per entry, after every material has a mass or a problem, before
    ``masstrail_find_gaps``. Each check says whether the record the operation needs
    (drying agent mass, wash volume, filter paper, …) is in the entry; an unrecorded
    one carries its gap, with an allowance.

    :param entry: the entry, with ``body`` holding the procedure text.
    :param materials: its material lines, weighed.
    :param product: the product with its mass.
    :param recovered: what the entry credits as recovered, weighed.
    :param limiting: the limiting reagent's line, or None.
    :param reaction: the reaction figures, or None without an equation.
    :param resolve: the material knowledge (name → properties, or None).
    :param config: the lab configuration (``[gaps]`` and ``[allowances]``).
    :returns: the checks, recorded or not; all answers are combined.
    """


@hookspec
def masstrail_find_gaps(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    recovered: list[MaterialLine],
    checks: list[RecordCheck],
    set_aside: list[MaterialLine],
    limiting: MaterialLine | None,
    reaction: ReactionFigures | None,
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> list[Gap]:
    """Find the records that the waste figure needs but the entry lacks.

    Called once per entry, after the checks; their gaps are added after these.

    :param entry: the entry.
    :param materials: its material lines, weighed.
    :param product: the product with its mass (None when not recorded).
    :param recovered: what the entry credits as recovered, weighed.
    :param checks: the operations' checks (``masstrail_check_records``).
    :param set_aside: the quantities that are not inputs, with their roles (``unread`` ones
        among them).
    :param limiting: the limiting reagent's line, or None.
    :param reaction: the reaction figures, or None without an equation.
    :param resolve: the material knowledge (name → properties, or None).
    :param config: the lab configuration.
    :returns: gaps, each with a severity and an actionable message; all
        answers are combined.
    """


@hookspec(firstresult=True)
def masstrail_grade_gaps(
    entry: Entry,
    gaps: list[Gap],
    materials: list[MaterialLine],
    product: ProductOut,
    config: LabConfig,
) -> list[Gap] | None:
    """Give every gap its severity, from the estimate of the missing mass.

    Called once per entry, after all gaps (from checks, rules, merging, balance logs
    and the product) are known; the run then sorts them, blocking first.

    :param entry: the entry.
    :param gaps: every gap found, with allowances in g where they could be estimated.
    :param materials: its material lines, weighed.
    :param product: the product with its mass.
    :param config: the lab configuration (``[gaps] major_fraction``).
    :returns: the gaps with their final severity, or None to keep them as they are.

    Stops at first non-None result.
    """


# --------------------------------------------------------------------------
# Metrics
# --------------------------------------------------------------------------


@hookspec
def masstrail_compute_metrics(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    recovered: list[MaterialLine],
    gaps: list[Gap],
    limiting: MaterialLine | None,
    reaction: ReactionFigures | None,
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> MetricsReport | None:
    """Compute figures for one entry.

    Called once per entry, after the gaps were graded.

    :param entry: the entry.
    :param materials: its material lines, weighed.
    :param product: the product with its mass.
    :param recovered: what the entry credits as recovered, weighed.
    :param gaps: every gap found, graded.
    :param limiting: the limiting reagent's line, or None.
    :param reaction: the reaction figures, or None without an equation.
    :param resolve: the material knowledge (name → properties, or None).
    :param config: the lab configuration.
    :returns: metrics (plain numbers, fractions 0–1, None where not computable) and,
        optionally, totals, breakdown and context; answers are merged in plugin order,
        so a later answer does not erase an earlier figure with None.
    """


# --------------------------------------------------------------------------
# Writing results
# --------------------------------------------------------------------------


@hookspec
def masstrail_notify(result: Result, gaps: list[Gap], config: LabConfig) -> None:
    """Tell someone that an entry has a new major or blocking gap.

    Called by the watcher after a recomputation opened such gaps (not for gaps
    that were already there). The built-in prints; a lab can add a
    desktop-notification or chat plugin.

    :param result: the entry's new result.
    :param gaps: the newly opened major and blocking gaps.
    :param config: the lab configuration.
    :returns: nothing; every plugin is called.
    """


@hookspec
def masstrail_write_result(
    result: Result, entry_path: Path, root: Path, config: LabConfig, batch: bool
) -> list[Path]:
    """Write one entry's result somewhere: a sidecar, a card, a store.

    Called once per entry, last, also for entries that could not be read (``status="error"``).

    :param result: the complete result.
    :param entry_path: the entry file on disk.
    :param root: the notebook root.
    :param config: the lab configuration.
    :param batch: True when a scan hands over many results in a row: a writer may hold
        them until ``masstrail_flush_results``. False for the watcher's single results,
        written at once. In a parallel scan, writers run in several workers at once (a
        store must take concurrent writers, as SQLite in WAL mode does).
    :returns: the paths written (unchanged files are not rewritten nor listed); all
        answers are combined.
    """


@hookspec(firstresult=True)
def masstrail_previous_results(root: Path, config: LabConfig, paths: list[str] | None
                               ) -> dict[str, EntrySummary] | None:  # fmt: skip
    """What a writer remembers of the last results, so a scan can skip unchanged entries.

    Called by a reusing scan, a chunk of entries at a time. Stops at first non-None result.

    :param root: the notebook root.
    :param config: the lab configuration.
    :param paths: the relative entry paths asked about, or None for every entry.
    :returns: ``{relative entry path: capture.models.EntrySummary}`` (with the
        fingerprint, hash and stat that tell whether each is still current), or None
        if this writer keeps nothing.
    """


@hookspec(firstresult=True)
def masstrail_previous_gaps(
    root: Path, relpath: str, config: LabConfig
) -> list[tuple[str, str]] | None:
    """Say which gaps an entry's last readable result had, across restarts.

    Called by the watcher before recomputing an entry it holds no gaps of, so that what
    it announces as opened and closed compares with the last good result.

    :param root: the notebook root.
    :param relpath: the entry's path relative to the root, with ``/``.
    :param config: the lab configuration.
    :returns: ``[(kind, item)]`` of each gap, or None if this writer keeps nothing.

    Stops at first non-None result.
    """


@hookspec
def masstrail_flush_results(root: Path, config: LabConfig) -> None:
    """Write whatever results a writer holds (``batch``) now.

    Called at the end of every scan that writes, before ``masstrail_scan_done``, and,
    in a parallel scan, in each worker process after each share of entries it wrote.

    :param root: the notebook root.
    :param config: the lab configuration.
    :returns: nothing; every plugin is called.
    """


@hookspec
def masstrail_scan_done(root: Path, config: LabConfig, present: Iterable[str],
                        written: Iterable[str], orphans: list[str]) -> None:  # fmt: skip
    """A scan has handed over all its results.

    Called once at the end of every scan that writes, after ``masstrail_flush_results``.
    Writers drop what they keep of entries that are no longer in the notebook.

    :param root: the notebook root.
    :param config: the lab configuration.
    :param present: the relative paths of every entry the scan saw (an iterable, not a list).
    :param written: every file the scan's writers wrote, here or in workers (likewise).
    :param orphans: the result files (``*.waste.json``, ``*.waste.md``) the scan's walk
        found with no entry beside them that would write them.
    :returns: nothing.
    """


@hookspec
def masstrail_remove_result(entry_path: Path, relpath: str, root: Path, config: LabConfig) -> None:
    """Forget the results of an entry that was deleted (or moved away).

    Called by the watcher when an entry file disappears. The sidecar writer removes
    ``NAME.waste.json`` and the card; the store drops the entry's current rows and
    keeps its history.

    :param entry_path: where the entry was on disk.
    :param relpath: that path relative to the notebook root, with ``/``.
    :param root: the notebook root.
    :param config: the lab configuration.
    :returns: nothing; every plugin is called.
    """
