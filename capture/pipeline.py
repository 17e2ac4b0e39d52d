"""One run of masstrail over a notebook: read, extract, resolve, weigh, find gaps, compute, write.

The pipeline only calls hooks (see :mod:`capture.hookspecs`); the behaviour
comes from the plugins. One broken entry never stops a scan: whatever goes
wrong with an entry becomes that entry's ``status="error"`` result, and the
scan goes on with the next one.
"""

from __future__ import annotations

import functools
import hashlib
import json
import os
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import NamedTuple

import pluggy

from capture import __version__
from capture.chem import material_key, molar_mass
from capture.config import CONFIG_NAME, LabConfig, load_config
from capture.models import (
    AmountMention,
    BalanceReading,
    Breakdown,
    Entry,
    EntryError,
    EntryRef,
    Gap,
    MassContext,
    MaterialInfo,
    MaterialLine,
    Metrics,
    ProductOut,
    Result,
    StructuredMaterial,
    Totals,
)
from capture.paths import (
    CARD_SUFFIX,
    SIDECAR_SUFFIX,
    is_ignored,
    is_temp_file,
    sidecar_name,
    sidecar_path,
)
from capture.quantities import AmountError, parse_amounts
from capture.readings import as_amount as balance_amount
from capture.readings import assign as assign_readings
from capture.readings import safe_log_path
from capture.safeio import InputError, read_bounded

GENERATOR = f"masstrail {__version__}"
CAUTION = (
    "These figures support record keeping and the comparison of routes; they are not a "
    "hazard assessment. Dispose of waste according to local regulations, the safety data "
    "sheets and your lab's safety office."
)

ROLE_STAGE = {
    "reaction": {"reactant", "limiting reagent", "limiting reactant", "limiting", "reagent",
                 "catalyst", "ligand", "solvent", "additive", "starting material", "substrate",
                 "base", "acid", "reaction solvent"},
    "workup": {"workup", "work-up", "quench", "extraction", "extraction solvent", "wash",
               "drying", "drying agent", "filtration", "filter aid", "filter medium"},
    "purification": {"purification", "chromatography", "eluent", "stationary phase",
                     "recrystallisation", "recrystallization", "trituration", "distillation",
                     "crystallisation", "crystallization", "antisolvent", "anti-solvent"},
}  # fmt: skip
CATEGORY_STAGE = {
    "drying agent": "workup",
    "aqueous": "workup",
    "filter aid": "workup",
    "filter medium": "workup",
    "sorbent": "purification",
}
LIMITING_ROLES = {"limiting reagent", "limiting reactant", "limiting"}
REACTANT_ROLES = {"reactant", "starting material", "substrate"}
_SEVERITY_ORDER = {"blocking": 0, "major": 1, "minor": 2}


def stage_for(role: str | None, category: str | None) -> str | None:
    """The stage a material belongs to, from its role, else from its category."""
    if role:
        low = role.strip().casefold()
        for stage, roles in ROLE_STAGE.items():
            if low in roles:
                return stage
    return CATEGORY_STAGE.get(category or "")


def _same_amount(a: AmountMention, b: AmountMention) -> bool:
    return (
        a.kind == b.kind
        and a.multiplier == b.multiplier
        and abs(a.value - b.value) <= 0.005 * max(a.value, b.value)
    )


def _flatten(answers: Iterable[list | None]) -> list:
    return [item for answer in answers if answer for item in answer]


