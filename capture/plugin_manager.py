"""Building the plugin manager: built-ins and a lab's plugins, all through entry points.

The built-in plugins are registered through the ``masstrail`` entry-point
group (see ``pyproject.toml``), the same way a lab's own plugin is. A plugin
can be blocked by its entry-point name, from ``[plugins] block`` in
``masstrail.toml`` or the ``MASSTRAIL_BLOCK`` environment variable
(comma-separated). ``MASSTRAIL_TRACE=1`` prints every hook call to stderr;
``MASSTRAIL_HOOK_LOG=FILE`` appends to FILE the name of each hook the first time a
process calls it with an implementation (the test suite checks that every hook is).
"""

from __future__ import annotations

import os
import sys
from collections.abc import Iterable

import pluggy

from capture import hookspecs

ENTRY_POINT_GROUP = "masstrail"

# The built-ins, by entry-point name, in the order of an entry's run (see masstrail_plugins).
DEFAULT_PLUGINS: tuple[str, ...] = (
    "readers",
    "structured",
    "text",
    "merge",
    "materials",
    "names",
    "lines",
    "balance",
    "masses",
    "limiting",
    "product",
    "gaps",
    "metrics",
    "reaction",
    "waste",
    "sidecar",
    "store",
    "notify",
)


class PluginError(Exception):
    """masstrail's plugins could not be loaded."""


def get_plugin_manager(block: Iterable[str] = ()) -> pluggy.PluginManager:
    """A fresh plugin manager with the hook specs, the built-ins and installed plugins.

    :param block: plugin names (entry-point names) not to load.
    """
    pm = pluggy.PluginManager(ENTRY_POINT_GROUP)
    pm.add_hookspecs(hookspecs)
    blocked = set(block)
    blocked.update(n.strip() for n in os.environ.get("MASSTRAIL_BLOCK", "").split(",") if n.strip())
    for name in blocked:
        pm.set_blocked(name)
    try:
        pm.load_setuptools_entrypoints(ENTRY_POINT_GROUP)
    except Exception as exc:  # a broken third-party plugin must say which one
        raise PluginError(f"a masstrail plugin failed to load: {exc!r}") from exc
    missing = [n for n in DEFAULT_PLUGINS if n not in blocked and pm.get_plugin(n) is None]
    if missing:
        raise PluginError(
            "masstrail's built-in plugins are not registered ("
            + ", ".join(missing)
            + "); reinstall masstrail (`pip install .` from the project folder)"
        )
    try:
        pm.check_pending()
    except pluggy.PluginValidationError as exc:
        raise PluginError(f"a plugin implements a hook that does not exist: {exc}") from exc
    if os.environ.get("MASSTRAIL_TRACE"):
        pm.trace.root.setwriter(sys.stderr.write)
        pm.enable_tracing()
    if os.environ.get("MASSTRAIL_HOOK_LOG"):
        _log_hook_calls(pm, os.environ["MASSTRAIL_HOOK_LOG"])
    return pm


_logged: set[str] = set()  # hooks this process has written to MASSTRAIL_HOOK_LOG


def _log_hook_calls(pm: pluggy.PluginManager, log: str) -> None:
    """Append each hook's name to ``log`` the first time it is called with an implementation."""

    def before(hook_name: str, hook_impls: list, kwargs: dict) -> None:
        if hook_impls and hook_name not in _logged:
            _logged.add(hook_name)
            with open(log, "a", encoding="utf-8") as fh:
                fh.write(hook_name + "\n")

    pm.add_hookcall_monitoring(before, lambda outcome, hook_name, hook_impls, kwargs: None)


def describe_plugins(pm: pluggy.PluginManager) -> list[dict[str, object]]:
    """For each loaded plugin: its name, module, distribution and the hooks it implements."""
    dists = {id(plugin): dist for plugin, dist in pm.list_plugin_distinfo()}
    rows = []
    for name, plugin in sorted(pm.list_name_plugin(), key=lambda np: str(np[0])):
        if plugin is None:
            continue
        dist = dists.get(id(plugin))
        hooks = sorted({caller.name for caller in pm.get_hookcallers(plugin) or []})
        rows.append(
            {
                "name": name,
                "module": getattr(plugin, "__name__", type(plugin).__name__),
                "distribution": f"{dist.project_name} {dist.version}" if dist else None,
                "builtin": name in DEFAULT_PLUGINS,
                "hooks": hooks,
            }
        )
    return rows
