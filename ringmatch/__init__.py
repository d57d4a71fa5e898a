"""ringmatch: compare presentations of quantum K-theory rings of type-A flag varieties.

The installed package is `ringmatch`; its three parts live in the repository's top-level
folders and are mapped into this namespace by `pyproject.toml`:

* `ringmatch.presentations` (folder `presentations/`): flag types and presentation families;
* `ringmatch.compare` (folder `compare/`): algebra on python-flint, Gröbner bases, Bethe
  points, the comparison engine, sweeps and the command line;
* `ringmatch.reports` (folder `reports/`): what people read, rendered from results.

Layers (checked by tests/test_layers.py): algebra → presentations → engine → reports →
command line; a module imports only from its own layer or the ones below.
"""
__version__ = "0.2.0"
