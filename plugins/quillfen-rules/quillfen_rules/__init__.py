"""Quillfen Process Engineering's caselint rules (an invented company; the example pack)."""

__version__ = "1.2.0"
