"""Comparison machinery: algebra backend, Gröbner and Bethe-point engines, verdicts, CLI."""