@dataclass
class Notebook:
    """A notebook folder with its configuration and a ready plugin manager."""

    root: Path
    config: LabConfig
    pm: pluggy.PluginManager
    _resolved: dict[str, MaterialInfo | None] = field(default_factory=dict)
    _log_shas: dict[Path, tuple[tuple[int, int], str]] = field(default_factory=dict)

    @classmethod
    def open(cls, root: Path, pm: pluggy.PluginManager | None = None) -> Notebook:
        """Load ``masstrail.toml`` (if any) and the plugins for the folder ``root``."""
        from capture.plugin_manager import get_plugin_manager

        root = root.resolve()
        config = load_config(root)
        return cls(root, config, pm or get_plugin_manager(block=config.plugins.block))

    # ------------------------------------------------------------------ discovery
    def entry_files(self) -> list[Path]:
        """Every entry file under the root, sorted; outputs, temp and hidden files skipped."""
        suffixes = {
            "." + s.lower().lstrip(".")
            for s in _flatten(self.pm.hook.masstrail_entry_suffixes(config=self.config))
        }
        ends = tuple(suffixes)
        outputs = (SIDECAR_SUFFIX, CARD_SUFFIX)
        found = []
        ignore = self.config.scan.ignore
        top = os.fspath(self.root)
        for dirpath, dirnames, filenames in os.walk(top):
            dirnames[:] = sorted(
                d for d in dirnames if not d.startswith(".") and d not in {"__pycache__"}
            )
            rel_dir = dirpath[len(top) + 1 :].replace(os.sep, "/")  # strings: 100,000 files
            names = []
            for name in filenames:
                if name.endswith(outputs) or name.startswith("."):
                    continue  # most of a scanned folder: the sidecars and cards
                if not name.lower().endswith(ends) or is_temp_file(name):
                    continue
                if not rel_dir and name == CONFIG_NAME:
                    continue
                if ignore and is_ignored(f"{rel_dir}/{name}" if rel_dir else name, ignore):
                    continue
                names.append(name)
            folder = Path(dirpath)
            found += [folder / name for name in sorted(names)]
        return found

    @functools.cached_property
    def _root_prefix(self) -> str:
        return os.path.join(os.fspath(self.root), "")

    def relpath(self, path: Path) -> str:
        """``path`` relative to the root, with ``/`` (links are not followed out of the root)."""
        text, root = os.fspath(path), self._root_prefix
        if text.startswith(root):  # the common case, a file found under the root: no pathlib
            return text[len(root) :].replace(os.sep, "/")
        path = path if path.is_absolute() else Path.cwd() / path
        try:
            return path.relative_to(self.root).as_posix()
        except ValueError:
            return path.resolve().relative_to(self.root).as_posix()

    # ------------------------------------------------------------------ one entry
    def resolve(self, name: str) -> MaterialInfo | None:
        """Material knowledge for ``name``, asked once per run."""
        key = material_key(name)
        if key not in self._resolved:
            self._resolved[key] = self.pm.hook.masstrail_resolve_material(
                name=name, config=self.config
            )
        return self._resolved[key]

    def process(self, path: Path, write: bool = True, batch: bool = False) -> Result:
        """Compute (and by default write) one entry's result; never raises for bad input.

        ``batch``: the result is one of a scan's many (writers may hold it a while).
        """
        data = None
        try:
            rel = self.relpath(path)
        except ValueError:
            rel = path.name
        stat = file_stat(path)
        try:
            limit = int(self.config.scan.max_entry_mb * 1024 * 1024)
            data = read_bounded(path, limit)
            entry = self.pm.hook.masstrail_read_entry(
                path=path, data=data, relpath=rel, config=self.config
            )
            if entry is None:
                raise InputError("no reader for this kind of file")
            result = self._compute(entry)
        except InputError as exc:
            result = error_result(path, rel, _sha(data), exc.message, exc.location)
        except Exception as exc:  # a plugin's bug must not stop the scan
            result = error_result(
                path, rel, _sha(data), f"internal error while processing this entry: {exc!r}", None
            )
        if result.entry.sha256:
            result.entry.inputs_sha256 = self.inputs_sha(
                result.entry.sha256, path.parent, result.entry.balance_log
            )
            result.entry._stat = stat
        if write:
            self.write(result, path, batch=batch)
        return result

    def write(self, result: Result, path: Path, batch: bool = False) -> list[Path]:
        """Hand a result to the writer plugins (``batch``: one of many, from a scan)."""
        return _flatten(
            self.pm.hook.masstrail_write_result(
                result=result, entry_path=path, root=self.root, config=self.config, batch=batch
            )
        )

    # ------------------------------------------------------------------ fingerprints
    @functools.cached_property
    def base_fingerprint(self) -> str:
        """What every result of this notebook depends on besides its entry and logs: the
        masstrail version, the lab configuration, the plugins, and the libraries that
        resolve names and SMILES."""
        from importlib import metadata

        h = hashlib.sha256(f"{GENERATOR}\n".encode())
        h.update(self.config.model_dump_json().encode())
        for name, _plugin in sorted(self.pm.list_name_plugin(), key=lambda kv: str(kv[0])):
            h.update(f"\nplugin {name}".encode())
        for dist in ("chemicals", "rdkit", "molmass", "pint", "pydantic"):
            try:
                version = metadata.version(dist)
            except metadata.PackageNotFoundError:
                version = "-"
            h.update(f"\n{dist} {version}".encode())
        return h.hexdigest()

    def log_sha(self, path: Path) -> str:
        """sha256 of a balance log, cached while its size and modification time stay."""
        st = path.stat()
        key = (st.st_mtime_ns, st.st_size)
        known = self._log_shas.get(path)
        if known is None or known[0] != key:
            known = (key, hashlib.sha256(path.read_bytes()).hexdigest())
            self._log_shas[path] = known
        return known[1]

    def inputs_sha(self, entry_sha: str, entry_dir: Path, logs: list[str]) -> str:
        """The fingerprint of one entry's result (see ``EntryRef.inputs_sha256``)."""
        return self.fingerprint(entry_sha, self.log_digests(entry_dir, logs))

    def log_digests(self, entry_dir: Path, logs: list[str]) -> str:
        """What the fingerprint takes of an entry's balance logs: each name and hash."""
        parts = []
        for ref in logs:
            try:
                digest = self.log_sha(safe_log_path(self.root, entry_dir, ref))
            except (InputError, OSError):
                digest = "-"
            parts.append(f"\n{ref}\0{digest}")
        return "".join(parts)

    def fingerprint(self, entry_sha: str, log_digests: str) -> str:
        return hashlib.sha256(
            f"{self.base_fingerprint}\n{entry_sha}{log_digests}".encode()
        ).hexdigest()

    def _line(self, item: StructuredMaterial, origin: str, role: str | None = None) -> MaterialLine:
        line = MaterialLine(
            name=item.name.strip(),
            role=role or item.role,
            stage=item.stage,
            stated=item.amount,
            origin=origin,
            evidence=_evidence(item, origin),
        )
        if item.amount:
            try:
                line.amounts = parse_amounts(item.amount)
            except AmountError as exc:
                line.problem = f"amount could not be read: {exc}"
                line.problem_kind = "unreadable_amount"
        return line

    def _weigh(self, line: MaterialLine, info: MaterialInfo | None, ctx: MassContext) -> None:
        if line.problem or not line.amounts:
            return
        got = self.pm.hook.masstrail_assign_mass(
            line=line, material=info, context=ctx, config=self.config
        )
        if got is None:
            line.problem = f"no plugin could weigh {line.stated!r}"
            line.problem_kind = "unweighed"
            return
        line.mass_g = None if got.mass_g is None else round(got.mass_g, 4)
        line.moles_mmol = None if got.moles_mmol is None else round(got.moles_mmol, 4)
        line.basis = got.basis
        line.problem, line.problem_kind = got.problem, got.problem_kind
        if line.mass_g is not None and info is not None:
            if info.category == "water":
                line.water_g = line.mass_g
            elif info.water_fraction is not None:
                line.water_g = round(line.mass_g * info.water_fraction, 4)

    def _compute(self, entry: Entry) -> Result:
        structured = [self._line(m, "front-matter") for m in entry.materials]
        structured += [self._line(m, "table") for m in entry.table_materials]
        found = _flatten(self.pm.hook.masstrail_extract_amounts(entry=entry, config=self.config))
        text_product = next((m for m in found if m.role == "product"), None)
        text_lines = [m for m in found if m.role != "product"]

        formulas = {
            id(line): (item.model_extra or {}).get("formula")
            for line, item in zip(structured, entry.materials + entry.table_materials, strict=True)
        }
        infos: dict[int, MaterialInfo | None] = {}
        for line in structured + text_lines:
            info = self.resolve(line.name)
            if formulas.get(id(line)):
                # the entry's own formula wins over any name lookup for the molar mass
                own = _from_formula(line.name, str(formulas[id(line)]))
                if own is not None and info is not None:
                    own = info.model_copy(
                        update={"formula": own.formula, "molar_mass": own.molar_mass}
                    )
                info = own or info
            if line.solvent and (info is None or not info.density_g_ml):
                info = self._solvent_proxy(line, info)
            infos[id(line)] = info
            if info is not None:
                line.resolved, line.category = info.name, info.category
                line.formula, line.halogenated = info.formula, info.halogenated
                line.chem21, line.reactive = info.chem21, info.reactive
            line.stage = line.stage or stage_for(line.role, line.category)

        def key(line: MaterialLine) -> str:
            return material_key(line.resolved or line.name)

        product_key = material_key(entry.product.name) if entry.product.name else None
        merge_gaps: list[Gap] = []
        materials = list(structured)
        for line in text_lines:
            if key(line) == product_key:
                continue
            same = [o for o in structured if key(o) == key(line) and _same_stage(o, line)]
            if not same:
                materials.append(line)
                continue
            if any(_same_amount(a, b) for o in same for a in line.amounts for b in o.amounts):
                continue  # the text repeats the structured record: counted once
            kinds = {a.kind for a in line.amounts}
            if not any(kinds & {b.kind for b in o.amounts} for o in same):
                materials.append(line)  # e.g. a mass in the text, a volume in the table
                continue
            merge_gaps.append(
                Gap(
                    kind="conflicting_amounts",
                    item=line.name,
                    severity="minor",
                    evidence=line.evidence,
                    message=f"{same[0].name} is recorded as {same[0].stated!r} ({same[0].origin}) "
                    f"and as {line.stated!r} in the text at the same stage; the {same[0].origin} "
                    "amount is counted. Correct whichever is wrong",
                )
            )

        # balance readings win over typed amounts for the same material
        readings, log_gaps = self._read_logs(entry)
        by_line, product_reading, reading_gaps = assign_readings(
            readings,
            materials,
            entry.product.name,
            self.resolve,
            entry.date,
            self.config.balance_layout.max_days_from_entry,
        )
        merge_gaps += log_gaps + reading_gaps
        for line in materials:
            a = by_line.get(id(line))
            if a is not None:
                line.amounts = [balance_amount(a)]
                line.problem = line.problem_kind = None
                line.origin = "balance"

        # weigh everything that does not need the limiting reagent, then the rest
        ctx = MassContext()
        by_equiv = [m for m in materials if _needs_limiting(m)]
        for line in materials:
            if line not in by_equiv:
                self._weigh(line, infos[id(line)], ctx)
        limiting = choose_limiting(materials)
        if limiting is not None:
            ctx = MassContext(limiting_name=limiting.name, limiting_mmol=limiting.moles_mmol)
        for line in by_equiv:
            self._weigh(line, infos[id(line)], ctx)
        for line in materials:
            if id(line) in by_line:
                line.basis = by_line[id(line)].basis

        product, product_gap = self._product(entry, text_product)
        if product_reading is not None:
            typed = f"; the front matter says {entry.product.mass}" if entry.product.mass else ""
            product = product.model_copy(
                update={
                    "mass_g": round(product_reading.mass_g, 4),
                    "basis": product_reading.basis + typed,
                }
            )
        elif product_gap:
            merge_gaps.append(product_gap)
        recovered = []
        for item in entry.recovered:
            item_sm = StructuredMaterial(name=item.name, amount=item.amount)
            line = self._line(item_sm, "front-matter",
                              role="recovered")  # fmt: skip
            info = self.resolve(line.name)
            if info is not None:
                line.resolved, line.category = info.name, info.category
            self._weigh(line, info, ctx)
            recovered.append(line)

        # the checks and the gap rules see the same entry, weighed
        common = {"entry": entry, "materials": materials, "product": product,
                  "resolve": self.resolve, "config": self.config}  # fmt: skip
        checks = _flatten(self.pm.hook.masstrail_check_records(**common))
        gaps: list[Gap] = _flatten(self.pm.hook.masstrail_find_gaps(**common))
        from_checks = [c.gap for c in checks if c.gap is not None]
        # "a crystal of DMAP" says more than "DMAP has no amount": keep the specific gap
        specific = {material_key(g.item) for g in from_checks}
        gaps = [g for g in gaps if not (g.kind == "no_amount" and material_key(g.item) in specific)]
        gaps += from_checks
        for line in recovered:
            if line.mass_g is None:
                gaps.append(
                    Gap(
                        kind=line.problem_kind or "unweighed",
                        item=line.name,
                        severity="minor",
                        evidence=f"recovered: {line.name}: {line.stated}",
                        message=(line.problem or "no mass") + "; it is not credited",
                    )
                )
        gaps += merge_gaps
        graded = self.pm.hook.masstrail_grade_gaps(
            entry=entry, gaps=gaps, materials=materials, product=product, config=self.config
        )
        gaps = graded if graded is not None else gaps
        gaps.sort(key=lambda g: _SEVERITY_ORDER[g.severity])

        metrics: dict[str, float | None] = {}
        totals: Totals | None = None
        breakdown: Breakdown | None = None
        waste = None
        context: dict[str, str] = {}
        for report in self.pm.hook.masstrail_compute_metrics(
            entry=entry,
            materials=materials,
            product=product,
            recovered=recovered,
            gaps=gaps,
            resolve=self.resolve,
            config=self.config,
        ):
            if report is None:
                continue
            for name, value in report.metrics.items():
                if value is not None or name not in metrics:
                    metrics[name] = value
            totals = report.totals or totals
            breakdown = report.breakdown or breakdown
            waste = report.waste or waste
            context.update(report.context)

        return Result(
            generator=GENERATOR,
            status="ok",
            entry=EntryRef(
                id=entry.id,
                path=entry.path,
                sha256=entry.sha256,
                balance_log=[str(ref) for ref in entry.balance_log],
            ),
            meta={
                "title": entry.title,
                "author": entry.author,
                "group": entry.group,
                "project": entry.project,
                "date": entry.date.isoformat() if entry.date else None,
            },
            uses=entry.uses,
            product=product,
            materials=materials,
            recovered=recovered,
            gaps=gaps,
            readings=readings,
            checks=checks,
            metrics=Metrics.model_validate(metrics),
            totals=totals,
            breakdown=breakdown,
            waste=waste,
            context=context,
            caution=CAUTION,
        )

    def _read_logs(self, entry: Entry) -> tuple[list[BalanceReading], list[Gap]]:
        """Every reading of the entry's balance logs; a gap for each log that cannot be used."""
        readings: list[BalanceReading] = []
        gaps: list[Gap] = []
        entry_dir = (self.root / entry.path).parent
        for ref in entry.balance_log:
            try:
                path = safe_log_path(self.root, entry_dir, str(ref))
                rel = path.relative_to(self.root).as_posix()
                data = read_bounded(path, int(self.config.scan.max_entry_mb * 1024 * 1024))
                got = self.pm.hook.masstrail_read_balance_log(
                    path=path, data=data, relpath=rel, config=self.config
                )
                if got is None:
                    raise InputError("no balance reader knows this file's format")
                readings += got
            except InputError as exc:
                where = f" ({exc.location})" if exc.location else ""
                refused = "outside the notebook" in exc.message or "network path" in exc.message
                gaps.append(
                    Gap(
                        kind="balance_log_refused" if refused else "balance_log_unreadable",
                        item=str(ref),
                        severity="major",
                        evidence=f"balance_log: {ref}{where}",
                        message=f"the balance log {ref}{where} cannot be used: {exc.message}",
                    )
                )
        return readings, gaps

    def _solvent_proxy(self, line: MaterialLine, info: MaterialInfo | None) -> MaterialInfo | None:
        """A solution is weighed with its own density where known, else with its solvent's."""
        conc = next((a for a in line.amounts if a.kind == "concentration"), None)
        if conc is not None:
            own = self.resolve(f"{line.name} {conc.value:g} M in {line.solvent}")
            if own is not None and own.density_g_ml:
                return own
        solvent = self.resolve(line.solvent or "")
        if solvent is None or not solvent.density_g_ml:
            return info
        base = info or MaterialInfo(
            name=line.name, category="reagent", source="named in the text; not in the data"
        )
        temp = f", {solvent.density_temp_c:g} °C" if solvent.density_temp_c is not None else ""
        return base.model_copy(
            update={
                "density_g_ml": solvent.density_g_ml,
                "density_temp_c": solvent.density_temp_c,
                "density_source": f"density of the solvent, {solvent.name}{temp}, "
                f"{solvent.density_source}; the solution's own density is not known",
            }
        )

    def _product(
        self, entry: Entry, from_text: MaterialLine | None
    ) -> tuple[ProductOut, Gap | None]:
        """The product and its mass: the front matter's, else the one the text reports."""
        p = entry.product
        if not p.formula and p.smiles:
            from capture.equation import formula_from_smiles

            p = p.model_copy(update={"formula": formula_from_smiles(p.smiles)})
        text_mass = None
        if from_text is not None and from_text.amounts:
            text_mass = from_text.amounts[0]
        if not p.mass:
            if text_mass is None:
                return ProductOut(name=p.name, mass_g=None, formula=p.formula), None
            basis = f"{text_mass.text} as reported in the text: {from_text.evidence}"
            mm = _from_formula(p.name or "product", p.formula) if p.formula else None
            return ProductOut(
                name=p.name,
                formula=p.formula,
                mass_g=round(text_mass.total, 4),
                basis=basis,
                molar_mass=mm.molar_mass if mm else None,
            ), None
        info = _from_formula(p.name or "product", p.formula) if p.formula else None
        if info is None and p.name:
            info = self.resolve(p.name)
        line = self._line(
            StructuredMaterial(name=p.name or "product", amount=p.mass), "front-matter", "product"
        )
        self._weigh(line, info, MassContext())
        out = ProductOut(
            name=p.name,
            formula=p.formula,
            mass_g=line.mass_g,
            basis=line.basis or line.problem,
            molar_mass=info.molar_mass if info and p.formula else None,
        )
        gap = None
        if (
            text_mass is not None
            and out.mass_g is not None
            and abs(text_mass.total - out.mass_g) > 0.005 * out.mass_g
        ):
            gap = Gap(
                kind="conflicting_product_mass",
                item=p.name or "product",
                severity="minor",
                evidence=from_text.evidence,
                message=f"the front matter gives {p.mass} and the text {text_mass.text}; "
                "the front matter is used. Correct whichever is wrong",
            )
        return out, gap


