"""Presentation: how results become claims a reader can act on."""
