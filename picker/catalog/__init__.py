"""Everything about the catalogue CSV: columns, quantities, reading, loading
and checks, the cache, supplier import and merge."""