def _from_formula(name: str, formula: str) -> MaterialInfo | None:
    """Material knowledge from a formula the entry gives itself."""
    try:
        mm = molar_mass(formula)
    except ValueError:
        return None
    return MaterialInfo(
        name=name,
        formula=formula,
        molar_mass=round(mm, 4),
        category="reagent",
        source="the formula given in the entry",
    )


def _same_stage(a: MaterialLine, b: MaterialLine) -> bool:
    """Two lines belong to one step unless both know their stage and the stages differ.

    ``washed with ice-cold ethanol (2 × 5 mL)`` is not the ``ethanol, 10 mL`` used as
    the reaction solvent.
    """
    return not (a.stage and b.stage and a.stage != b.stage)


def _sha(data: bytes | None) -> str | None:
    """The content hash for an error result (readers record it for entries they read)."""
    return None if data is None else hashlib.sha256(data).hexdigest()


RACY_NS = 2_000_000_000  # coarser than any file system's time stamps (FAT's are 2 s)


def file_stat(path: Path) -> str | None:
    """What a later scan compares to tell, without reading it, that a file is unchanged:
    "mtime_ns:ctime_ns:inode:size" (as git's index does), taken before the file is read.

    None when the file changed less than RACY_NS before now: a second change within the
    same time stamp tick, after the read, would then go unseen, so such a file is hashed
    again next time.
    """
    try:
        st = os.lstat(path)
    except OSError:
        return None
    if time.time_ns() - max(st.st_mtime_ns, st.st_ctime_ns) < RACY_NS:
        return None
    return _stat_key(st)


