"""Roles over the catalogue: figures, checks, ranking, headroom."""
