"""Presentation families of quantum K-theory rings of type-A flag varieties.

Each family lives in its own module and exposes one `Family` record (see `interface`).
`FAMILIES` maps the names used on the command line to those records.
"""
from typing import Optional

from . import bethe, toda, vieta, whitney
from .interface import Family

FAMILIES = {family.name: family for family in (whitney.FAMILY, vieta.FAMILY, vieta.ELIMINATED,
                                                   toda.FAMILY, bethe.FAMILY)}


def presentation_file(name: str) -> Optional[str]:
    """The file a presentation name stands for, or None (a built-in, plug-in or unknown name).

    The one order of lookup, used by `get_family`, by sweeps (which read the file's bytes)
    and by the results store (which identifies a file by its content): a path (it ends in
    .toml or contains a path separator) is the file itself, as given; a built-in name
    stands for no file even when a shipped file has the same stem; otherwise a shipped file
    of that name (presentations/files), if any; plug-ins come last (`get_family`)."""
    from . import userfile
    if userfile.looks_like_path(name):
        return name
    if name in FAMILIES:
        return None
    path = userfile.shipped_files().get(name)
    return None if path is None else str(path)


def get_family(name: str, values=None) -> Family:
    """A built-in family, a presentation file (a path: ends in .toml or contains a path
    separator; see docs/presentation-files.md), a shipped file by name, or a plug-in family
    (entry-point group `ringmatch.presentations`).  File problems raise
    `userfile.PresentationFileError`; an unknown name raises KeyError.  `values` sets the
    integer parameters of a presentation file (name → int); other families ignore it."""
    from . import plugins, userfile
    bound = userfile.split_bound_name(name)   # a name results carry: file[a=1,b=-2]
    if bound is not None and presentation_file(bound[0]) is not None:
        return userfile.load_family(presentation_file(bound[0]), {**bound[1], **(values or {})})
    file = presentation_file(name)
    if file is not None:
        return userfile.load_family(file, values)
    if name in FAMILIES:
        return FAMILIES[name]
    family = plugins.find_plugin(name)
    if family is not None:
        return family
    known = sorted(FAMILIES) + sorted(userfile.shipped_files()) + \
        sorted(e.family.name for e in plugins.discovered() if e.family is not None)
    raise KeyError(f"unknown presentation {name!r}; known: {', '.join(known)}, "
                   "or a path to a .toml presentation file")