def _stat_key(st: os.stat_result) -> str:
    return f"{st.st_mtime_ns}:{st.st_ctime_ns}:{st.st_ino}:{st.st_size}"


def _evidence(item: StructuredMaterial, origin: str) -> str:
    if origin == "table":
        line = (item.model_extra or {}).get("line")
        return f"materials table, line {line} of the text: {item.name} | {item.amount or ''}"
    return f"front matter: materials: {item.name}: {item.amount or '(no amount)'}"


def _needs_limiting(line: MaterialLine) -> bool:
    kinds = {a.kind for a in line.amounts}
    return "equivalents" in kinds and not kinds & {"mass", "volume", "amount"}


def choose_limiting(materials: list[MaterialLine]) -> MaterialLine | None:
    """The limiting reagent: marked by role, else stated as 1 equiv, else the scarcest reactant."""
    known = [m for m in materials if m.moles_mmol]
    for m in known:
        if (m.role or "").casefold() in LIMITING_ROLES:
            return m
    for m in known:
        if any(a.kind == "equivalents" and abs(a.value - 1.0) < 1e-9 for a in m.amounts):
            return m
    reactants = [m for m in known if (m.role or "").casefold() in REACTANT_ROLES]
    if reactants:
        return min(reactants, key=lambda m: m.moles_mmol)
    # prose only: the first reaction-stage material stated in mmol (common practice: the
    # substrate is named first, with its amount of substance)
    return next(
        (m for m in known if m.stage == "reaction" and any(a.kind == "amount" for a in m.amounts)),
        None,
    )


