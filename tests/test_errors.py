"""One error hierarchy (ringmatch/errors.py): every error class the package defines derives
from RingmatchError, input errors stay ValueErrors, and the command line turns any
RingmatchError into one line on stderr with exit status 2."""
from __future__ import annotations

import contextlib
import importlib
import inspect
import io
import pkgutil

import pytest

import ringmatch
from ringmatch.compare import cli
from ringmatch.errors import InputError, ResourceError, RingmatchError


def package_modules():
    names = ["ringmatch.errors"]
    for package in ("ringmatch.compare", "ringmatch.presentations", "ringmatch.reports"):
        module = importlib.import_module(package)
        names += [m.name for m in pkgutil.walk_packages(module.__path__, prefix=package + ".")]
    return names


def error_classes():
    found = {}
    for name in package_modules():
        try:
            module = importlib.import_module(name)
        except ImportError:   # an optional dependency (a notebook, Dask) is not installed
            continue
        for attribute, value in vars(module).items():
            if inspect.isclass(value) and issubclass(value, BaseException) and \
                    value.__module__ == name and not attribute.startswith("_"):
                found[f"{name}.{attribute}"] = value
    return found


def test_every_error_class_is_in_the_hierarchy():
    classes = error_classes()
    assert "ringmatch.compare.store.StoreError" in classes    # the search finds them
    outside = sorted(name for name, cls in classes.items() if not issubclass(cls, RingmatchError))
    assert not outside, f"derive these from ringmatch.errors: {outside}"


@pytest.mark.parametrize("name", ["ringmatch.presentations.flagtype.FlagTypeError",
                                  "ringmatch.presentations.interface.PresentationError",
                                  "ringmatch.presentations.userfile.syntax.PresentationFileError",
                                  "ringmatch.compare.iso.IsoInputError",
                                  "ringmatch.reports.tables.TableError",
                                  "ringmatch.errors.UsageError"])
def test_input_errors_are_still_value_errors(name):
    cls = error_classes()[name]
    assert issubclass(cls, InputError) and issubclass(cls, ValueError)


def test_limits_are_resource_errors():
    from ringmatch.compare.groebner import LimitExceeded
    assert issubclass(LimitExceeded, ResourceError) and issubclass(LimitExceeded, ValueError)


def test_the_command_line_catches_the_base_class(monkeypatch):
    class Refused(RingmatchError):
        pass

    def refuse(args):
        raise Refused("the whole message, on one line")
    monkeypatch.setattr(cli, "cmd_presentations", refuse)   # read when the parser is built
    err = io.StringIO()
    with contextlib.redirect_stderr(err):
        status = cli.main(["presentations"])
    assert status == 2
    assert err.getvalue() == "ringmatch: the whole message, on one line\n"


def test_the_prime_check_is_shared():
    from ringmatch.compare.algebra import check_prime
    assert check_prime(1000003) == 1000003
    for bad in (1, 2, 4, 1000001, 2**64 + 13, 3.0, True):
        with pytest.raises(InputError):
            check_prime(bad)
    assert ringmatch.__version__
