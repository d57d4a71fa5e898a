"""Presentation families of quantum K-theory rings of type-A flag varieties.

Each family lives in its own module and exposes one `Family` record (see `interface`).
`FAMILIES` maps the names used on the command line to those records.
"""
from . import bethe, toda, vieta, whitney
from .interface import Family

FAMILIES = {family.name: family for family in (whitney.FAMILY, vieta.FAMILY, vieta.ELIMINATED,
                                                   toda.FAMILY, bethe.FAMILY)}


def get_family(name: str, values=None) -> Family:
    """A built-in family, a presentation file (a path: ends in .toml or contains a path
    separator; see docs/presentation-files.md), a shipped file by name, or a plug-in family
    (entry-point group `ringmatch.presentations`).  File problems raise
    `userfile.PresentationFileError`; an unknown name raises KeyError.  `values` sets the
    integer parameters of a presentation file (name → int); other families ignore it."""
    from . import plugins, userfile
    if userfile.looks_like_path(name):
        return userfile.load_family(name, values)
    if name in FAMILIES:
        return FAMILIES[name]
    family = userfile.shipped_family(name, values) or plugins.find_plugin(name)
    if family is not None:
        return family
    known = sorted(FAMILIES) + sorted(userfile.shipped_files()) + \
        sorted(e.family.name for e in plugins.discovered() if e.family is not None)
    raise KeyError(f"unknown presentation {name!r}; known: {', '.join(known)}, "
                   "or a path to a .toml presentation file")
