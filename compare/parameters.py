"""`--set name=value`: the integer parameters of presentation files on the command line.

Every command that reads presentation files takes `--set` (repeatable).  The values go to
every file of the command that declares the parameter (`name`, or `name_i` for one step of
a per-step parameter); a name that no file of the command declares is refused, so a typo
never silently leaves a default in place.
"""
from __future__ import annotations

import argparse
import re
from typing import Dict, Iterable, List, Optional, Tuple

from ringmatch.errors import UsageError

_SETTING = re.compile(r"\s*([A-Za-z][A-Za-z0-9]*(?:_[0-9]+)?)\s*=\s*([+-]?[0-9]{1,40})\s*")
MAX_DIGITS = 40


def _shown(text: str, width: int = 40) -> str:
    text = text.strip()
    return repr(text if len(text) <= width else text[:width] + "…")


def set_argument(text: str) -> Tuple[str, int]:
    """argparse type of one `--set name=value`."""
    match = _SETTING.fullmatch(text)
    if match:
        return match.group(1), int(match.group(2))
    head, equals, value = text.partition("=")
    if not equals:
        raise argparse.ArgumentTypeError(f"{_shown(text)}: expected name=value, e.g. sign=-1")
    if not re.fullmatch(r"\s*[A-Za-z][A-Za-z0-9]*(?:_[0-9]+)?\s*", head):
        raise argparse.ArgumentTypeError(f"{_shown(text)}: {_shown(head)} is not a parameter "
                                         "name (a letter, then letters and digits, optionally "
                                         "_step)")
    raise argparse.ArgumentTypeError(f"{_shown(text)}: the value {_shown(value, 20)} is not an "
                                     f"integer (at most {MAX_DIGITS} digits)")


def add_argument(parser) -> None:
    parser.add_argument("--set", dest="set", action="append", type=set_argument, default=[],
                        metavar="NAME=VALUE",
                        help="value of an integer parameter of a presentation file "
                             "(repeatable; NAME_i for one step of a per-step parameter)")


def values_of(args) -> Dict[str, int]:
    """The --set values of a command as a dict; a name given twice is refused."""
    out: Dict[str, int] = {}
    for name, value in getattr(args, "set", None) or []:
        if name in out:
            raise UsageError(f"--set {name}: given twice ({out[name]} and {value})")
        out[name] = value
    return out


def check_known(values: Dict[str, int], names: Iterable[str]) -> None:
    """Refuse --set names that no presentation file among `names` declares."""
    from ringmatch.presentations import userfile
    if not values:
        return
    specs = []
    for name in names:
        try:
            spec = userfile.spec_of(name)
        except KeyError:
            spec = None
        if spec is not None:
            specs.append(spec)
    for key in values:
        if not any(userfile.accepts(spec, key) for spec in specs):
            declared = sorted({p.name + ("_i" if p.per_step else "")
                               for spec in specs for p in spec.parameters})
            where = ("the presentations of this command declare " + ", ".join(declared)
                     if declared else "no presentation of this command has parameters")
            raise UsageError(f"--set {key}={values[key]}: unknown parameter ({where})")


def resolved(args, names: List[str]) -> Dict[str, int]:
    values = values_of(args)
    check_known(values, names)
    return values


def assignment_text(values: Dict[str, int]) -> str:
    return ",".join(f"{k}={v}" for k, v in values.items())


def set_words(values: Optional[Dict[str, int]]) -> List[str]:
    """The --set options that reproduce `values` on a command line."""
    words: List[str] = []
    for name, value in (values or {}).items():
        words += ["--set", f"{name}={value}"]
    return words


def shell_words(values: Optional[Dict[str, int]]) -> List[str]:
    """`set_words`, quoted for a shell command line."""
    import shlex
    return [shlex.quote(word) for word in set_words(values)]