def error_result(
    path: Path, rel: str, sha: str | None, message: str, location: str | None
) -> Result:
    """The result of an entry that could not be processed: its sidecar says why."""
    from capture.paths import entry_stem

    return Result(
        generator=GENERATOR,
        status="error",
        error=EntryError(message=message, location=location),
        entry=EntryRef(id=entry_stem(path), path=rel, sha256=sha),
        product=ProductOut(name=None, mass_g=None),
        caution=CAUTION,
    )


@dataclass(slots=True)
class EntrySummary:
    """One line of a scan: what the scan table and the exit code need, and no more (a scan
    of 100,000 entries keeps these, not the full results)."""

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

    @classmethod
    def of(cls, r: Result) -> EntrySummary:
        counts = {"blocking": 0, "major": 0, "minor": 0}
        for g in r.gaps:
            counts[g.severity] = counts.get(g.severity, 0) + 1
        return cls(
            path=r.entry.path,
            status=r.status,
            product_g=r.product.mass_g,
            e_factor=r.metrics.e_factor,
            pmi=r.metrics.pmi,
            error=r.error.message if r.error else None,
            location=r.error.location if r.error else None,
            **counts,
        )


class PreviousResult(NamedTuple):
    """What the store remembers of an entry's last result: enough to tell whether it is
    still current, and its summary (a row of the store, as it comes: 100,000 of them are
    read at the start of a rescan)."""

    path: str
    inputs_sha256: str
    balance_log: str  # the logs the entry names, as a JSON list ("" for none)
    sha256: str | None  # the entry file's hash
    stat: str | None  # and its stat then (see file_stat): unchanged, it needs no hash
    status: str
    error: str | None
    location: str | None
    product_g: float | None
    e_factor: float | None
    pmi: float | None
    blocking: int
    major: int
    minor: int

    def summary(self) -> EntrySummary:
        return EntrySummary(
            self.path, self.status, self.product_g, self.e_factor, self.pmi, self.blocking,
            self.major, self.minor, self.error, self.location, recomputed=False,
        )  # fmt: skip


