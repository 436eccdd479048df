"""Data shipped with the package: the bundled demo catalogue."""
