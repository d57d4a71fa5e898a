"""The registry of presentation families known by name — the built-in ones and those other
installed packages contribute (plug-ins) — and the catalogue of everything a name may be.

Every family known by name is an entry point of the group `ringmatch.presentations`: a
"module:attribute" naming either a `presentations.interface.Family` record or a callable
with no arguments that returns one, loaded by `load_entry`.  The built-ins are this
package's own entry points (`BUILTIN_ENTRY_POINTS`, loaded by `builtin()`); a plug-in
package declares its entry points in its pyproject.toml, and they are found among the
installed distributions (`discovered()`):

    [project.entry-points."ringmatch.presentations"]
    my-family = "my_package.my_module:FAMILY"

The family is then known under its `Family.name` everywhere a presentation name is accepted
(`presentations.locate`: a path, then a built-in, a shipped file, a plug-in, so built-in
names take precedence).  A plug-in that fails to load does not break anything else: it is
listed with the reason and cannot be selected; a built-in that fails to load is a bug, and
raises.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from importlib import metadata
from typing import Iterable, List, Optional, Tuple

from .interface import Family

ENTRY_POINT_GROUP = "ringmatch.presentations"

# The built-in families, declared as a plug-in declares its own (entry-point name, target).
BUILTIN_ENTRY_POINTS = (
    ("whitney", "ringmatch.presentations.whitney:FAMILY"),
    ("vieta", "ringmatch.presentations.vieta:FAMILY"),
    ("vieta-eliminated", "ringmatch.presentations.vieta:ELIMINATED"),
    ("toda", "ringmatch.presentations.toda:FAMILY"),
    ("bethe", "ringmatch.presentations.bethe:FAMILY"),
)


@dataclass(frozen=True)
class PluginEntry:
    entry_point: str            # the entry point's name
    target: str                 # "module:attribute"
    family: Optional[Family]
    problem: Optional[str]      # why it could not be used
    builtin: bool = False       # one of this package's own entry points

    @property
    def source(self) -> str:
        """Where the family comes from, as the catalogue says it."""
        return "built-in" if self.builtin else f"plug-in {self.entry_point} ({self.target})"


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


def load_entry(entry: metadata.EntryPoint, builtin: bool = False) -> PluginEntry:
    try:
        target = entry.load()
        family = target if isinstance(target, Family) else target() if callable(target) else None
    except Exception as error:   # a broken plug-in must not take the tool down
        text = " ".join(str(error).split())
        return PluginEntry(entry.name, entry.value, None,
                           f"cannot be loaded: {type(error).__name__}: {text}"[:300], builtin)
    if not isinstance(family, Family):
        return PluginEntry(entry.name, entry.value, None,
                           "is neither a Family record nor a function returning one", builtin)
    return PluginEntry(entry.name, entry.value, family, None, builtin)


@lru_cache(maxsize=1)
def builtin() -> Tuple[PluginEntry, ...]:
    """The built-in families, loaded from their entry points like any plug-in's."""
    entries = tuple(load_entry(metadata.EntryPoint(name, target, ENTRY_POINT_GROUP),
                               builtin=True) for name, target in BUILTIN_ENTRY_POINTS)
    for entry in entries:
        if entry.family is None:
            raise ImportError(f"built-in presentation {entry.entry_point} ({entry.target}) "
                              f"{entry.problem}")
    return entries


@lru_cache(maxsize=1)
def discovered() -> Tuple[PluginEntry, ...]:
    """The plug-ins: the entry points of the group in the installed distributions."""
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
        source = entry.source
        if entry.family is None:
            lines.append(CatalogueLine(entry.entry_point, source, f"(unusable: {entry.problem})"))
        elif entry.family.name in taken:
            lines.append(CatalogueLine(entry.family.name, source,
                                       "(hidden: a built-in or shipped presentation has this name)"))
        else:
            taken.add(entry.family.name)
            lines.append(CatalogueLine(entry.family.name, source, entry.family.description))
    return lines
