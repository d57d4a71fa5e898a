"""Presentation families of quantum K-theory rings of type-A flag varieties.

Each family lives in its own module and exposes one `Family` record (see `interface`).  A
presentation name is resolved in one place, `locate`: a path (a presentation file), a
built-in family, a shipped presentation file, a plug-in family — in that order.
`get_family` (the family), `presentation_file` (the file whose content stands for the name,
as sweeps send it to workers and the results store identifies it) and the command line all
go through it.  The built-in families are registered as entry points like any plug-in's
(`plugins.BUILTIN_ENTRY_POINTS`); `FAMILIES` maps their names to their records.
"""
from dataclasses import dataclass, replace
from typing import Dict, Optional, Tuple

from . import plugins
from .interface import Family

FAMILIES: Dict[str, Family] = {entry.family.name: entry.family for entry in plugins.builtin()}

# The kinds of name, in the order `locate` tries them.
PATH, BUILT_IN, SHIPPED_FILE, PLUG_IN = "path", "built-in", "shipped file", "plug-in"
LOOKUP_ORDER = (PATH, BUILT_IN, SHIPPED_FILE, PLUG_IN)


@dataclass(frozen=True)
class Location:
    """What a presentation name stands for (`locate`)."""
    name: str                              # as given
    kind: str                              # one of LOOKUP_ORDER
    file: Optional[str] = None             # the presentation file (a path, a shipped file)
    family: Optional[Family] = None        # the record of a built-in or a plug-in
    values: Tuple[Tuple[str, int], ...] = ()   # bound in the name: file[a=1,b=-2]


def locate(name: str) -> Location:
    """The one order of lookup: a path (it ends in .toml or contains a path separator) is the
    file itself, as given; a built-in name stands for its family even when a shipped file has
    the same stem; otherwise a shipped file of that name (presentations/files), if any; then
    a plug-in family of that name (entry-point group `ringmatch.presentations`).  A name
    results carry for a file with its parameter values (`name[a=1,b=-2]`) is that file with
    the values.  KeyError, listing the known names, for anything else."""
    from . import userfile
    bound = userfile.split_bound_name(name)
    if bound is not None:
        try:
            base = locate(bound[0])
        except KeyError:
            base = None
        if base is not None and base.file is not None:
            return replace(base, name=name, values=tuple(bound[1].items()))
    if userfile.looks_like_path(name):
        return Location(name, PATH, file=name)
    if name in FAMILIES:
        return Location(name, BUILT_IN, family=FAMILIES[name])
    path = userfile.shipped_files().get(name)
    if path is not None:
        return Location(name, SHIPPED_FILE, file=str(path))
    family = plugins.find_plugin(name)
    if family is not None:
        return Location(name, PLUG_IN, family=family)
    known = sorted(FAMILIES) + sorted(userfile.shipped_files()) + \
        sorted(e.family.name for e in plugins.discovered() if e.family is not None)
    raise KeyError(f"unknown presentation {name!r}; known: {', '.join(known)}, "
                   "or a path to a .toml presentation file")


def presentation_file(name: str) -> Optional[str]:
    """The file whose content stands for the name (`locate`: a path or a shipped file), or
    None (a built-in, a plug-in, an unknown name, or a name with parameter values bound in
    it, which travels as the name).  Sweeps read the file's bytes and the results store
    identifies the file by its content."""
    try:
        location = locate(name)
    except KeyError:
        return None
    return None if location.values else location.file


def get_family(name: str, values=None) -> Family:
    """The family of a name (`locate`): a presentation file (a path or a shipped file; see
    docs/presentation-files.md), a built-in or a plug-in family.  File problems raise
    `userfile.PresentationFileError`; an unknown name raises KeyError.  `values` sets the
    integer parameters of a presentation file (name → int), over those bound in the name;
    other families ignore it."""
    from . import userfile
    location = locate(name)
    if location.file is None:
        return location.family
    if location.values:
        values = {**dict(location.values), **(values or {})}
    return userfile.load_family(location.file, values)
