"""BOM review: reading a BOM, matching its parts, proposals, the revised BOM."""
