"""One entry's run: the hooks of each stage, in order.

read → extract → describe → merge → balance → weigh → product → reaction → checks →
gaps → grade → metrics (the writers come after, from :class:`capture.notebook.Notebook`).

The run only calls hooks (see :mod:`capture.hookspecs`) and hands each stage's answer to the
next; the rules live in the plugins. One broken entry never stops a scan: whatever goes
wrong with an entry becomes that entry's ``status="error"`` result.
"""

from __future__ import annotations

import hashlib
from pathlib import Path
from typing import TYPE_CHECKING

from capture.fingerprint import GENERATOR, file_stat
from capture.models import (
    SET_ASIDE_ROLES,
    SEVERITY_RANK,
    AmountMention,
    BalanceMass,
    BalanceReading,
    Entry,
    EntryError,
    EntryRef,
    Gap,
    MassContext,
    MaterialInfo,
    MaterialLine,
    MergedMaterials,
    Metrics,
    ProductFinding,
    ProductOut,
    ReadingPlacement,
    Result,
)
from capture.notebook import flatten
from capture.paths import entry_stem
from capture.safeio import InputError, read_bounded, safe_log_path

if TYPE_CHECKING:
    from capture.config import LabConfig
    from capture.notebook import Notebook

__all__ = ["CAUTION", "GENERATOR", "compute", "error_result", "process_entry"]

CAUTION = (
    "These figures support record keeping and the comparison of routes; they are not a "
    "hazard assessment. Dispose of waste according to local regulations, the safety data "
    "sheets and your lab's safety office."
)


def process_entry(nb: Notebook, path: Path) -> Result:
    """Read and compute one entry file; never raises for bad input (an error result instead)."""
    data = None
    try:
        rel = nb.relpath(path)
    except ValueError:
        rel = path.name
    stat = file_stat(path)  # before the read: a change after it shows in the next stat
    try:
        data = read_bounded(path, nb.config.scan.max_entry_bytes)
        result = compute(nb, read_entry(nb, path, data, rel))
    except InputError as exc:
        result = error_result(path, rel, _sha(data), exc.message, exc.location)
    except Exception as exc:  # a plugin's bug must not stop the scan
        message = f"internal error while processing this entry: {exc!r}"
        result = error_result(path, rel, _sha(data), message, None)
    if result.entry.sha256:
        result.entry.inputs_sha256 = nb.fingerprints.of_entry(
            result.entry.sha256, path.parent, result.entry.balance_log
        )
        result.entry._stat = stat
    return result


def read_entry(nb: Notebook, path: Path, data: bytes, rel: str) -> Entry:
    """The entry in ``data`` (the bytes of ``path``), by the readers; InputError if none can."""
    entry = nb.pm.hook.masstrail_read_entry(path=path, data=data, relpath=rel, config=nb.config)
    if entry is None:
        raise InputError("no reader for this kind of file")
    return entry


