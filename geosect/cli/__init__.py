"""The ``geosect`` command line: one module per verb, the group in :mod:`geosect.cli.main`."""

from .main import main

__all__ = ["main"]
