"""Human- and machine-readable output: discrepancy reports, tables, figures."""
