"""Presentation families contributed by other installed packages (plug-ins), and the catalogue.

A package adds families by declaring entry points in the group `ringmatch.presentations`;
each entry point names either a `presentations.interface.Family` record or a callable with
no arguments that returns one.  In a plug-in's pyproject.toml:

    [project.entry-points."ringmatch.presentations"]
    my-family = "my_package.my_module:FAMILY"

The family is then known under its `Family.name` everywhere a presentation name is accepted
(built-in names take precedence).  A plug-in that fails to load does not break anything
else: it is listed with the reason and cannot be selected.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from importlib import metadata
from typing import Iterable, List, Optional, Tuple

from .interface import Family

ENTRY_POINT_GROUP = "ringmatch.presentations"


@dataclass(frozen=True)
class PluginEntry:
    entry_point: str            # the entry point's name
    target: str                 # "module:attribute"
    family: Optional[Family]
    problem: Optional[str]      # why it could not be used


@dataclass(frozen=True)
class CatalogueLine:
    name: str
    source: str                 # "built-in", "shipped file", "plug-in <entry point>", …
    description: str


def _entry_points() -> Tuple[metadata.EntryPoint, ...]:
    found = metadata.entry_points()
    if hasattr(found, "select"):
        return tuple(found.select(group=ENTRY_POINT_GROUP))
    return tuple(found.get(ENTRY_POINT_GROUP, ()))        # Python 3.9


def load_entry(entry: metadata.EntryPoint) -> PluginEntry:
    try:
        target = entry.load()
        family = target if isinstance(target, Family) else target() if callable(target) else None
    except Exception as error:   # a broken plug-in must not take the tool down
        text = " ".join(str(error).split())
        return PluginEntry(entry.name, entry.value, None,
                           f"cannot be loaded: {type(error).__name__}: {text}"[:300])
    if not isinstance(family, Family):
        return PluginEntry(entry.name, entry.value, None,
                           "is neither a Family record nor a function returning one")
    return PluginEntry(entry.name, entry.value, family, None)


@lru_cache(maxsize=1)
def discovered() -> Tuple[PluginEntry, ...]:
    return tuple(load_entry(entry) for entry in _entry_points())


def find_plugin(name: str, entries: Optional[Iterable[PluginEntry]] = None) -> Optional[Family]:
    for entry in discovered() if entries is None else entries:
        if entry.family is not None and entry.family.name == name:
            return entry.family
    return None


def catalogue(builtins: dict, shipped: dict,
              entries: Optional[Iterable[PluginEntry]] = None) -> List[CatalogueLine]:
    """One line per presentation: built-ins, shipped files, then plug-ins."""
    from .userfile import load_spec
    from .userfile.syntax import PresentationFileError
    lines = [CatalogueLine(name, "built-in", family.description)
             for name, family in sorted(builtins.items())]
    for name, path in sorted(shipped.items()):
        try:
            # The file as read, not a family: its parameters need no values to be listed.
            spec = load_spec(str(path))
            description = spec.description or f"{spec.flavour} file {spec.file}"
            if spec.parameters:
                description += " [parameters: " + ", ".join(
                    f"{p.name}{'_i' if p.per_step else ''} in {p.describe_values()}"
                    for p in spec.parameters) + "]"
        except PresentationFileError as error:
            description = f"(unreadable: {error})"
        kind = "shipped example" if path.parent.name == "examples" else "shipped file"
        lines.append(CatalogueLine(name, kind, description))
    taken = set(builtins) | set(shipped)
    for entry in discovered() if entries is None else entries:
        source = f"plug-in {entry.entry_point} ({entry.target})"
        if entry.family is None:
            lines.append(CatalogueLine(entry.entry_point, source, f"(unusable: {entry.problem})"))
        elif entry.family.name in taken:
            lines.append(CatalogueLine(entry.family.name, source,
                                       "(hidden: a built-in or shipped presentation has this name)"))
        else:
            taken.add(entry.family.name)
            lines.append(CatalogueLine(entry.family.name, source, entry.family.description))
    return lines