def compute(nb: Notebook, entry: Entry) -> Result:
    """Everything masstrail says about one entry that was read: each stage is a hook call."""
    hook, config, resolve = nb.pm.hook, nb.config, nb.resolve
    limit_gaps = _bound_text(entry, config)
    lines = flatten(hook.masstrail_extract_amounts(entry=entry, config=config))
    if len(lines) > config.scan.max_materials:  # the text's mentions: the list's were refused
        left = len(lines) - config.scan.max_materials
        lines = lines[: config.scan.max_materials]
        limit_gaps.append(Gap(kind="text_not_read", item="procedure text", severity="major",
                              missing_mass=True, evidence=f"{left:,} more mentions of amounts",
                              message=f"the entry names more than "
                              f"{config.scan.max_materials:,} amounts ([scan] max_materials); "
                              f"the last {left:,} were not read"))  # fmt: skip
    infos = {id(line): describe(nb, line) for line in lines}
    merged = hook.masstrail_merge_materials(entry=entry, lines=lines, config=config)
    merged = merged or _unmerged(lines)
    materials, gaps = merged.materials, list(merged.gaps)

    readings, log_gaps = read_balance_logs(nb, entry)
    log_gaps += limit_gaps
    placement = (
        hook.masstrail_place_readings(
            entry=entry, materials=materials, readings=readings, resolve=resolve, config=config
        )
        or ReadingPlacement()
    )
    gaps += log_gaps + placement.gaps
    for line in placement.inputs:  # named in the text without an amount, weighed on the balance
        infos[id(line)] = describe(nb, line)
        materials.append(line)
    for i, reading in placement.masses.items():
        take_reading(materials[i], reading)
    limiting, context = weigh_materials(nb, materials, infos)
    for i, reading in placement.masses.items():
        materials[i].basis = reading.basis  # the balance's readings are the record
    for line in merged.recovered:
        weigh(nb, line, infos.get(id(line)), context)

    def weigh_product(line: MaterialLine, info: MaterialInfo | None) -> None:
        weigh(nb, line, info, MassContext())

    finding = hook.masstrail_product(
        entry=entry, mention=merged.product_mention, reading=placement.product,
        limiting=limiting, resolve=resolve, weigh=weigh_product, config=config,
    ) or ProductFinding(product=ProductOut(name=entry.product.name, mass_g=None))  # fmt: skip
    product, gaps = finding.product, gaps + finding.gaps
    reaction = hook.masstrail_reaction_figures(
        entry=entry, materials=materials, product=product, limiting=limiting, resolve=resolve,
        config=config,
    )  # fmt: skip

    common = {"entry": entry, "materials": materials, "product": product,
              "recovered": merged.recovered, "limiting": limiting, "reaction": reaction,
              "resolve": resolve, "config": config}  # fmt: skip
    checks = flatten(hook.masstrail_check_records(**common))
    found = hook.masstrail_find_gaps(checks=checks, set_aside=merged.set_aside, **common)
    gaps = (flatten(found)
            + [c.gap for c in checks if c.gap is not None] + gaps)  # fmt: skip
    graded = hook.masstrail_grade_gaps(entry=entry, gaps=gaps, materials=materials,
                                       product=product, config=config)  # fmt: skip
    gaps = sorted(gaps if graded is None else graded, key=lambda g: SEVERITY_RANK[g.severity])
    figures = merge_reports(hook.masstrail_compute_metrics(gaps=gaps, **common))
    gaps = _bound_gaps(gaps, config.scan.max_gaps)  # after the metrics, which count them all
    return Result(
        generator=GENERATOR,
        status="ok",
        entry=EntryRef(id=entry.id, path=entry.path, sha256=entry.sha256,
                       balance_log=[str(ref) for ref in entry.balance_log]),
        meta=_meta(entry),
        uses=entry.uses,
        product=product,
        materials=materials,
        recovered=merged.recovered,
        set_aside=merged.set_aside,
        gaps=gaps,
        readings=readings,
        checks=checks,
        caution=CAUTION,
        **figures,
    )  # fmt: skip


def _meta(entry: Entry) -> dict[str, str | None]:
    day = entry.date.isoformat() if entry.date else None
    return {"title": entry.title, "author": entry.author, "group": entry.group,
            "project": entry.project, "date": day}  # fmt: skip


def _unmerged(lines: list[MaterialLine]) -> MergedMaterials:
    """Without a merging plugin every input line counts (the set-aside lines are none)."""
    set_aside = [m for m in lines if m.role in SET_ASIDE_ROLES]
    return MergedMaterials(
        materials=[m for m in lines if m.role not in SET_ASIDE_ROLES | {"recovered"}],
        recovered=[m for m in lines if m.role == "recovered"],
        product_mention=next((m for m in set_aside if m.role == "product"), None),
        set_aside=set_aside,
    )


# ---------------------------------------------------------------------- the stages' plumbing
def fill(line: MaterialLine, **values) -> None:
    """Set several fields of a line in one step, as pydantic's assignment does without
    ``validate_assignment`` (store each value, mark the field set) but without its per-field
    dispatch. The values come from checked models (``MaterialInfo``, ``MassAssignment``), of
    the fields' own types."""
    line.__dict__.update(values)
    line.__pydantic_fields_set__.update(values)


