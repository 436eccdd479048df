"""picker: choose the discrete transistors of a battery product's power path."""

__version__ = "0.1.0"