@dataclass
class ScanReport:
    """One scan: a summary per entry file, in order, and the full results if kept."""

    root: Path
    results: list[Result]
    written: list[str]  # the files written, as strings (a scan of 100,000 writes 200,000)
    summaries: list[EntrySummary] = field(default_factory=list)

    def count(self, severity: str) -> int:
        """How many gaps of ``severity`` the scan found."""
        return sum(getattr(s, severity) for s in self.summaries)

    @property
    def errors(self) -> list[EntrySummary]:
        return [s for s in self.summaries if s.status == "error"]

    @property
    def recomputed(self) -> int:
        return sum(s.recomputed for s in self.summaries)


_worker_notebook: Notebook | None = None


def _start_worker(root: str) -> None:
    global _worker_notebook
    _worker_notebook = Notebook.open(Path(root))


def _one(notebook: Notebook, path: Path, write: bool) -> tuple[Result, list[str]]:
    result = notebook.process(path, write=False)
    written = notebook.write(result, path, batch=True) if write else []
    return result, [os.fspath(p) for p in written]


def _share_in_worker(
    paths: list[Path], write: bool, keep: bool
) -> list[tuple[EntrySummary, list[str], Result | None]]:
    """In a worker: compute and write a share of the scan's entries (sidecar, card and
    store, as the scanning process would), and send back only their summaries (and, with
    ``keep``, the results)."""
    nb = _worker_notebook
    assert nb is not None
    out = []
    for path in paths:
        result, written = _one(nb, path, write)
        out.append((EntrySummary.of(result), written, result if keep else None))
    if write:  # what a writer holds is written before the share is done
        nb.pm.hook.masstrail_flush_results(root=nb.root, config=nb.config)
    return out


