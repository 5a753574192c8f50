"""fringe's test suite, in folders that mirror the package."""
