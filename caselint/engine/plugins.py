"""The plugin manager: built-in plugins, installed rule packs, blocking, listing.

Built-in rules and reporters are plugins registered exactly like installed packs, so any
of them can be blocked by name (``--no-plugin NAME``). Installed packs come from the entry-point
group ``caselint``; setting ``CASELINT_DISABLE_PLUGIN_AUTOLOAD`` skips them.
"""

from __future__ import annotations

import importlib
import os
from typing import Any, Iterable

import pluggy

from caselint.engine import hookspecs
from caselint.errors import PluginLoadError

#: Entry-point group under which installed rule packs register.
ENTRY_POINT_GROUP = "caselint"
#: Environment variable that, when set to anything but "" or "0", skips installed packs.
DISABLE_AUTOLOAD_ENV = "CASELINT_DISABLE_PLUGIN_AUTOLOAD"

#: The built-in plugins, registered in this order under their module names.
BUILTIN_PLUGINS: tuple[str, ...] = (
    "caselint.engine.builtin_sets",
    "caselint.rules.mesh_quality",
    "caselint.rules.cell_quality",
    "caselint.rules.cell_growth",
    "caselint.rules.boundaries",
    "caselint.rules.mesh_integrity",
    "caselint.rules.waivers",
    "caselint.rules.near_wall",
    "caselint.rules.yplus",
    "caselint.rules.gaps",
    "caselint.rules.regions",
    "caselint.rules.scale",
    "caselint.rules.domain",
    "caselint.rules.time_step",
    "caselint.rules.time_resolution",
    "caselint.rules.grid_refinement",
    "caselint.report.text",
    "caselint.report.json_report",
    "caselint.report.markdown",
    "caselint.report.html",
    "caselint.report.sarif",
    "caselint.report.junit",
)


class CaselintPluginManager(pluggy.PluginManager):
    """A pluggy manager that remembers which distribution each installed plugin came from."""

    def __init__(self) -> None:
        super().__init__("caselint")
        self.add_hookspecs(hookspecs)
        #: plugin name -> (distribution name, version); built-ins map to caselint itself.
        self.distributions: dict[str, tuple[str, str]] = {}


def _autoload_disabled() -> bool:
    return os.environ.get(DISABLE_AUTOLOAD_ENV, "") not in ("", "0")


def _caselint_version() -> str:
    from caselint import __version__

    return __version__


def get_plugin_manager(
    *, load_entry_points: bool = True, blocked: Iterable[str] = ()
) -> CaselintPluginManager:
    """Build a plugin manager with the built-ins and, unless disabled, installed packs.

    :param load_entry_points: load packs from the ``caselint`` entry-point group.
    :param blocked: plugin names not to register (built-in module names or entry-point names).
    :raises PluginLoadError: a pack failed to import; the message names its distribution.
    """
    pm = CaselintPluginManager()
    for name in blocked:
        pm.set_blocked(name)
    for module_name in BUILTIN_PLUGINS:
        if pm.is_blocked(module_name):
            continue
        pm.register(importlib.import_module(module_name), name=module_name)
        pm.distributions[module_name] = ("caselint", _caselint_version())
    if load_entry_points and not _autoload_disabled():
        _load_entry_points(pm)
    try:
        pm.check_pending()
    except pluggy.PluginValidationError as exc:
        raise PluginLoadError(f"plugin {exc.plugin!r} implements an unknown hook: {exc}") from exc
    return pm


def _load_entry_points(pm: CaselintPluginManager) -> None:
    import importlib.metadata      # ~15 ms; not needed when autoloading is off

    entry_points = sorted(
        importlib.metadata.entry_points(group=ENTRY_POINT_GROUP), key=lambda ep: ep.name
    )
    for ep in entry_points:
        if pm.is_blocked(ep.name) or pm.has_plugin(ep.name):
            continue
        dist = getattr(ep, "dist", None)
        dist_name = dist.metadata["Name"] if dist is not None else "unknown distribution"
        dist_version = dist.version if dist is not None else "?"
        try:
            plugin = ep.load()
        except Exception as exc:  # any import failure must stop the run, naming the pack
            raise PluginLoadError(
                f"rule pack {ep.name!r} from distribution {dist_name} {dist_version} failed to "
                f"load ({type(exc).__name__}: {exc}); fix or uninstall it, or block it with "
                f"--no-plugin {ep.name}"
            ) from exc
        try:
            pm.register(plugin, name=ep.name)
        except ValueError as exc:
            raise PluginLoadError(
                f"rule pack {ep.name!r} from distribution {dist_name} could not be registered: {exc}"
            ) from exc
        pm.distributions[ep.name] = (dist_name, dist_version)


def plugin_listing(pm: CaselintPluginManager) -> list[dict[str, Any]]:
    """One entry per registered plugin: name, distribution, version and what it adds."""
    from caselint.engine.registry import Registry

    added = Registry(pm).contributions()
    rows = []
    for name, plugin in sorted(pm.list_name_plugin(), key=lambda item: item[0]):
        if plugin is None:  # blocked
            continue
        dist, version = pm.distributions.get(name, ("(registered at run time)", ""))
        rows.append(
            {
                "name": name,
                "distribution": dist,
                "version": version,
                "rules": sorted(added["rules"].get(name, [])),
                "case_sections": sorted(added["case_sections"].get(name, [])),
                "reporters": sorted(added["reporters"].get(name, [])),
                "rule_sets": sorted(added["rule_sets"].get(name, [])),
                "mesh_readers": sorted(added["mesh_readers"].get(name, [])),
            }
        )
    return rows