def _computed(
    notebook: Notebook, paths: list[Path], jobs: int, write: bool, keep: bool
) -> Iterable[tuple[EntrySummary, list[str], Result | None]]:
    """(summary, files written, result if ``keep``) for each of ``paths``, in order:
    computed and written here, or in ``jobs`` worker processes, handed a share at a time,
    two shares per worker in flight, so that finished work never piles up in memory."""
    if jobs <= 1 or len(paths) < PARALLEL_MIN:
        for n, path in enumerate(paths, 1):
            result, written = _one(notebook, path, write)
            if write and n % PARALLEL_SHARE == 0:  # as a worker does after each share
                notebook.pm.hook.masstrail_flush_results(root=notebook.root, config=notebook.config)
            yield EntrySummary.of(result), written, result if keep else None
        return
    import multiprocessing
    from collections import deque
    from concurrent.futures import ProcessPoolExecutor

    context = multiprocessing.get_context("spawn")  # the same on Linux, macOS and Windows
    with ProcessPoolExecutor(jobs, mp_context=context, initializer=_start_worker,
                             initargs=(str(notebook.root),)) as pool:  # fmt: skip
        shares = (paths[i : i + PARALLEL_SHARE] for i in range(0, len(paths), PARALLEL_SHARE))
        pending: deque = deque()
        for share in shares:
            pending.append(pool.submit(_share_in_worker, share, write, keep))
            if len(pending) >= 2 * jobs:
                yield from pending.popleft().result()
        while pending:
            yield from pending.popleft().result()


PARALLEL_SHARE = 32  # entries a worker computes, writes and stores (one transaction) at a time
PARALLEL_MIN = 64  # fewer entries than this are computed here: starting workers costs seconds


