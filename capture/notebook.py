"""A notebook folder: its root, its lab configuration, its plugins, and which files are entries."""

from __future__ import annotations

import functools
import os
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import pluggy

from capture.config import LabConfig, load_config
from capture.fingerprint import Fingerprints
from capture.models import MaterialInfo, Result
from capture.paths import EntryRule, entry_stem, is_own_output, output_stem
from capture.standing import setup_stamp, standing


def flatten(answers) -> list:
    """The answers of a collect hook, each a list or None, as one list."""
    return [item for answer in answers if answer for item in answer]


@dataclass
class Notebook:
    """A notebook folder with its configuration and a ready plugin manager."""

    root: Path
    config: LabConfig
    pm: pluggy.PluginManager
    _resolved: dict[str, MaterialInfo | None] = field(default_factory=dict)
    unnamed: list[str] = field(default_factory=list, init=False)  # see folders
    orphans: list[str] = field(default_factory=list, init=False)  # see folders
    # the set-up the plugins were loaded from (capture.standing.setup_stamp), taken before
    # they were; None when the caller brought its own plugin manager or a part just changed
    stamp: str | None = field(default=None, kw_only=True)

    @classmethod
    def open(cls, root: Path, pm: pluggy.PluginManager | None = None) -> Notebook:
        """Load ``masstrail.toml`` (if any) and the plugins for the folder ``root``."""
        from capture.plugin_manager import get_plugin_manager

        root = root.resolve()
        stamp = setup_stamp(root) if pm is None else None
        config = load_config(root)
        pm = pm or get_plugin_manager(block=config.plugins.block)
        return cls(root, config, pm, stamp=stamp)

    # ------------------------------------------------------------------ which files are entries
    @functools.cached_property
    def rule(self) -> EntryRule:
        """The entry rule of this notebook: the readers' file endings and the lab's ignores."""
        suffixes = flatten(self.pm.hook.masstrail_entry_suffixes(config=self.config))
        return EntryRule(suffixes, self.config.scan.ignore)

    def entry_files(self) -> list[Path]:
        """Every entry file under the root, sorted by folder, then name (:meth:`folders`,
        flattened)."""
        return [Path(folder, n) for folder, names in self.folders() for n in names]

    def folders(self) -> Iterator[tuple[str, list[str]]]:
        """Each folder under the root that holds entries, sorted, as (its path, its entry
        file names, sorted). Files and folders whose names are not UTF-8 (no result could
        name them) are left out and listed in :attr:`unnamed`, escaped, so the caller can
        say so; result files with no entry beside them (by :func:`sidecar_name`: ``a.md``
        has ``a.waste.json`` and ``a.waste.md``) are listed in :attr:`orphans`. One folder
        at a time: a scan of 100,000 entries never holds them all."""
        rule = self.rule
        self.unnamed, self.orphans = [], []
        top = os.fspath(self.root)
        for dirpath, dirnames, filenames in os.walk(top):
            for bad in [d for d in dirnames if not _utf8(d)]:
                self.unnamed.append(_escaped(os.path.join(dirpath, bad), top) + "/")
            dirnames[:] = sorted(d for d in dirnames if _utf8(d) and rule.folder_ok(d))
            rel_dir = dirpath[len(top) + 1 :].replace(os.sep, "/")  # strings: 100,000 files
            names = sorted(n for n in filenames if rule.file_ok(rel_dir, n))
            self.unnamed += [_escaped(os.path.join(dirpath, n), top) for n in names if not _utf8(n)]
            names = [n for n in names if _utf8(n)]
            own = [n for n in filenames if is_own_output(n)]
            if own:
                stems = {output_stem(n) for n in own} - {entry_stem(n) for n in names}
                self.orphans += [os.path.join(dirpath, n) for n in own if output_stem(n) in stems]
            if names:
                yield dirpath, names

    def is_entry(self, path: Path) -> bool:
        """True when ``path`` (absolute) is an entry of this notebook, by :attr:`rule`."""
        try:
            rel = self.relpath(path)
        except ValueError:
            return False
        return not rel.startswith("../") and _utf8(rel) and self.rule.relpath_ok(rel)

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

    # ------------------------------------------------------------------ knowledge and results
    def resolve(self, name: str) -> MaterialInfo | None:
        """Material knowledge for ``name`` (``masstrail_resolve_material``), asked once per run."""
        from capture.chem import material_key

        key = material_key(name)
        if key not in self._resolved:
            self._resolved[key] = self.pm.hook.masstrail_resolve_material(
                name=name, config=self.config
            )
        return self._resolved[key]

    @functools.cached_property
    def fingerprints(self) -> Fingerprints:
        """The fingerprints of this notebook's results (see :mod:`capture.fingerprint`)."""
        return Fingerprints(self.root, self.config, self.pm)

    def standing(self) -> dict | None:
        """What a writing scan records so that ``masstrail show`` can tell a current sidecar
        without loading the plugins (:mod:`capture.standing`); None without a stamp."""
        return standing(self.stamp, self.fingerprints.base, self.config.scan.max_entry_bytes)

    def process(self, path: Path, write: bool = True) -> Result:
        """Compute (and by default write) one entry's result; never raises for bad input."""
        from capture.run import process_entry

        result = process_entry(self, path)
        if write:
            self.write(result, path)
        return result

    def write(self, result: Result, path: Path, batch: bool = False) -> list[Path]:
        """Hand a result to the writer plugins (``batch``: one of a scan's many)."""
        return flatten(
            self.pm.hook.masstrail_write_result(
                result=result, entry_path=path, root=self.root, config=self.config, batch=batch
            )
        )


def _utf8(name: str) -> bool:
    """False for a name with bytes that are not UTF-8 (Python keeps them as surrogates)."""
    try:
        name.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


def unnamed_message(names: list[str]) -> str:
    """What to tell the user about files left out for their names."""
    shown = ", ".join(names[:5]) + (f" and {len(names) - 5} more" if len(names) > 5 else "")
    return (f"{len(names)} file(s) left out because their names are not UTF-8 text, so no "
            f"result could name them: {shown}; rename them")  # fmt: skip


def _escaped(path: str, top: str) -> str:
    """A path relative to ``top`` with its non-UTF-8 bytes written as \\xNN."""
    return os.fsencode(os.path.relpath(path, top)).decode("utf-8", "backslashreplace")
