"""A notebook folder: its root, its lab configuration, its plugins, and which files are entries."""

from __future__ import annotations

import functools
import os
from dataclasses import dataclass, field
from pathlib import Path

import pluggy

from capture.config import LabConfig, load_config
from capture.fingerprint import Fingerprints
from capture.models import MaterialInfo, Result
from capture.paths import EntryRule


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

    @classmethod
    def open(cls, root: Path, pm: pluggy.PluginManager | None = None) -> Notebook:
        """Load ``masstrail.toml`` (if any) and the plugins for the folder ``root``."""
        from capture.plugin_manager import get_plugin_manager

        root = root.resolve()
        config = load_config(root)
        return cls(root, config, pm or get_plugin_manager(block=config.plugins.block))

    # ------------------------------------------------------------------ which files are entries
    @functools.cached_property
    def rule(self) -> EntryRule:
        """The entry rule of this notebook: the readers' file endings and the lab's ignores."""
        suffixes = flatten(self.pm.hook.masstrail_entry_suffixes(config=self.config))
        return EntryRule(suffixes, self.config.scan.ignore)

    def entry_files(self) -> list[Path]:
        """Every entry file under the root, sorted by folder, then name."""
        rule, found = self.rule, []
        top = os.fspath(self.root)
        for dirpath, dirnames, filenames in os.walk(top):
            dirnames[:] = sorted(filter(rule.folder_ok, dirnames))
            rel_dir = dirpath[len(top) + 1 :].replace(os.sep, "/")  # strings: 100,000 files
            folder = Path(dirpath)
            found += [folder / n for n in sorted(n for n in filenames if rule.file_ok(rel_dir, n))]
        return found

    def is_entry(self, path: Path) -> bool:
        """True when ``path`` (absolute) is an entry of this notebook, by :attr:`rule`."""
        try:
            rel = self.relpath(path)
        except ValueError:
            return False
        return not rel.startswith("../") and self.rule.relpath_ok(rel)

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
