"""One way to resolve a presentation name (presentations.locate): a path, then a built-in,
then a shipped file, then a plug-in; the built-ins are registered as entry points like any
plug-in's (presentations/plugins.py), and the command line, sweeps and the store resolve
through the same function."""
import hashlib
from dataclasses import replace
from importlib import metadata
from pathlib import Path

import pytest

from ringmatch.compare import store
from ringmatch.compare.cases import Source, family_of, load_sources
from ringmatch.presentations import (BUILT_IN, FAMILIES, LOOKUP_ORDER, PATH, PLUG_IN,
                                     SHIPPED_FILE, get_family, locate, plugins,
                                     presentation_file, userfile)

from conftest import run_in_process

ROOT = Path(__file__).resolve().parent.parent
SHIPPED = ROOT / "presentations/files/examples/whitney-sign-error.toml"


def test_the_lookup_order():
    assert LOOKUP_ORDER == (PATH, BUILT_IN, SHIPPED_FILE, PLUG_IN)


def test_a_path_comes_first_even_under_a_built_in_name(tmp_path):
    path = tmp_path / "whitney.toml"
    path.write_bytes(SHIPPED.read_bytes())
    for name in (str(path), "./whitney.toml", "sub/whitney"):
        location = locate(name)
        assert (location.kind, location.file) == (PATH, name)
    assert get_family(str(path)).name == "whitney-sign-error"


def test_a_built_in_comes_before_a_shipped_file_and_a_shipped_file_before_a_plug_in(
        monkeypatch):
    shipped = dict(userfile.shipped_files(), whitney=SHIPPED)      # a shipped "whitney"
    monkeypatch.setattr(userfile, "shipped_files", lambda: shipped)
    made = lambda name: plugins.PluginEntry(name, "m:f", replace(FAMILIES["toda"], name=name),
                                            None)
    entries = (made("whitney"), made("whitney-sign-error"), made("only-a-plug-in"))
    monkeypatch.setattr(plugins, "discovered", lambda: entries)
    assert locate("whitney").kind == BUILT_IN and get_family("whitney") is FAMILIES["whitney"]
    assert locate("whitney-sign-error").kind == SHIPPED_FILE
    assert get_family("whitney-sign-error").description != FAMILIES["toda"].description
    assert locate("only-a-plug-in").kind == PLUG_IN
    assert get_family("only-a-plug-in") is entries[2].family
    with pytest.raises(KeyError, match="unknown presentation 'nosuch'.*only-a-plug-in"):
        locate("nosuch")


def test_a_name_with_bound_values_is_its_file_with_the_values():
    location = locate("whitney-unknowns[sign=1,power=2]")
    assert location.kind == SHIPPED_FILE and location.file.endswith("whitney-unknowns.toml")
    assert location.values == (("sign", 1), ("power", 2))
    assert get_family("whitney-unknowns[sign=1,power=2]").name == \
        "whitney-unknowns[sign=1,power=2]"
    # such a name travels as itself (presentation_file None), as results carry it
    assert presentation_file("whitney-unknowns[sign=1,power=2]") is None
    with pytest.raises(KeyError):
        locate("nosuch[a=1]")


def test_the_built_ins_are_entry_points_like_a_plug_in():
    entries = plugins.builtin()
    assert [e.entry_point for e in entries] == list(FAMILIES)
    for entry in entries:
        assert entry.builtin and entry.source == "built-in" and entry.problem is None
        assert entry.family is FAMILIES[entry.entry_point]
        assert entry.family.name == entry.entry_point
        # the plug-in loader, given the same entry point, gives the same record
        again = plugins.load_entry(metadata.EntryPoint(entry.entry_point, entry.target,
                                                       plugins.ENTRY_POINT_GROUP))
        assert again.family is entry.family and not again.builtin
        assert again.source.startswith("plug-in ")


def test_sweeps_and_the_store_resolve_through_locate(tmp_path, monkeypatch):
    path = tmp_path / "guess.toml"
    path.write_bytes(SHIPPED.read_bytes())
    sources = load_sources(["whitney", "whitney-sign-error", str(path)])
    assert sources[0] == Source("whitney")                    # a built-in travels by name
    assert sources[1].raw == SHIPPED.read_bytes()             # a shipped file by content
    assert sources[2].raw == path.read_bytes()                # a path by content
    assert family_of(sources[0]) is FAMILIES["whitney"]
    digest = hashlib.sha256(SHIPPED.read_bytes()).hexdigest()
    assert store.presentation_record("whitney-sign-error") == \
        {"name": "whitney-sign-error", "sha256": digest}
    assert store.presentation_record("whitney") == {"name": "whitney"}
    # one function decides: change what it says, and all of them follow
    calls = []
    real = locate

    def spy(name):
        calls.append(name)
        return real(name)
    import ringmatch.presentations as presentations
    monkeypatch.setattr(presentations, "locate", spy)
    load_sources(["vieta"])
    store.presentation_record("toda")
    get_family("bethe")
    assert calls == ["vieta", "toda", "bethe"]


def test_the_command_line_lists_and_checks_through_the_registry():
    listed = run_in_process("presentations")
    assert listed.returncode == 0, listed.stderr
    lines = {line.split()[0]: line for line in listed.stdout.splitlines() if line.strip()}
    for name in FAMILIES:
        assert "built-in" in lines[name]
    assert "shipped" in lines["whitney-sign-error"]
    checked = run_in_process("presentations", "--check", "vieta-eliminated")
    assert checked.returncode == 0, checked.stderr
    assert checked.stdout.startswith("vieta-eliminated: conforms")
    unknown = run_in_process("check", "P1", "--presentations", "whitney,nosuch")
    assert unknown.returncode == 2 and "unknown presentation 'nosuch'" in unknown.stderr