def _unchanged(
    notebook: Notebook, path: Path, side: str, before: PreviousResult, limit: int, logs: dict
) -> bool:
    """True when the entry's last result is still current: its sidecar is there and its
    fingerprint is the same, the entry's hash taken from its unchanged stat or read anew.
    ``logs`` keeps the digests of balance logs, by folder and names, for one scan."""
    try:
        st = os.lstat(path)
        if not os.path.exists(side):
            return False
        if before.stat is not None and before.stat == _stat_key(st) and before.sha256:
            sha = before.sha256
        else:
            sha = hashlib.sha256(read_bounded(path, limit)).hexdigest()
    except (OSError, InputError):
        return False
    digests = ""
    if before.balance_log:
        key = (os.path.dirname(path), before.balance_log)
        if key not in logs:
            logs[key] = notebook.log_digests(path.parent, json.loads(before.balance_log))
        digests = logs[key]
    return before.inputs_sha256 == notebook.fingerprint(sha, digests)


def scan(
    notebook: Notebook,
    progress: Callable[[Path], None] | None = None,
    write: bool = True,
    files: list[Path] | None = None,
    reuse: bool = False,
    keep: bool = True,
    jobs: int = 1,
) -> ScanReport:
    """Process every entry under the notebook root once; one summary per entry file.

    ``files`` is the list from :meth:`Notebook.entry_files`, if the caller already has it.
    With ``reuse`` (and ``write``), an entry whose fingerprint (``inputs_sha256``) matches
    what the store holds and whose sidecar exists is not recomputed; an entry file whose
    stat (see :func:`file_stat`) is the one the store holds is not even read. With
    ``keep``, every recomputed entry's full :class:`Result` is kept in ``results`` (memory
    grows with the notebook; the command-line scan keeps only the summaries). With
    ``jobs`` > 1, entries are computed and written in that many worker processes, a share
    at a time; the sidecars, cards and store rows are the same as with one.
    """
    files = notebook.entry_files() if files is None else files
    # entries that would share one sidecar (a.md and a.json): each gets an error result
    sides = [sidecar_name(os.fspath(f)) for f in files]
    count: dict[str, int] = {}
    for side in sides:
        count[side] = count.get(side, 0) + 1
    by_sidecar: dict[str, list[Path]] = {}
    for f, side in zip(files, sides, strict=True):
        if count[side] > 1:
            by_sidecar.setdefault(side, []).append(f)
    del count
    previous: dict[str, PreviousResult] = {}
    if reuse and write:
        previous = (
            notebook.pm.hook.masstrail_previous_results(root=notebook.root, config=notebook.config)
            or {}
        )
    limit = int(notebook.config.scan.max_entry_mb * 1024 * 1024)
    # first, what each file needs: an error for a name clash, its previous summary, or work
    plan: list[Result | EntrySummary | None] = []
    logs_known: dict = {}  # log digests by (folder, logs), for this scan
    for f, side in zip(files, sides, strict=True):
        clash = by_sidecar.get(side, [f]) if by_sidecar else [f]
        if len(clash) > 1:
            names = ", ".join(p.name for p in clash)
            plan.append(
                error_result(
                    f,
                    notebook.relpath(f),
                    None,
                    f"{len(clash)} entries in this folder share the name "
                    f"'{sidecar_path(f).name}' for their results ({names}); rename one of them",
                    None,
                )
            )
            continue
        before = previous.pop(notebook.relpath(f), None) if previous else None
        summary = None
        if before is not None and _unchanged(notebook, f, side, before, limit, logs_known):
            summary = before.summary()
        plan.append(summary)
    previous = {}  # what is still needed of it is in the plan
    todo = [f for f, p in zip(files, plan, strict=True) if p is None]
    work = iter(_computed(notebook, todo, jobs, write, keep))
    results, written, summaries = [], [], []
    for i, (f, side, planned) in enumerate(zip(files, sides, plan, strict=True)):
        if isinstance(planned, EntrySummary):
            summary = planned
        elif planned is not None:  # a name clash: the first of its files writes the error
            clash = by_sidecar[side]
            if write and f == clash[0]:
                written += map(os.fspath, notebook.write(planned, f, batch=True))
            summary = EntrySummary.of(planned)
            if keep:
                results.append(planned)
        else:
            summary, files_written, result = next(work)
            written += files_written
            if keep:
                results.append(result)
        plan[i] = sides[i] = None  # done with: keep only the summary
        summaries.append(summary)
        if progress:
            progress(f)
    if write:
        notebook.pm.hook.masstrail_flush_results(root=notebook.root, config=notebook.config)
        notebook.pm.hook.masstrail_scan_done(
            root=notebook.root,
            config=notebook.config,
            present=[s.path for s in summaries],
            written=written,
        )
    return ScanReport(notebook.root, results, written, summaries)
