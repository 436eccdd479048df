"""Requirement files and command-line quick questions, as frozen dataclasses."""