def describe(nb: Notebook, line: MaterialLine) -> MaterialInfo | None:
    """Give a line what the material knowledge says of it, its stage and its waste stream
    (``masstrail_line_material``, ``masstrail_material_stage``, ``masstrail_waste_stream``);
    return the knowledge it is weighed with. The product's mention is an output, and a
    recovered line is credited, not waste: it takes only its name and category."""
    hook, config = nb.pm.hook, nb.config
    if line.role in SET_ASIDE_ROLES:
        return None  # not an input: the product's mention, an intermediate, unread …
    if line.role == "recovered":
        info = nb.resolve(line.name)
        if info is not None:
            line.resolved, line.category = info.name, info.category
        return info
    info = hook.masstrail_line_material(line=line, resolve=nb.resolve, config=config)
    if info is not None:
        fill(line, resolved=info.name, category=info.category, formula=info.formula,
             halogenated=info.halogenated, chem21=info.chem21, reactive=info.reactive)  # fmt: skip
    line.stage = line.stage or hook.masstrail_material_stage(line=line, config=config)
    line.stream = hook.masstrail_waste_stream(line=line, config=config)
    return info


def read_balance_logs(nb: Notebook, entry: Entry) -> tuple[list[BalanceReading], list[Gap]]:
    """Every reading of the entry's balance logs (``masstrail_read_balance_log``, each path
    checked to lie inside the notebook first); a gap for each log that cannot be used."""
    readings: list[BalanceReading] = []
    gaps: list[Gap] = []
    entry_dir = (nb.root / entry.path).parent
    for ref in entry.balance_log:
        try:
            path = safe_log_path(nb.root, entry_dir, str(ref))
            rel = path.relative_to(nb.root).as_posix()
            data = read_bounded(path, nb.config.scan.max_entry_bytes)
            got = nb.pm.hook.masstrail_read_balance_log(path=path, data=data, relpath=rel,
                                                        config=nb.config)  # fmt: skip
            if got is None:
                raise InputError("no balance reader knows this file's format")
            room = nb.config.scan.max_readings - len(readings)
            if len(got) > room:
                gaps.append(Gap(kind="readings_not_read", item=str(ref), severity="major",
                                evidence=f"balance_log: {ref}",
                                message=f"the balance logs hold more than "
                                f"{nb.config.scan.max_readings:,} readings ([scan] "
                                f"max_readings); those of {ref} after its first "
                                f"{max(room, 0):,} were not read"))  # fmt: skip
                got = got[: max(room, 0)]
            readings += got
        except InputError as exc:
            where = f" ({exc.location})" if exc.location else ""
            refused = "outside the notebook" in exc.message or "network path" in exc.message
            gaps.append(Gap(kind="balance_log_refused" if refused else "balance_log_unreadable",
                            item=str(ref), severity="major", evidence=f"balance_log: {ref}{where}",
                            message=f"the balance log {ref}{where} cannot be used: "
                            f"{exc.message}"))  # fmt: skip
    return readings, gaps


