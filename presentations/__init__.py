"""Presentation families of quantum K-theory rings of type-A flag varieties.

Each family lives in its own module and exposes one `Family` record (see `interface`).
`FAMILIES` maps the names used on the command line to those records.
"""
from . import toda, vieta, whitney
from .interface import Family

FAMILIES = {family.name: family for family in (whitney.FAMILY, vieta.FAMILY, vieta.ELIMINATED,
                                                   toda.FAMILY)}


def get_family(name: str) -> Family:
    try:
        return FAMILIES[name]
    except KeyError:
        raise KeyError(f"unknown presentation {name!r}; known: {', '.join(sorted(FAMILIES))}") from None
