"""The public Python API's implementation; import the names from `picker` itself
(`picker.__all__`), never from here: these modules may change."""