def _bound_text(entry: Entry, config: LabConfig) -> list[Gap]:
    """Cut a procedure text longer than ``[scan] max_text_kb`` at the last sentence end before
    the limit (the work per entry stays bounded); a gap says how much was not read."""
    limit = int(config.scan.max_text_kb * 1024)
    if len(entry.body) <= limit:
        return []
    cut = max(entry.body.rfind(". ", 0, limit) + 1, limit // 2)
    left = len(entry.body) - cut
    entry.body = entry.body[:cut]
    return [Gap(kind="text_not_read", item="procedure text", severity="major", missing_mass=True,
                evidence=f"the last {left:,} of {cut + left:,} characters",
                message=f"the procedure text is {cut + left:,} characters long; masstrail read the "
                f"first {cut:,} ([scan] max_text_kb) and not the last {left:,}, so their amounts "
                "are not in the figures")]  # fmt: skip


_LIMIT_KINDS = {"text_not_read", "readings_not_read"}


def _bound_gaps(gaps: list[Gap], most: int) -> list[Gap]:
    """At most ``most`` gaps, the most serious first; the rest summed up in one gap."""
    if len(gaps) <= most:
        return gaps
    first = [g for g in gaps if g.kind in _LIMIT_KINDS]  # what was not read: always listed
    gaps = first + [g for g in gaps if g.kind not in _LIMIT_KINDS]
    kept, rest = gaps[: most - 1], gaps[most - 1 :]
    kinds = sorted({g.kind for g in rest})
    allowance = sum(g.allowance_g or 0.0 for g in rest if g.in_estimate)
    return [*kept, Gap(kind="more_gaps", item=f"{len(rest)} more gaps", severity=rest[0].severity,
                       evidence=", ".join(kinds)[:300], allowance_g=round(allowance, 4) or None,
                       missing_mass=any(g.missing_mass for g in rest),
                       message=f"{len(rest):,} more gaps ({', '.join(kinds)[:200]}) are not "
                       "listed one by one ([scan] max_gaps); their allowances are summed "
                       "here")]  # fmt: skip


def take_reading(line: MaterialLine, reading: BalanceMass) -> None:
    """The balance's mass replaces what was typed for ``line`` (the balance is the record)."""
    text = f"{reading.mass_g:g} g"
    line.amounts = [AmountMention(value=reading.mass_g, unit="g", kind="mass", text=text)]
    line.problem = line.problem_kind = None
    line.origin = "balance"


def weigh(nb: Notebook, line: MaterialLine, info: MaterialInfo | None, ctx: MassContext) -> None:
    """Give ``line`` its mass, moles, water and basis (``masstrail_assign_mass``), or the
    problem that prevents one."""
    if line.problem or not line.amounts:
        return
    got = nb.pm.hook.masstrail_assign_mass(line=line, material=info, context=ctx,
                                           config=nb.config)  # fmt: skip
    if got is None:
        line.problem = f"no plugin could weigh {line.stated!r}"
        line.problem_kind = "unweighed"
        return
    fill(line, mass_g=_round(got.mass_g), moles_mmol=_round(got.moles_mmol),
         water_g=_round(got.water_g), basis=got.basis, problem=got.problem,
         problem_kind=got.problem_kind)  # fmt: skip


def weigh_materials(
    nb: Notebook, materials: list[MaterialLine], infos: dict[int, MaterialInfo | None]
) -> tuple[MaterialLine | None, MassContext]:
    """Weigh every line: first those that do not need the limiting reagent, then
    (``masstrail_choose_limiting``) those stated relative to it only (equivalents, a
    solvent's concentration)."""
    later = {id(m) for m in materials if _relative_only(m)}
    for line in materials:
        if id(line) not in later:
            weigh(nb, line, infos.get(id(line)), MassContext())
    limiting = nb.pm.hook.masstrail_choose_limiting(materials=materials, config=nb.config)
    context = MassContext()
    if limiting is not None:
        context = MassContext(limiting_name=limiting.name, limiting_mmol=limiting.moles_mmol)
    for line in materials:
        if id(line) in later:
            weigh(nb, line, infos.get(id(line)), context)
    return limiting, context


def merge_reports(reports) -> dict:
    """The metrics plugins' answers merged in order: a later None never erases a figure."""
    metrics: dict[str, float | None] = {}
    out: dict = {"totals": None, "breakdown": None, "waste": None, "context": {}}
    for report in reports:
        if report is None:
            continue
        for name, value in report.metrics.items():
            if value is not None or name not in metrics:
                metrics[name] = value
        for key in ("totals", "breakdown", "waste"):
            out[key] = getattr(report, key) or out[key]
        out["context"].update(report.context)
    out["metrics"] = Metrics.model_validate(metrics)
    return out


def error_result(
    path: Path, rel: str, sha: str | None, message: str, location: str | None
) -> Result:
    """The result of an entry that could not be processed: its sidecar says why."""
    return Result(
        generator=GENERATOR,
        status="error",
        error=EntryError(message=message, location=location),
        entry=EntryRef(id=entry_stem(path), path=rel, sha256=sha),
        product=ProductOut(name=None, mass_g=None),
        caution=CAUTION,
    )


def _relative_only(line: MaterialLine) -> bool:
    """A line stated only relative to the limiting reagent: in equivalents ("1.5 equiv"), or
    a solvent by the concentration it makes ("THF (0.2 M)")."""
    kinds = {a.kind for a in line.amounts}
    return bool(kinds & {"equivalents", "concentration"}) and not kinds & {"mass", "volume",
                                                                           "amount"}  # fmt: skip


def _round(x: float | None) -> float | None:
    return None if x is None else round(x, 4)


def _sha(data: bytes | None) -> str | None:
    """The content hash for an error result (readers record it for entries they read)."""
    return None if data is None else hashlib.sha256(data).hexdigest()
